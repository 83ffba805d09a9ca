//! Polyphase decimating FIR: filters and keeps one sample in `factor`, computing only those.

use crate::block::Block;
use crate::sample::Sample;
use crate::Result;

/// FIR low-pass followed by down-sampling by `factor`, computing only the kept outputs.
#[derive(Debug, Clone)]
pub struct FirDecimator<T: Sample> {
    _t: std::marker::PhantomData<T>,
}

impl<T: Sample> FirDecimator<T> {
    /// A decimator by `factor` (≥ 1) with `taps`.
    pub fn new(taps: &[f32], factor: usize) -> Result<Self> {
        let _ = (taps, factor);
        todo!()
    }
    /// The decimation factor.
    pub fn factor(&self) -> usize {
        todo!()
    }
}

impl<T: Sample> Block for FirDecimator<T> {
    type Input = T;
    type Output = T;
    fn process(&mut self, input: &[T], output: &mut [T]) -> (usize, usize) {
        let _ = (input, output);
        todo!()
    }
    fn max_output_len(&self, input_len: usize) -> usize {
        let _ = input_len;
        todo!()
    }
    fn reset(&mut self) {
        todo!()
    }
}

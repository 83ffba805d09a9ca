//! Direct-form FIR filter with real taps for real or complex samples.

use crate::block::Block;
use crate::sample::Sample;
use crate::Result;

/// An FIR filter, one output per input.
#[derive(Debug, Clone)]
pub struct Fir<T: Sample> {
    _t: std::marker::PhantomData<T>,
}

impl<T: Sample> Fir<T> {
    /// A filter with `taps` (at least one).
    pub fn new(taps: &[f32]) -> Result<Self> {
        let _ = taps;
        todo!()
    }
}

impl<T: Sample> Block for Fir<T> {
    type Input = T;
    type Output = T;
    fn process(&mut self, input: &[T], output: &mut [T]) -> (usize, usize) {
        let _ = (input, output);
        todo!()
    }
    fn max_output_len(&self, input_len: usize) -> usize {
        input_len
    }
    fn reset(&mut self) {
        todo!()
    }
}

//! DC blocker: a one-pole, one-zero high-pass.

use crate::block::Block;
use crate::sample::Sample;
use crate::Result;

/// y[n] = x[n] − x[n−1] + a·y[n−1], with the −3 dB corner at `cutoff_hz`.
#[derive(Debug, Clone)]
pub struct DcBlocker<T: Sample> {
    _t: std::marker::PhantomData<T>,
}

impl<T: Sample> DcBlocker<T> {
    /// A DC blocker with its corner at `cutoff_hz` (0 < f < fs/2).
    pub fn new(cutoff_hz: f64, sample_rate: f64) -> Result<Self> {
        let _ = (cutoff_hz, sample_rate);
        todo!()
    }
}

impl<T: Sample> Block for DcBlocker<T> {
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

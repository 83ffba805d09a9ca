//! Rational polyphase resampler by up/down (e.g. 48 kHz to 44.1 kHz is 147/160).

use crate::block::Block;
use crate::sample::Sample;
use crate::Result;

/// Up-samples by `up`, filters, and down-samples by `down`, as a polyphase filter bank.
#[derive(Debug, Clone)]
pub struct RationalResampler<T: Sample> {
    _t: std::marker::PhantomData<T>,
}

impl<T: Sample> RationalResampler<T> {
    /// A resampler with prototype `taps` designed at the up-sampled rate (gain is scaled by `up`
    /// inside so that the passband gain is 1).
    pub fn new(up: usize, down: usize, taps: &[f32]) -> Result<Self> {
        let _ = (up, down, taps);
        todo!()
    }
    /// Designs the prototype low-pass itself: passband to `passband_hz`, stopband from where the
    /// lower of the two rates would alias, with `attenuation_db`.
    pub fn design(
        input_rate: f64,
        output_rate: f64,
        passband_hz: f64,
        attenuation_db: f64,
    ) -> Result<Self> {
        let _ = (input_rate, output_rate, passband_hz, attenuation_db);
        todo!()
    }
    /// (up, down).
    pub fn ratio(&self) -> (usize, usize) {
        todo!()
    }
}

impl<T: Sample> Block for RationalResampler<T> {
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

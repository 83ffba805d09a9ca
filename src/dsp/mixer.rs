//! Complex mixer: multiplies the input by a complex exponential (frequency shift).

use crate::block::Block;
use crate::{Complex32, Result};

/// Shifts the spectrum by `frequency_hz`: y[n] = x[n]·e^{j2π f n / fs}. To tune a carrier at
/// offset f₀ down to 0 Hz, use `-f₀`.
#[derive(Debug, Clone)]
pub struct Mixer {}

impl Mixer {
    /// A mixer shifting by `frequency_hz`; |f| ≤ fs/2 or an error naming `--offset`.
    pub fn new(frequency_hz: f64, sample_rate: f64) -> Result<Self> {
        let _ = (frequency_hz, sample_rate);
        todo!()
    }
    /// The shift in Hz.
    pub fn frequency(&self) -> f64 {
        todo!()
    }
}

impl Block for Mixer {
    type Input = Complex32;
    type Output = Complex32;
    fn process(&mut self, input: &[Complex32], output: &mut [Complex32]) -> (usize, usize) {
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

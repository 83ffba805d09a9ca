//! Numerically controlled oscillator, one sample at a time (for loops such as PLLs).

use crate::{Complex32, Result};

/// A complex NCO: `next()` returns e^{jφ} and advances φ by 2π·f/fs.
#[derive(Debug, Clone)]
pub struct Nco {}

impl Nco {
    /// An NCO at `frequency_hz` for `sample_rate`; |f| must be at most fs/2.
    pub fn new(frequency_hz: f64, sample_rate: f64) -> Result<Self> {
        let _ = (frequency_hz, sample_rate);
        todo!()
    }
    /// The next oscillator sample.
    #[inline]
    pub fn next_sample(&mut self) -> Complex32 {
        todo!()
    }
    /// Current phase in radians, in [-π, π).
    pub fn phase(&self) -> f64 {
        todo!()
    }
    /// Adds `radians` to the phase (phase correction from a loop).
    pub fn adjust_phase(&mut self, radians: f64) {
        let _ = radians;
        todo!()
    }
    /// Sets the frequency in Hz.
    pub fn set_frequency(&mut self, frequency_hz: f64) {
        let _ = frequency_hz;
        todo!()
    }
    /// The frequency in Hz.
    pub fn frequency(&self) -> f64 {
        todo!()
    }
}

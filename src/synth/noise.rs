//! Seeded complex white Gaussian noise.

use crate::Complex32;

/// Complex white Gaussian noise with E|w|² = `power`, reproducible from a seed.
pub struct ComplexNoise {}

impl ComplexNoise {
    /// Noise of mean power `power` (split equally between I and Q) from `seed`.
    pub fn new(power: f64, seed: u64) -> Self {
        let _ = (power, seed);
        todo!()
    }
    /// Adds noise to `signal` in place.
    pub fn add_to(&mut self, signal: &mut [Complex32]) {
        let _ = signal;
        todo!()
    }
}

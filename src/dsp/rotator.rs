//! The carrier of every modulator: e^{j2π f n/fs} from an f64 phase in cycles.

use crate::{Error, Result};
use num_complex::Complex64;

/// A phase-continuous complex carrier at a fixed offset from the recording centre.
///
/// The phase is kept in f64 cycles, wrapped to [0, 1) after every step, so its rounding error
/// stays near 1e-16 cycles however long it runs and however the output is split into calls.
#[derive(Debug, Clone)]
pub struct Rotator {
    step: f64,
    phase: f64,
}

impl Rotator {
    /// A carrier at `offset_hz` for `sample_rate`; |offset| ≤ fs/2, both finite, fs > 0.
    pub fn new(offset_hz: f64, sample_rate: f64) -> Result<Self> {
        if !(sample_rate.is_finite() && sample_rate > 0.0) {
            return Err(Error::parameter(
                "sample_rate",
                sample_rate,
                "must be positive and finite",
            ));
        }
        if !(offset_hz.is_finite() && offset_hz.abs() <= sample_rate / 2.0) {
            return Err(Error::parameter(
                "offset_hz",
                format!("{offset_hz} Hz"),
                format!(
                    "must lie within ±{} Hz (half the sample rate)",
                    sample_rate / 2.0
                ),
            ));
        }
        Ok(Rotator {
            step: offset_hz / sample_rate,
            phase: 0.0,
        })
    }

    /// The carrier sample for the current phase, then advances one sample.
    #[inline]
    pub fn next_sample(&mut self) -> Complex64 {
        let (sin, cos) = (std::f64::consts::TAU * self.phase).sin_cos();
        let v = self.phase + self.step;
        self.phase = v - v.floor();
        Complex64::new(cos, sin)
    }

    /// Back to phase 0.
    pub fn reset(&mut self) {
        self.phase = 0.0;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn follows_the_closed_form() {
        // e^{j2π f n/fs} evaluated directly; f64 wrapping keeps the error far below 1e-9.
        let (f, fs) = (-1234.567, 48e3);
        let mut r = Rotator::new(f, fs).unwrap();
        for n in 0..100_000 {
            let want = Complex64::from_polar(1.0, std::f64::consts::TAU * f * n as f64 / fs);
            assert!((r.next_sample() - want).norm() < 1e-9, "n={n}");
        }
        assert!(Rotator::new(24_001.0, fs).is_err());
        assert!(Rotator::new(0.0, 0.0).is_err());
    }
}

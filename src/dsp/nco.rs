//! Numerically controlled oscillator, one sample at a time (for loops such as PLLs).

use crate::{Complex32, Error, Result};
use std::f64::consts::{PI, TAU};

/// A complex NCO: `next_sample()` returns e^{jφ} and advances φ by 2π·f/fs.
///
/// The phase accumulator is an f64 in radians, wrapped to [−π, π) after every step, so its
/// rounding error stays near 1e-16 rad per step however long it runs.
#[derive(Debug, Clone)]
pub struct Nco {
    phase: f64,
    increment: f64,
    frequency_hz: f64,
    sample_rate: f64,
}

/// Checks |f| ≤ fs/2 with fs positive; errors name `frequency_hz` and `sample_rate`.
pub(crate) fn validate_frequency(frequency_hz: f64, sample_rate: f64) -> Result<()> {
    if !(sample_rate.is_finite() && sample_rate > 0.0) {
        return Err(Error::parameter(
            "sample_rate",
            sample_rate,
            "must be positive and finite",
        ));
    }
    if !(frequency_hz.is_finite() && frequency_hz.abs() <= sample_rate / 2.0) {
        return Err(Error::parameter(
            "frequency_hz",
            format!("{frequency_hz} Hz"),
            format!(
                "must lie within ±{} Hz (half the sample rate)",
                sample_rate / 2.0
            ),
        ));
    }
    Ok(())
}

/// Wraps an angle to [−π, π).
#[inline]
fn wrap(phase: f64) -> f64 {
    phase - TAU * ((phase + PI) / TAU).floor()
}

impl Nco {
    /// An NCO at `frequency_hz` for `sample_rate`; |f| must be at most fs/2.
    pub fn new(frequency_hz: f64, sample_rate: f64) -> Result<Self> {
        validate_frequency(frequency_hz, sample_rate)?;
        Ok(Nco {
            phase: 0.0,
            increment: TAU * frequency_hz / sample_rate,
            frequency_hz,
            sample_rate,
        })
    }

    /// The next oscillator sample.
    #[inline]
    pub fn next_sample(&mut self) -> Complex32 {
        let (s, c) = self.phase.sin_cos();
        self.phase = wrap(self.phase + self.increment);
        Complex32::new(c as f32, s as f32)
    }

    /// Current phase in radians, in [-π, π).
    pub fn phase(&self) -> f64 {
        self.phase
    }

    /// Adds `radians` to the phase (phase correction from a loop). Non-finite corrections are
    /// ignored so that the oscillator never emits NaN.
    pub fn adjust_phase(&mut self, radians: f64) {
        if radians.is_finite() {
            self.phase = wrap(self.phase + radians);
        }
    }

    /// Sets the frequency in Hz. A loop may push it anywhere, so it is clamped to ±fs/2, and a
    /// non-finite value is ignored.
    pub fn set_frequency(&mut self, frequency_hz: f64) {
        if frequency_hz.is_finite() {
            let half = self.sample_rate / 2.0;
            self.frequency_hz = frequency_hz.clamp(-half, half);
            self.increment = TAU * self.frequency_hz / self.sample_rate;
        }
    }

    /// The frequency in Hz.
    pub fn frequency(&self) -> f64 {
        self.frequency_hz
    }

    /// The sample rate in Hz.
    pub fn sample_rate(&self) -> f64 {
        self.sample_rate
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn follows_exact_exponential_for_a_long_run() {
        let (f, fs) = (12_345.678, 2_400_000.0);
        let mut nco = Nco::new(f, fs).unwrap();
        // Reference: e^{j2π·frac(f·n/fs)} evaluated from n directly in f64 (no accumulation).
        // Tolerance 1e-6: f32 output rounding (6e-8) plus accumulated f64 phase error.
        for n in 0..2_000_000u64 {
            let y = nco.next_sample();
            let cycles = (f * n as f64 / fs).fract();
            let (s, c) = (TAU * cycles).sin_cos();
            if n % 1000 == 0 || n > 1_999_000 {
                assert!((y.re as f64 - c).abs() < 1e-6 && (y.im as f64 - s).abs() < 1e-6);
            }
        }
    }

    #[test]
    fn phase_stays_wrapped_and_adjusts() {
        let mut nco = Nco::new(-24_000.0, 48_000.0).unwrap();
        for _ in 0..10 {
            nco.next_sample();
            assert!((-PI..PI).contains(&nco.phase()));
        }
        let mut nco = Nco::new(0.0, 48_000.0).unwrap();
        nco.adjust_phase(PI / 2.0);
        let y = nco.next_sample();
        assert!(y.re.abs() < 1e-7 && (y.im - 1.0).abs() < 1e-7);
        nco.adjust_phase(f64::NAN);
        assert!(nco.phase().is_finite());
        nco.set_frequency(1e9);
        assert_eq!(nco.frequency(), 24_000.0);
        nco.set_frequency(f64::NAN);
        assert_eq!(nco.frequency(), 24_000.0);
    }

    #[test]
    fn rejects_out_of_range() {
        assert!(Nco::new(24_000.0, 48_000.0).is_ok());
        assert!(Nco::new(24_000.1, 48_000.0).is_err());
        assert!(Nco::new(f64::NAN, 48_000.0).is_err());
        assert!(Nco::new(0.0, 0.0).is_err());
        assert!(Nco::new(0.0, f64::INFINITY).is_err());
        let e = Nco::new(-30_000.0, 48_000.0).unwrap_err().to_string();
        assert!(e.contains("frequency_hz"), "{e}");
    }
}

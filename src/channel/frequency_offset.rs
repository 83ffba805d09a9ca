//! Carrier frequency offset with linear drift.

use crate::block::SampleBlock;
use crate::{Complex32, Error, Result};
use num_complex::Complex64;

/// Multiplies by e^{jφ\[n\]} with instantaneous frequency f\[n\] = f₀ + a·n/fs:
/// φ\[n\] = 2π Σ_{k<n} f\[k\]/fs (so φ(t) ≈ 2π(f₀t + a t²/2)). Phase in f64 cycles, wrapped.
///
/// ```
/// use amrx::channel::FrequencyOffset;
/// let shift = FrequencyOffset::new(50.0, 0.5, 48e3).unwrap();
/// ```
#[derive(Debug, Clone)]
pub struct FrequencyOffset {
    start_step: f64,
    step_change: f64,
    step: f64,
    phase: f64,
}

impl FrequencyOffset {
    /// Offset `offset_hz` and drift `drift_hz_per_s` at `sample_rate` (all finite, fs > 0).
    pub fn new(offset_hz: f64, drift_hz_per_s: f64, sample_rate: f64) -> Result<Self> {
        if !(sample_rate.is_finite() && sample_rate > 0.0) {
            return Err(Error::parameter(
                "sample_rate",
                sample_rate,
                "must be positive and finite",
            ));
        }
        if !(offset_hz.is_finite() && drift_hz_per_s.is_finite()) {
            return Err(Error::parameter(
                "frequency offset",
                format!("{offset_hz} Hz, {drift_hz_per_s} Hz/s"),
                "must be finite",
            ));
        }
        let start_step = offset_hz / sample_rate;
        Ok(FrequencyOffset {
            start_step,
            step_change: drift_hz_per_s / (sample_rate * sample_rate),
            step: start_step,
            phase: 0.0,
        })
    }
}

impl SampleBlock for FrequencyOffset {
    type In = Complex32;
    type Out = Complex32;

    #[inline]
    fn next(&mut self, x: Complex32) -> Complex32 {
        let (sin, cos) = (std::f64::consts::TAU * self.phase).sin_cos();
        let v = Complex64::new(f64::from(x.re), f64::from(x.im)) * Complex64::new(cos, sin);
        let p = self.phase + self.step;
        self.phase = p - p.floor();
        self.step += self.step_change;
        Complex32::new(v.re as f32, v.im as f32)
    }

    fn sample_delay(&self) -> f64 {
        0.0
    }

    fn reset_state(&mut self) {
        self.step = self.start_step;
        self.phase = 0.0;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::process_in_chunks;

    #[test]
    fn phase_follows_the_quadratic() {
        // φ[n] = 2π(f₀n/fs + a·n(n−1)/(2fs²)): the sum of the linearly growing steps.
        let (f0, a, fs) = (120.0, 40.0, 8000.0);
        let x = vec![Complex32::new(1.0, 0.0); 80_000];
        let y = process_in_chunks(&mut FrequencyOffset::new(f0, a, fs).unwrap(), &x, &[80_000]);
        for (n, v) in y.iter().enumerate().step_by(997) {
            let n = n as f64;
            let phi = std::f64::consts::TAU * (f0 * n / fs + a * n * (n - 1.0) / (2.0 * fs * fs));
            let want = Complex64::from_polar(1.0, phi);
            assert!(
                (f64::from(v.re) - want.re).abs() < 1e-5
                    && (f64::from(v.im) - want.im).abs() < 1e-5,
                "n {n}"
            );
        }
    }

    /// No delay probe: a frequency shift moves the tone (memoryless, delay 0).
    #[test]
    fn meets_the_block_contract() {
        let x: Vec<Complex32> = (0..4000)
            .map(|n| Complex32::new((n as f32 * 0.1).sin(), 0.3))
            .collect();
        let make = || FrequencyOffset::new(120.0, 40.0, 8000.0).unwrap();
        crate::block::check::check_block(&crate::block::check::BlockCheck::new(&make, &x));
    }
}

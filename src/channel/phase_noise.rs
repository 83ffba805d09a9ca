//! Oscillator phase noise as a Wiener process (random-walk phase) of set linewidth.
//!
//! Model: φ\[n\] = φ\[n−1\] + δ\[n\], δ ~ N(0, 2πΔν/fs). The phase diffusion gives
//! E[e^{j(φ(t+τ) − φ(t))}] = e^{−πΔν|τ|}, a Lorentzian line of full width Δν at −3 dB
//! (the standard free-running-oscillator result, e.g. the laser-linewidth model of
//! C. H. Henry, "Theory of the linewidth of semiconductor lasers", IEEE J. Quantum Electron.,
//! 1982; from memory).

use crate::block::SampleBlock;
use crate::{Complex32, Error, Result};
use num_complex::Complex64;
use rand::{rngs::StdRng, SeedableRng};
use rand_distr::{Distribution, Normal};

/// Multiplies by e^{jφ\[n\]} with φ a Wiener process of −3 dB linewidth Δν.
///
/// ```
/// use amrx::channel::PhaseNoise;
/// let pn = PhaseNoise::new(5.0, 48e3, 1).unwrap();
/// ```
#[derive(Debug)]
pub struct PhaseNoise {
    step: Normal<f64>,
    rng: StdRng,
    seed: u64,
    phase: f64,
}

impl PhaseNoise {
    /// Linewidth `linewidth_hz` (≥ 0, finite) at `sample_rate`, from `seed`.
    pub fn new(linewidth_hz: f64, sample_rate: f64, seed: u64) -> Result<Self> {
        if !(sample_rate.is_finite() && sample_rate > 0.0) {
            return Err(Error::parameter(
                "sample_rate",
                sample_rate,
                "must be positive and finite",
            ));
        }
        if !(linewidth_hz.is_finite() && linewidth_hz >= 0.0) {
            return Err(Error::parameter(
                "linewidth_hz",
                linewidth_hz,
                "must be finite and ≥ 0",
            ));
        }
        let sigma = (std::f64::consts::TAU * linewidth_hz / sample_rate).sqrt();
        let step = Normal::new(0.0, sigma)
            .map_err(|e| Error::parameter("linewidth_hz", linewidth_hz, e.to_string()))?;
        Ok(PhaseNoise {
            step,
            rng: StdRng::seed_from_u64(seed),
            seed,
            phase: 0.0,
        })
    }
}

impl SampleBlock for PhaseNoise {
    type In = Complex32;
    type Out = Complex32;

    #[inline]
    fn next(&mut self, x: Complex32) -> Complex32 {
        let v = Complex64::new(f64::from(x.re), f64::from(x.im))
            * Complex64::from_polar(1.0, self.phase);
        self.phase =
            (self.phase + self.step.sample(&mut self.rng)).rem_euclid(std::f64::consts::TAU);
        Complex32::new(v.re as f32, v.im as f32)
    }

    fn sample_delay(&self) -> f64 {
        0.0
    }

    fn reset_state(&mut self) {
        self.rng = StdRng::seed_from_u64(self.seed);
        self.phase = 0.0;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::process_in_chunks;

    #[test]
    fn coherence_decays_as_the_lorentzian_predicts() {
        // E[z[n+k]·z*[n]] = e^{−πΔν k/fs} for z = e^{jφ}; 2·10⁶ samples, the estimate's
        // std is below 1e-3 at these lags, so 0.01 absolute is ample.
        let (lw, fs) = (20.0, 10e3);
        let x = vec![Complex32::new(1.0, 0.0); 2_000_000];
        let z = process_in_chunks(&mut PhaseNoise::new(lw, fs, 8).unwrap(), &x, &[1 << 16]);
        for k in [10usize, 50, 160, 400] {
            let r: Complex64 = z
                .iter()
                .zip(&z[k..])
                .map(|(a, b)| {
                    Complex64::new(f64::from(b.re), f64::from(b.im))
                        * Complex64::new(f64::from(a.re), -f64::from(a.im))
                })
                .sum::<Complex64>()
                / (z.len() - k) as f64;
            let want = (-std::f64::consts::PI * lw * k as f64 / fs).exp();
            eprintln!("phase noise lag {k}: {:.4} vs {want:.4}", r.re);
            assert!(
                (r.re - want).abs() < 0.01 && r.im.abs() < 0.01,
                "lag {k}: {r}"
            );
        }
    }

    /// No delay probe: a random phase walk (memoryless, delay 0).
    #[test]
    fn meets_the_block_contract() {
        let x: Vec<Complex32> = (0..4000)
            .map(|n| Complex32::new((n as f32 * 0.1).sin(), 0.3))
            .collect();
        let make = || PhaseNoise::new(20.0, 10e3, 8).unwrap();
        crate::block::check::check_block(&crate::block::check::BlockCheck::new(&make, &x));
    }
}

//! Seeded complex white Gaussian noise.

use rand::{rngs::StdRng, SeedableRng};
use rand_distr::{Distribution, StandardNormal};

use crate::{Complex32, Error, Result};

/// The largest accepted noise power: keeps every sample far inside the f32 range.
const MAX_POWER: f64 = 1e30;

/// Complex white Gaussian noise with E|w|² = `power`, reproducible from a seed.
///
/// I and Q are independent zero-mean Gaussians of variance `power/2` each.
#[derive(Debug)]
pub struct ComplexNoise {
    sigma: f64,
    rng: StdRng,
}

impl ComplexNoise {
    /// Noise of mean power `power` (split equally between I and Q) from `seed`.
    ///
    /// A negative, non-finite or huge (> 1e30) power gives no noise at all; use
    /// [`try_new`](Self::try_new) to have it reported instead.
    pub fn new(power: f64, seed: u64) -> Self {
        Self::try_new(power, seed).unwrap_or(ComplexNoise {
            sigma: 0.0,
            rng: StdRng::seed_from_u64(seed),
        })
    }

    /// As [`new`](Self::new), with an error for a power outside [0, 1e30].
    pub fn try_new(power: f64, seed: u64) -> Result<Self> {
        if !(power.is_finite() && (0.0..=MAX_POWER).contains(&power)) {
            return Err(Error::parameter(
                "noise power",
                power,
                "must be finite and in [0, 1e30]",
            ));
        }
        Ok(ComplexNoise {
            sigma: (power / 2.0).sqrt(),
            rng: StdRng::seed_from_u64(seed),
        })
    }

    /// Mean power E|w|².
    pub fn power(&self) -> f64 {
        2.0 * self.sigma * self.sigma
    }

    /// The next noise sample.
    #[inline]
    pub fn sample(&mut self) -> Complex32 {
        let re: f64 = StandardNormal.sample(&mut self.rng);
        let im: f64 = StandardNormal.sample(&mut self.rng);
        Complex32::new((re * self.sigma) as f32, (im * self.sigma) as f32)
    }

    /// Adds noise to `signal` in place.
    pub fn add_to(&mut self, signal: &mut [Complex32]) {
        for s in signal.iter_mut() {
            *s += self.sample();
        }
    }

    /// Overwrites `out` with noise.
    pub fn fill(&mut self, out: &mut [Complex32]) {
        for s in out.iter_mut() {
            *s = self.sample();
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn stats(x: &[Complex32]) -> (f64, f64, f64, f64) {
        let n = x.len() as f64;
        let mean_i = x.iter().map(|z| f64::from(z.re)).sum::<f64>() / n;
        let mean_q = x.iter().map(|z| f64::from(z.im)).sum::<f64>() / n;
        let var_i = x
            .iter()
            .map(|z| (f64::from(z.re) - mean_i).powi(2))
            .sum::<f64>()
            / n;
        let var_q = x
            .iter()
            .map(|z| (f64::from(z.im) - mean_q).powi(2))
            .sum::<f64>()
            / n;
        let cov = x
            .iter()
            .map(|z| (f64::from(z.re) - mean_i) * (f64::from(z.im) - mean_q))
            .sum::<f64>()
            / n;
        let power = x.iter().map(|z| f64::from(z.norm_sqr())).sum::<f64>() / n;
        (power, var_i, var_q, cov / (var_i * var_q).sqrt())
    }

    #[test]
    fn power_split_and_independence() {
        // 10^6 samples: the power estimate's relative std is 1/√N = 0.1 %, so 1 % is 10σ;
        // the sample correlation of independent I, Q has std 1e-3, so 0.01 is 10σ.
        let mut w = ComplexNoise::new(0.3, 42);
        let mut x = vec![Complex32::default(); 1_000_000];
        w.fill(&mut x);
        let (power, var_i, var_q, corr) = stats(&x);
        eprintln!("noise power {power:.5} (0.3), I/Q correlation {corr:.2e}");
        assert!((power / 0.3 - 1.0).abs() < 0.01, "power {power}");
        assert!((var_i / 0.15 - 1.0).abs() < 0.01, "I variance {var_i}");
        assert!((var_q / 0.15 - 1.0).abs() < 0.01, "Q variance {var_q}");
        assert!(corr.abs() < 0.01, "I/Q correlation {corr}");
    }

    #[test]
    fn seeded_and_additive() {
        let mut a = vec![Complex32::new(1.0, -1.0); 100];
        ComplexNoise::new(0.01, 9).add_to(&mut a);
        let mut b = vec![Complex32::default(); 100];
        ComplexNoise::new(0.01, 9).fill(&mut b);
        for (x, y) in a.iter().zip(&b) {
            assert!((x - Complex32::new(1.0, -1.0) - y).norm() < 1e-6);
        }
    }

    #[test]
    fn invalid_power() {
        assert!(ComplexNoise::try_new(-1.0, 0).is_err());
        assert!(ComplexNoise::try_new(f64::NAN, 0).is_err());
        let mut x = vec![Complex32::new(0.5, 0.5); 10];
        ComplexNoise::new(f64::INFINITY, 0).add_to(&mut x);
        assert!(x.iter().all(|z| *z == Complex32::new(0.5, 0.5)));
    }
}

//! Impulsive noise: Poisson-arriving bursts of Gaussian noise.
//!
//! Model (a Middleton class-A-like simplification, common practice, no source): bursts
//! arrive as a Poisson process of rate λ; each lasts T (a whole number of samples L ≥ 1) and
//! during it complex Gaussian noise of power P is added; overlapping bursts merge (power is
//! not added twice). A sample is then inside a burst with probability 1 − e^{−λT} (the
//! coverage of a Poisson process by intervals of length T), which the test checks; λT plays
//! the part of Middleton's impulsive index A.

use crate::block::SampleBlock;
use crate::{Complex32, Error, Result};
use rand::{rngs::StdRng, RngExt, SeedableRng};
use rand_distr::{Distribution, StandardNormal};

/// Adds Poisson bursts of complex Gaussian noise.
///
/// ```
/// use amrx::channel::ImpulseNoise;
/// let imp = ImpulseNoise::new(20.0, 1e-3, 0.5, 48e3, 1).unwrap();
/// ```
#[derive(Debug)]
pub struct ImpulseNoise {
    rate_per_sample: f64,
    burst_len: u64,
    sigma: f64,
    seed: u64,
    rng: StdRng,
    /// Position of the next sample, and of the next arrival (fractional sample time).
    position: u64,
    next_arrival: f64,
    busy_until: u64,
}

impl ImpulseNoise {
    /// Rate λ in bursts per second, burst length T in s (rounded to ≥ 1 sample), burst power P
    /// (E|w|² during a burst), sample rate, seed.
    pub fn new(
        rate_hz: f64,
        burst_s: f64,
        burst_power: f64,
        sample_rate: f64,
        seed: u64,
    ) -> Result<Self> {
        for (name, v) in [
            ("impulse rate", rate_hz),
            ("impulse length", burst_s),
            ("impulse power", burst_power),
        ] {
            if !(v.is_finite() && v >= 0.0) {
                return Err(Error::parameter(name, v, "must be finite and ≥ 0"));
            }
        }
        if !(sample_rate.is_finite() && sample_rate > 0.0) {
            return Err(Error::parameter(
                "sample_rate",
                sample_rate,
                "must be positive and finite",
            ));
        }
        let mut imp = ImpulseNoise {
            rate_per_sample: rate_hz / sample_rate,
            burst_len: ((burst_s * sample_rate).round() as u64).max(1),
            sigma: (burst_power / 2.0).sqrt(),
            seed,
            rng: StdRng::seed_from_u64(seed),
            position: 0,
            next_arrival: 0.0,
            busy_until: 0,
        };
        imp.next_arrival = imp.gap();
        Ok(imp)
    }

    /// Burst length in samples.
    pub fn burst_samples(&self) -> u64 {
        self.burst_len
    }

    /// Exponential inter-arrival time in samples (infinite for λ = 0).
    fn gap(&mut self) -> f64 {
        if self.rate_per_sample <= 0.0 {
            return f64::INFINITY;
        }
        let u: f64 = self.rng.random();
        -(1.0 - u).ln() / self.rate_per_sample
    }

    #[inline]
    fn add_burst(&mut self, x: Complex32) -> Complex32 {
        // Arrivals in [n, n+1) start a burst covering samples n .. n+L−1.
        while self.next_arrival < (self.position + 1) as f64 {
            self.busy_until = self.busy_until.max(self.position + self.burst_len);
            self.next_arrival += self.gap();
        }
        let y = if self.position < self.busy_until {
            let re: f64 = StandardNormal.sample(&mut self.rng);
            let im: f64 = StandardNormal.sample(&mut self.rng);
            x + Complex32::new((re * self.sigma) as f32, (im * self.sigma) as f32)
        } else {
            x
        };
        self.position += 1;
        y
    }
}

impl SampleBlock for ImpulseNoise {
    type In = Complex32;
    type Out = Complex32;

    #[inline]
    fn next(&mut self, x: Complex32) -> Complex32 {
        self.add_burst(x)
    }

    fn sample_delay(&self) -> f64 {
        0.0
    }

    fn reset_state(&mut self) {
        self.rng = StdRng::seed_from_u64(self.seed);
        self.position = 0;
        self.busy_until = 0;
        self.next_arrival = self.gap();
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::process_in_chunks;

    #[test]
    fn occupancy_and_power_match_the_poisson_model() {
        // Coverage 1 − e^{−λT} (Poisson process, intervals of length T): here λT = 0.2, so
        // 0.1813; over 4·10⁶ samples with bursts of 40, ≈ 2·10⁴ bursts: std ≈ 0.003, so 0.01.
        let (rate, t, fs) = (50.0, 4e-3, 10e3);
        let x = vec![Complex32::default(); 4_000_000];
        let y = process_in_chunks(
            &mut ImpulseNoise::new(rate, t, 2.0, fs, 3).unwrap(),
            &x,
            &[1 << 16],
        );
        let busy = y.iter().filter(|z| z.norm_sqr() > 0.0).count() as f64 / y.len() as f64;
        let want = 1.0 - (-rate * t).exp();
        let power = y.iter().map(|z| f64::from(z.norm_sqr())).sum::<f64>() / y.len() as f64;
        eprintln!(
            "impulse occupancy {busy:.4} (1 − e^−λT = {want:.4}), power {power:.4} vs {:.4}",
            2.0 * want
        );
        assert!((busy - want).abs() < 0.01);
        assert!((power / (2.0 * want) - 1.0).abs() < 0.06);
    }

    /// No delay probe: additive bursts (memoryless, delay 0).
    #[test]
    fn meets_the_block_contract() {
        let x: Vec<Complex32> = (0..6000)
            .map(|n| Complex32::new((n as f32 * 0.1).sin(), 0.3))
            .collect();
        let make = || ImpulseNoise::new(300.0, 1e-3, 1.0, 10e3, 4).unwrap();
        crate::block::check::check_block(&crate::block::check::BlockCheck::new(&make, &x));
    }
}

//! Additive white Gaussian noise set by density, channel SNR or CNR.

use super::snr::{n0_from_cnr, n0_from_snr, noise_power};
use crate::block::SampleBlock;
use crate::dsp::ComplexNoise;
use crate::{Complex32, Result};

/// Adds complex white Gaussian noise with E|w|² = N0·fs (see [`super::snr`]).
///
/// ```
/// use amrx::channel::Awgn;
/// let awgn = Awgn::from_cnr(0.09, 20.0, 4000.0, 48e3, 1).unwrap();
/// assert!((awgn.n0() - 0.09 / (2.0 * 4000.0 * 100.0)).abs() < 1e-15);
/// ```
#[derive(Debug)]
pub struct Awgn {
    n0: f64,
    seed: u64,
    noise: ComplexNoise,
}

impl Awgn {
    /// Noise of two-sided density `n0` at `sample_rate`, from `seed`.
    pub fn from_density(n0: f64, sample_rate: f64, seed: u64) -> Result<Self> {
        let noise = ComplexNoise::try_new(noise_power(n0, sample_rate), seed)?;
        Ok(Awgn { n0, seed, noise })
    }

    /// Noise giving channel SNR `snr_db` for a signal of power S and message bandwidth W.
    pub fn from_snr(
        signal_power: f64,
        snr_db: f64,
        bandwidth_hz: f64,
        sample_rate: f64,
        seed: u64,
    ) -> Result<Self> {
        Self::from_density(
            n0_from_snr(signal_power, snr_db, bandwidth_hz)?,
            sample_rate,
            seed,
        )
    }

    /// Noise giving CNR `cnr_db` for carrier power C and message bandwidth W.
    pub fn from_cnr(
        carrier_power: f64,
        cnr_db: f64,
        bandwidth_hz: f64,
        sample_rate: f64,
        seed: u64,
    ) -> Result<Self> {
        Self::from_density(
            n0_from_cnr(carrier_power, cnr_db, bandwidth_hz)?,
            sample_rate,
            seed,
        )
    }

    /// The density N0.
    pub fn n0(&self) -> f64 {
        self.n0
    }

    /// Noise power per sample N0·fs.
    pub fn power(&self) -> f64 {
        self.noise.power()
    }
}

impl SampleBlock for Awgn {
    type In = Complex32;
    type Out = Complex32;

    #[inline]
    fn next(&mut self, x: Complex32) -> Complex32 {
        x + self.noise.sample()
    }

    fn sample_delay(&self) -> f64 {
        0.0
    }

    fn reset_state(&mut self) {
        let power = self.noise.power();
        self.noise = ComplexNoise::new(power, self.seed);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::check::{check_block, BlockCheck};
    use crate::block::Block;

    #[test]
    fn noise_envelope_exceeds_the_carrier_with_probability_e_minus_rho() {
        // For complex Gaussian noise of power N the envelope is Rayleigh:
        // P(|w| > A) = e^{−A²/N} = e^{−ρ} (Haykin, Communication Systems, ch. 2, threshold
        // effect; Carlson, Communication Systems, Rayleigh envelope). At ρ = ln 100 the
        // probability is 0.01; with 10⁷ samples its std is √(0.01·0.99/10⁷) = 3.1e-5, so
        // ±5e-4 is 16σ.
        let mut awgn = Awgn::from_density(1e-6, 1e6, 2024).unwrap();
        let n = 10_000_000;
        let zeros = vec![Complex32::default(); 1 << 16];
        let mut out = vec![Complex32::default(); 1 << 16];
        let threshold = (100f64.ln() * awgn.power()).sqrt();
        let (mut above, mut power, mut done) = (0u64, 0.0f64, 0usize);
        while done < n {
            let k = (n - done).min(zeros.len());
            awgn.process(&zeros[..k], &mut out[..k]);
            for z in &out[..k] {
                let p = f64::from(z.norm_sqr());
                power += p;
                above += u64::from(p.sqrt() > threshold);
            }
            done += k;
        }
        let p = above as f64 / n as f64;
        eprintln!(
            "P(envelope > A_c) at ρ = ln 100: {p:.5} (e^−ρ = 0.01); power {:.5e}",
            power / n as f64
        );
        assert!((p - 0.01).abs() < 5e-4, "{p}");
        assert!((power / n as f64 / awgn.power() - 1.0).abs() < 2e-3);
    }

    /// No delay probe: additive noise, memoryless (delay 0); reset restarts the seeded noise.
    #[test]
    fn meets_the_block_contract() {
        let x: Vec<Complex32> = (0..5000)
            .map(|n| Complex32::new(n as f32 * 1e-3, 0.5))
            .collect();
        let make = || Awgn::from_snr(0.1, 10.0, 3000.0, 48e3, 5).unwrap();
        check_block(&BlockCheck::new(&make, &x));
    }
}

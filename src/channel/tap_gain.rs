//! A Rayleigh-fading tap gain with a Gaussian Doppler spectrum (Watterson's path model).
//!
//! Method (filtered Gaussian noise, not sum-of-sinusoids): complex white Gaussian noise of
//! unit power at a low rate r_t is filtered by a Gaussian FIR h(t) ∝ e^{−t²/(2σ_t²)},
//! σ_t = 1/(2√2·π·σ), whose power response |H(f)|² ∝ e^{−f²/(2σ²)} is the Gaussian Doppler
//! spectrum of standard deviation σ (Doppler spread 2σ, as CCIR Rec. 520 / ITU-R F.520 count
//! it). Taps span ±5σ_t and are scaled to Σh² = 1, so E|g|² = 1 and |g|² is exponential
//! (Rayleigh envelope). The output-rate gain is linearly interpolated between low-rate
//! samples (r_t ≥ 64σ keeps the interpolator's droop below 0.1 dB inside ±3σ).

use crate::{Complex32, Error, Result};
use num_complex::Complex64;
use rand::{rngs::StdRng, SeedableRng};
use rand_distr::{Distribution, StandardNormal};

/// Span of the Gaussian FIR in σ_t on each side.
const SPAN_SIGMAS: f64 = 5.0;

/// A seeded complex Gaussian tap-gain process with a Gaussian Doppler spectrum.
#[derive(Debug)]
pub struct TapGain {
    reversed: Vec<f64>,
    history: Vec<Complex64>,
    pos: usize,
    rng: StdRng,
    seed: u64,
    factor: usize,
    phase: usize,
    previous: Complex64,
    current: Complex64,
    constant: bool,
}

impl TapGain {
    /// Doppler standard deviation `sigma_hz` (σ; spread 2σ; 0 gives a constant gain of 1),
    /// computed at `tap_rate_hz` and interpolated by `factor` (output rate = factor·r_t).
    ///
    /// ```
    /// use amrx::channel::TapGain;
    /// let mut g = TapGain::new(0.25, 16.0, 1, 7).unwrap();
    /// let _ = g.next_low_rate();
    /// ```
    pub fn new(sigma_hz: f64, tap_rate_hz: f64, factor: usize, seed: u64) -> Result<Self> {
        if !(sigma_hz.is_finite() && sigma_hz >= 0.0) {
            return Err(Error::parameter(
                "Doppler spread",
                sigma_hz,
                "must be finite and ≥ 0",
            ));
        }
        if !(tap_rate_hz.is_finite() && tap_rate_hz > 0.0 && sigma_hz * 8.0 <= tap_rate_hz) {
            return Err(Error::parameter(
                "tap rate",
                tap_rate_hz,
                format!("must be positive and at least 8σ = {} Hz", 8.0 * sigma_hz),
            ));
        }
        let constant = sigma_hz == 0.0;
        let taps = if constant {
            vec![1.0]
        } else {
            gaussian_taps(sigma_hz, tap_rate_hz)?
        };
        let mut gain = TapGain {
            reversed: taps.iter().rev().copied().collect(),
            history: vec![Complex64::default(); 2 * taps.len()],
            pos: 0,
            rng: StdRng::seed_from_u64(seed),
            seed,
            factor: factor.max(1),
            phase: 0,
            previous: Complex64::default(),
            current: Complex64::default(),
            constant,
        };
        gain.warm_up();
        Ok(gain)
    }

    /// Fills the FIR so that the first output is already stationary.
    fn warm_up(&mut self) {
        for _ in 0..self.reversed.len() {
            self.next_low_rate();
        }
        self.previous = self.next_low_rate();
        self.current = self.next_low_rate();
        self.phase = 0;
    }

    /// The next sample at the low rate r_t.
    pub fn next_low_rate(&mut self) -> Complex64 {
        if self.constant {
            return Complex64::new(1.0, 0.0);
        }
        let re: f64 = StandardNormal.sample(&mut self.rng);
        let im: f64 = StandardNormal.sample(&mut self.rng);
        let w = Complex64::new(re, im) * std::f64::consts::FRAC_1_SQRT_2;
        let n = self.reversed.len();
        self.history[self.pos] = w;
        self.history[self.pos + n] = w;
        self.pos = (self.pos + 1) % n;
        self.history[self.pos..self.pos + n]
            .iter()
            .zip(&self.reversed)
            .map(|(x, h)| x * h)
            .sum()
    }

    /// The next sample at the output rate (linear interpolation between low-rate samples).
    #[inline]
    pub fn next_sample(&mut self) -> Complex64 {
        if self.phase == self.factor {
            self.previous = self.current;
            self.current = self.next_low_rate();
            self.phase = 0;
        }
        let t = self.phase as f64 / self.factor as f64;
        self.phase += 1;
        self.previous + (self.current - self.previous) * t
    }

    /// Writes output-rate gains.
    pub fn fill(&mut self, out: &mut [Complex32]) {
        for g in out.iter_mut() {
            let v = self.next_sample();
            *g = Complex32::new(v.re as f32, v.im as f32);
        }
    }

    /// Restarts the process from its seed.
    pub fn reset(&mut self) {
        self.rng = StdRng::seed_from_u64(self.seed);
        self.history.fill(Complex64::default());
        self.pos = 0;
        self.warm_up();
    }
}

/// h[k] ∝ e^{−k²/(2σ_n²)}, σ_n = r_t/(2√2·π·σ), |k| ≤ 5σ_n, Σh² = 1.
fn gaussian_taps(sigma_hz: f64, rate: f64) -> Result<Vec<f64>> {
    let sigma_n = rate / (2.0 * std::f64::consts::SQRT_2 * std::f64::consts::PI * sigma_hz);
    let half = (SPAN_SIGMAS * sigma_n).ceil() as usize;
    if half > 1 << 18 {
        return Err(Error::parameter(
            "tap rate",
            rate,
            "too high for this Doppler spread (FIR over 2^19 taps)",
        ));
    }
    let h: Vec<f64> = (0..=2 * half)
        .map(|i| {
            let k = i as f64 - half as f64;
            (-k * k / (2.0 * sigma_n * sigma_n)).exp()
        })
        .collect();
    let norm = h.iter().map(|v| v * v).sum::<f64>().sqrt();
    Ok(h.iter().map(|v| v / norm).collect())
}

//! Tone frequency estimation and SINAD of a demodulated test tone.
//!
//! Sine fitting follows IEEE Std 1241 (ADC testing), "three-parameter" (known frequency: DC,
//! cosine, sine amplitudes by linear least squares) and "four-parameter" (frequency refined by
//! Gauss–Newton iteration) sine-wave fits.

use num_complex::Complex64;

use super::carrier::parabolic_offset;
use super::spectrum::{periodic_hann, plan_forward};

/// A least-squares sine fit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ToneFit {
    /// Frequency in Hz.
    pub frequency_hz: f64,
    /// Amplitude (peak).
    pub amplitude: f64,
    /// Phase in radians.
    pub phase: f64,
}

/// Fewest samples any of these measurements accepts.
const MIN_SAMPLES: usize = 16;
/// Gauss–Newton iterations at most, and the frequency step (rad/sample) that ends them.
const MAX_ITERATIONS: usize = 30;
const CONVERGED: f64 = 1e-13;

/// The samples as f64, or `None` if too few, any non-finite, or a bad sample rate.
fn validated(audio: &[f32], sample_rate: f64) -> Option<Vec<f64>> {
    let ok = audio.len() >= MIN_SAMPLES
        && sample_rate.is_finite()
        && sample_rate > 0.0
        && audio.iter().all(|x| x.is_finite());
    ok.then(|| audio.iter().map(|&x| f64::from(x)).collect())
}

/// Solves the 4×4 system `m·x = v` by Gaussian elimination with partial pivoting.
fn solve4(mut m: [[f64; 4]; 4], mut v: [f64; 4]) -> Option<[f64; 4]> {
    for col in 0..4 {
        let pivot = (col..4).max_by(|&a, &b| m[a][col].abs().total_cmp(&m[b][col].abs()))?;
        if m[pivot][col].abs() < 1e-300 {
            return None;
        }
        m.swap(col, pivot);
        v.swap(col, pivot);
        let (top, below) = m.split_at_mut(col + 1);
        let pivot_row = &top[col];
        for (offset, row) in below.iter_mut().enumerate() {
            let f = row[col] / pivot_row[col];
            for (r, p) in row[col..].iter_mut().zip(&pivot_row[col..]) {
                *r -= f * p;
            }
            v[col + 1 + offset] -= f * v[col];
        }
    }
    let mut x = [0.0; 4];
    for row in (0..4).rev() {
        let tail: f64 = (row + 1..4).map(|k| m[row][k] * x[k]).sum();
        x[row] = (v[row] - tail) / m[row][row];
    }
    x.iter().all(|x| x.is_finite()).then_some(x)
}

/// Sine model x[n] ≈ a·cos(ω t) + b·sin(ω t) + c with t = n − centre.
#[derive(Debug, Clone, Copy)]
struct Sine {
    omega: f64,
    a: f64,
    b: f64,
    c: f64,
}

/// (sin ωt, cos ωt) for t = n − centre, n = 0, 1, …: a rotation by e^{jω} per sample, started
/// afresh from `sin_cos` every [`ANCHOR`] samples so the rounding of the recurrence cannot
/// build up (at most ~ANCHOR·2⁻⁵² ≈ 2·10⁻¹³ from the exact values; common practice, no
/// source). The library's `sin_cos` per sample was a third of a lab sweep's instructions
/// (callgrind).
struct Rotation {
    omega: f64,
    centre: f64,
    step: (f64, f64),
    n: usize,
    sc: (f64, f64),
}

/// Samples between exact restarts of a [`Rotation`].
const ANCHOR: usize = 1024;

impl Rotation {
    fn new(omega: f64, centre: f64) -> Self {
        Rotation {
            omega,
            centre,
            step: omega.sin_cos(),
            n: 0,
            sc: (0.0, 1.0),
        }
    }
}

impl Iterator for Rotation {
    type Item = (f64, f64);

    #[inline]
    fn next(&mut self) -> Option<(f64, f64)> {
        if self.n % ANCHOR == 0 {
            self.sc = (self.omega * (self.n as f64 - self.centre)).sin_cos();
        } else {
            let (s, c) = self.sc;
            let (ss, cs) = self.step;
            self.sc = (s * cs + c * ss, c * cs - s * ss);
        }
        self.n += 1;
        Some(self.sc)
    }
}

impl Sine {
    fn centre(len: usize) -> f64 {
        (len as f64 - 1.0) / 2.0
    }

    /// The model at `len` samples, n = 0 … len − 1 (by [`Rotation`]).
    fn samples(&self, len: usize) -> impl Iterator<Item = f64> + '_ {
        Rotation::new(self.omega, Self::centre(len))
            .take(len)
            .map(|(s, c)| self.a * c + self.b * s + self.c)
    }

    /// Least squares over regressors cos, sin, 1 and (with `previous`) the frequency derivative
    /// t·(−a sin + b cos): one IEEE 1241 three-parameter fit, or one four-parameter step.
    fn fit(x: &[f64], omega: f64, previous: Option<&Sine>) -> Option<Sine> {
        let centre = Self::centre(x.len());
        let mut m = [[0.0; 4]; 4];
        let mut v = [0.0; 4];
        for ((n, &xn), (s, c)) in x.iter().enumerate().zip(Rotation::new(omega, centre)) {
            let t = n as f64 - centre;
            let d = previous.map_or(0.0, |p| t * (p.b * c - p.a * s));
            let r = [c, s, 1.0, d];
            // The normal matrix is symmetric: its upper triangle only, mirrored below (the
            // same products in the same order, so the same sums; callgrind on a lab sweep:
            // the fit was a tenth of it).
            for i in 0..4 {
                for j in i..4 {
                    m[i][j] += r[i] * r[j];
                }
                v[i] += r[i] * xn;
            }
        }
        let upper = m;
        for (i, row) in m.iter_mut().enumerate() {
            for (j, value) in row.iter_mut().enumerate().take(i) {
                *value = upper[j][i];
            }
        }
        if previous.is_none() {
            // Three-parameter fit: pin the frequency step to zero.
            m[3] = [0.0, 0.0, 0.0, 1.0];
            (0..3).for_each(|i| m[i][3] = 0.0);
            v[3] = 0.0;
        }
        let [a, b, c, step] = solve4(m, v)?;
        Some(Sine {
            omega: omega + step,
            a,
            b,
            c,
        })
    }

    /// Four-parameter fit from `omega`: `None` if it does not converge or strays further than
    /// `max_step` rad/sample from the start.
    fn refine(x: &[f64], omega: f64, max_step: f64) -> Option<Sine> {
        let mut fit = Self::fit(x, omega, None)?;
        for _ in 0..MAX_ITERATIONS {
            let next = Self::fit(x, fit.omega, Some(&fit))?;
            let step = (next.omega - fit.omega).abs();
            if (next.omega - omega).abs() > max_step {
                return None;
            }
            fit = next;
            if step < CONVERGED {
                // Amplitudes for the final frequency.
                return Self::fit(x, fit.omega, None);
            }
        }
        None
    }

    fn residual_power(&self, x: &[f64]) -> f64 {
        let centre = Self::centre(x.len());
        x.iter()
            .zip(Rotation::new(self.omega, centre))
            .map(|(&xn, (s, c))| (xn - (self.a * c + self.b * s + self.c)).powi(2))
            .sum::<f64>()
            / x.len() as f64
    }
}

/// The tone fit at `tone_hz`, its frequency refined by the four-parameter fit when that
/// converges within one DFT bin (fs/len) of `tone_hz`, else the three-parameter fit at `tone_hz`.
fn best_fit(x: &[f64], sample_rate: f64, tone_hz: f64) -> Option<Sine> {
    if !(tone_hz.is_finite() && tone_hz > 0.0 && tone_hz < sample_rate / 2.0) {
        return None;
    }
    let omega = std::f64::consts::TAU * tone_hz / sample_rate;
    let bin = std::f64::consts::TAU / x.len() as f64;
    Sine::refine(x, omega, bin).or_else(|| Sine::fit(x, omega, None))
}

/// Least-squares fit of DC + a sine near `tone_hz` (frequency refined as in
/// [`estimate_tone_hz`]); phase is that of `amplitude·cos(2πf n/fs + phase)` at sample 0.
pub fn fit_tone(audio: &[f32], sample_rate: f64, tone_hz: f64) -> Option<ToneFit> {
    let x = validated(audio, sample_rate)?;
    let fit = best_fit(&x, sample_rate, tone_hz)?;
    // a cos(ωt) + b sin(ωt) = R cos(ωt − ψ), ψ = atan2(b, a), t = n − centre.
    let psi = fit.b.atan2(fit.a);
    let phase = -fit.omega * Sine::centre(x.len()) - psi;
    Some(ToneFit {
        frequency_hz: fit.omega * sample_rate / std::f64::consts::TAU,
        amplitude: fit.a.hypot(fit.b),
        phase: phase.sin().atan2(phase.cos()),
    })
}

/// Frequency (Hz) of the strongest spectral peak above DC: Hann window, zero-padded FFT and
/// quadratic interpolation on log power.
fn coarse_peak_hz(x: &[f64], sample_rate: f64) -> Option<f64> {
    let mean = x.iter().sum::<f64>() / x.len() as f64;
    let fft_len = (2 * x.len()).next_power_of_two();
    let window = periodic_hann(x.len());
    let mut buf: Vec<Complex64> = x
        .iter()
        .zip(window.iter())
        .map(|(&v, &w)| Complex64::new((v - mean) * w, 0.0))
        .collect();
    buf.resize(fft_len, Complex64::default());
    plan_forward(fft_len).process(&mut buf);
    let power: Vec<f64> = buf.iter().map(|z| z.norm_sqr()).collect();
    // Skip the DC main lobe (±2 bins of the unpadded length).
    let first = 2 * fft_len / x.len() + 1;
    let peak = (first..fft_len / 2).max_by(|&a, &b| power[a].total_cmp(&power[b]))?;
    if power[peak] <= 0.0 {
        return None;
    }
    let offset = parabolic_offset(power[peak - 1], power[peak], power[peak + 1]);
    Some((peak as f64 + offset) * sample_rate / fft_len as f64)
}

/// Estimates the dominant tone's frequency in Hz.
///
/// The FFT peak (Hann window, quadratic interpolation) is refined by the IEEE Std 1241
/// four-parameter least-squares sine fit. `None` for fewer than 16 samples, non-finite samples
/// or sample rate, or a signal without a peak.
pub fn estimate_tone_hz(audio: &[f32], sample_rate: f64) -> Option<f64> {
    let x = validated(audio, sample_rate)?;
    let coarse = coarse_peak_hz(&x, sample_rate)?;
    let omega = std::f64::consts::TAU * coarse / sample_rate;
    let bin = std::f64::consts::TAU / x.len() as f64;
    match Sine::refine(&x, omega, bin) {
        Some(fit) => Some(fit.omega * sample_rate / std::f64::consts::TAU),
        None => Some(coarse),
    }
}

/// SINAD in dB: total power over the power left after removing the fitted tone (and DC).
///
/// SINAD = (S + N + D)/(N + D), the receiver-test definition of TIA-603 (signal plus noise plus
/// distortion over noise plus distortion); note IEEE Std 1241 uses S/(N + D) instead. The tone
/// is a least-squares fit of DC + cos + sin at `tone_hz`, the frequency refined within one bin
/// (see [`fit_tone`]). `None` for invalid input or a tone outside (0, fs/2); +∞ for a perfect
/// sine.
pub fn sinad_db(audio: &[f32], sample_rate: f64, tone_hz: f64) -> Option<f64> {
    let x = validated(audio, sample_rate)?;
    let fit = best_fit(&x, sample_rate, tone_hz)?;
    let mean = x.iter().sum::<f64>() / x.len() as f64;
    let total = x.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / x.len() as f64;
    Some(10.0 * (total / fit.residual_power(&x)).log10())
}

/// Tone power over the noise-and-distortion power in (0, `band_hz`], in dB.
///
/// The tone (and DC) is removed by the fit of [`fit_tone`]; the residual's power in the band is
/// measured from its Hann-windowed, zero-padded FFT, normalised by Σw² so that the sum over all
/// bins is the residual's mean power (as in [`PowerSpectrum`](super::PowerSpectrum)).
/// The tone power is amplitude²/2. `None` for invalid input or a non-positive band.
pub fn snr_in_band_db(audio: &[f32], sample_rate: f64, tone_hz: f64, band_hz: f64) -> Option<f64> {
    if !(band_hz.is_finite() && band_hz > 0.0) {
        return None;
    }
    let x = validated(audio, sample_rate)?;
    let fit = best_fit(&x, sample_rate, tone_hz)?;
    let window = periodic_hann(x.len());
    let window_power: f64 = window.iter().map(|w| w * w).sum();
    let fft_len = x.len().next_power_of_two();
    let mut buf: Vec<Complex64> = x
        .iter()
        .zip(fit.samples(x.len()))
        .zip(window.iter())
        .map(|((&v, model), w)| Complex64::new((v - model) * w, 0.0))
        .collect();
    buf.resize(fft_len, Complex64::default());
    plan_forward(fft_len).process(&mut buf);
    let bin_hz = sample_rate / fft_len as f64;
    let top = ((band_hz / bin_hz).floor() as usize).min(fft_len / 2 - 1);
    // Real residual: the negative-frequency half mirrors the positive one.
    let band_energy: f64 = 2.0 * buf[1..=top].iter().map(|z| z.norm_sqr()).sum::<f64>();
    let noise = band_energy / (fft_len as f64 * window_power);
    let tone = (fit.a * fit.a + fit.b * fit.b) / 2.0;
    Some(10.0 * (tone / noise).log10())
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{rngs::StdRng, SeedableRng};
    use rand_distr::{Distribution, Normal};
    use std::f64::consts::TAU;

    fn sine(f: f64, a: f64, phase: f64, fs: f64, len: usize) -> Vec<f64> {
        (0..len)
            .map(|n| a * (TAU * f * n as f64 / fs + phase).cos())
            .collect()
    }

    fn with_noise(x: &[f64], sigma: f64, seed: u64) -> Vec<f32> {
        let mut rng = StdRng::seed_from_u64(seed);
        let normal = Normal::new(0.0, sigma).unwrap();
        x.iter()
            .map(|v| (v + normal.sample(&mut rng)) as f32)
            .collect()
    }

    #[test]
    fn tone_frequency_within_five_hundredths_of_a_hertz() {
        // 1 s at 48 kHz: the bin is 1 Hz, the sine fit must reach 0.05 Hz, clean or with noise
        // 30 dB down (the fit's Cramér–Rao spread there is ~1e-4 Hz).
        let fs = 48e3;
        let mut worst: f64 = 0.0;
        for (i, f) in [1000.0, 1234.567, 400.25, 3001.9].into_iter().enumerate() {
            for sigma in [0.0, 0.011] {
                let x = with_noise(&sine(f, 0.5, 0.3 * i as f64, fs, 48_000), sigma, i as u64);
                let got = estimate_tone_hz(&x, fs).unwrap();
                worst = worst.max((got - f).abs());
                assert!((got - f).abs() < 0.05, "{f} Hz σ {sigma}: {got}");
            }
        }
        eprintln!("worst tone frequency error {worst:.2e} Hz");
    }

    #[test]
    fn fit_recovers_amplitude_and_phase() {
        let fs = 8e3;
        let x: Vec<f32> = sine(697.3, 0.8, -2.1, fs, 4000)
            .iter()
            .map(|&v| (v + 0.05) as f32)
            .collect();
        let fit = fit_tone(&x, fs, 697.0).unwrap();
        assert!((fit.frequency_hz - 697.3).abs() < 1e-3);
        assert!((fit.amplitude - 0.8).abs() < 1e-5);
        assert!((fit.phase + 2.1).abs() < 1e-4, "{}", fit.phase);
    }

    #[test]
    fn sinad_of_sine_plus_white_noise() {
        // Analytic (S+N)/N = (A²/2 + σ²)/σ²; 48 000 samples estimate σ² to 0.65 % (0.03 dB).
        let fs = 48e3;
        for (sigma, seed) in [(0.05, 1), (0.005, 2), (0.2, 3)] {
            let a: f64 = 0.5;
            let x = with_noise(&sine(1000.0, a, 0.7, fs, 48_000), sigma, seed);
            let want = 10.0 * ((a * a / 2.0 + sigma * sigma) / (sigma * sigma)).log10();
            let got = sinad_db(&x, fs, 1000.0).unwrap();
            eprintln!("SINAD σ {sigma}: {got:.3} dB, analytic {want:.3} dB");
            assert!((got - want).abs() < 0.2);
        }
    }

    #[test]
    fn sinad_of_one_percent_third_harmonic_is_40_db() {
        // (1 + 10⁻⁴)/10⁻⁴ → 40.0004 dB; only f32 rounding separates the result from it.
        let fs = 48e3;
        let s = sine(1000.0, 1.0, 0.0, fs, 48_000);
        let h = sine(3000.0, 0.01, 0.4, fs, 48_000);
        let x: Vec<f32> = s.iter().zip(&h).map(|(a, b)| (a + b) as f32).collect();
        let got = sinad_db(&x, fs, 1000.0).unwrap();
        eprintln!("SINAD with 1 % third harmonic: {got:.4} dB");
        assert!((got - 40.0).abs() < 0.01, "{got}");
    }

    #[test]
    fn in_band_snr_ignores_noise_outside_the_band() {
        // White noise σ² over (0, fs/2]: (0, fs/4] holds σ²/2, so SNR = (A²/2)/(σ²/2). A strong
        // tone at 20 kHz lies outside the band and must not count (Hann sidelobes at 8 kHz
        // distance are below −100 dB).
        let (fs, a, sigma) = (48e3, 0.5f64, 0.02f64);
        let mut x = sine(1000.0, a, 0.2, fs, 48_000);
        for (v, w) in x.iter_mut().zip(sine(20e3, 0.3, 0.0, fs, 48_000)) {
            *v += w;
        }
        let x = with_noise(&x, sigma, 4);
        let want = 10.0 * ((a * a / 2.0) / (sigma * sigma / 2.0)).log10();
        let got = snr_in_band_db(&x, fs, 1000.0, 12e3).unwrap();
        eprintln!("in-band SNR {got:.3} dB, analytic {want:.3} dB");
        assert!((got - want).abs() < 0.2, "{got} vs {want}");
        // With the whole band the 20 kHz tone dominates the noise.
        assert!(snr_in_band_db(&x, fs, 1000.0, 24e3).unwrap() < want - 10.0);
    }

    #[test]
    fn rejects_invalid_input() {
        let fs = 8e3;
        assert!(estimate_tone_hz(&[0.0; 8], fs).is_none());
        assert!(estimate_tone_hz(&[0.0; 100], fs).is_none());
        let mut x: Vec<f32> = sine(500.0, 1.0, 0.0, fs, 800)
            .iter()
            .map(|&v| v as f32)
            .collect();
        assert!(sinad_db(&x, fs, 5000.0).is_none());
        assert!(sinad_db(&x, f64::NAN, 500.0).is_none());
        assert!(snr_in_band_db(&x, fs, 500.0, 0.0).is_none());
        x[3] = f32::NAN;
        assert!(sinad_db(&x, fs, 500.0).is_none());
    }
}

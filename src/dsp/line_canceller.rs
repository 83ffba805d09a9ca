//! The automatic notch: an adaptive line enhancer used as a canceller (B. Widrow et al.,
//! "Adaptive noise cancelling: principles and applications", Proc. IEEE 63(12), 1975, §VIII,
//! fig. 19). A normalised-LMS predictor sees the audio delayed by Δ (longer than the
//! programme's correlation time, shorter than a steady whistle's); what it can predict is the
//! periodic part, and the prediction error, the output, is the audio with its steady lines
//! removed. Speech and programme, uncorrelated across Δ, pass.

use crate::block::SampleBlock;
use crate::{Error, Result};

/// Decorrelation delay Δ, in s (common practice, no source: band-limited programme of ≥ 2 kHz
/// width has lost its correlation after 1 ms; a heterodyne whistle keeps it for seconds).
pub const DECORRELATION_S: f64 = 1e-3;
/// Predictor length, in s: its frequency resolution (~1/length) sets the notch width, its
/// Wiener gain L·P_line/(2σ²) the notch depth (Widrow et al. 1975, §VIII).
pub const PREDICTOR_S: f64 = 40e-3;
/// Normalised LMS step μ̃ (0 < μ̃ < 2; misadjustment ≈ μ̃/2, Haykin, Adaptive Filter Theory,
/// §6.4). The normaliser is the window's energy plus L times a short mean of x² that includes
/// the present sample (a regularised NLMS: without it an onset, seen by x\[n\] but not yet by the
/// delayed window, gives the weights a step of x/|window| that takes seconds to unlearn), about
/// twice the window's energy in steady state: the effective step is μ̃/2, ~1 % excess noise,
/// and a line at the programme's power settles within ~ 8/μ̃ samples. A smaller step leaves
/// a heterodyne under programme less deep (measured: 0.005 gives 24 dB, 0.05 gives 27 dB in
/// tests/interference.rs), as the weights then follow the programme-driven wander of the
/// line's Wiener solution less closely.
pub const STEP: f32 = 0.05;

/// Removes steady tones from audio: one sample in, one out, no delay on the direct path.
///
/// ```
/// let notch = amrx::dsp::LineCanceller::new(48_000.0).unwrap();
/// ```
#[derive(Debug, Clone)]
pub struct LineCanceller {
    /// Past inputs, written twice (at i and i + len) so every window is one slice.
    history: Vec<f32>,
    at: usize,
    weights: Vec<f32>,
    /// Σ x² over the predictor's window.
    energy: f64,
    /// Mean of x² over about Δ, including the present sample.
    recent: f64,
    recent_alpha: f64,
    step: f32,
}

impl LineCanceller {
    /// A canceller for audio at `sample_rate`, with the module's Δ, length and step.
    pub fn new(sample_rate: f64) -> Result<Self> {
        if !(sample_rate.is_finite() && (1_000.0..=1e6).contains(&sample_rate)) {
            return Err(Error::parameter(
                "audio_rate",
                sample_rate,
                "must lie in [1 kHz, 1 MHz] for the automatic notch",
            ));
        }
        let taps = ((PREDICTOR_S * sample_rate).round() as usize).max(8);
        let delay = ((DECORRELATION_S * sample_rate).round() as usize).max(2);
        let len = taps + delay;
        Ok(LineCanceller {
            history: vec![0.0; 2 * len],
            at: 0,
            weights: vec![0.0; taps],
            energy: 0.0,
            recent: 0.0,
            recent_alpha: 1.0 / delay as f64,
            step: STEP,
        })
    }

    /// Predictor length in samples.
    pub fn taps(&self) -> usize {
        self.weights.len()
    }

    fn len(&self) -> usize {
        self.history.len() / 2
    }
}

impl SampleBlock for LineCanceller {
    type In = f32;
    type Out = f32;

    #[inline]
    fn next(&mut self, x: f32) -> f32 {
        let x = if x.is_finite() { x } else { 0.0 };
        let len = self.len();
        let taps = self.weights.len();
        // history[at .. at + len] holds x[n−len] (at the start) up to x[n−1] (at the end);
        // with len = taps + Δ the window x[n−Δ−taps+1 ..= n−Δ] starts at offset 1.
        let window = &self.history[self.at + 1..self.at + 1 + taps];
        let prediction: f32 = window.iter().zip(&self.weights).map(|(a, b)| a * b).sum();
        let error = x - prediction;
        self.recent += self.recent_alpha * ((x as f64).powi(2) - self.recent);
        let norm = self.energy + taps as f64 * self.recent + 1e-30;
        let g = (self.step as f64 * error as f64 / norm) as f32;
        if g.is_finite() {
            for (w, &v) in self.weights.iter_mut().zip(window) {
                *w += g * v;
            }
        }
        if !prediction.is_finite() {
            self.weights.fill(0.0);
        }
        // Slide: x[n−Δ−taps+1] leaves the window, x[n+1−Δ] (offset taps + 1 < len, as
        // Δ ≥ 2) enters it; then x[n] replaces the oldest sample.
        let oldest = self.history[self.at + 1];
        let entering = self.history[self.at + 1 + taps];
        self.energy += (entering as f64).powi(2) - (oldest as f64).powi(2);
        if self.energy < 0.0 {
            self.energy = 0.0;
        }
        self.history[self.at] = x;
        self.history[self.at + len] = x;
        self.at = (self.at + 1) % len;
        if error.is_finite() {
            error
        } else {
            0.0
        }
    }

    fn sample_delay(&self) -> f64 {
        0.0
    }

    fn reset_state(&mut self) {
        self.history.fill(0.0);
        self.at = 0;
        self.weights.fill(0.0);
        self.energy = 0.0;
        self.recent = 0.0;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::check::{check_block, BlockCheck};
    use crate::block::process_to_vec;
    use crate::dsp::test_util::random_real;

    const RATE: f64 = 48_000.0;

    fn tone(n: usize, f: f64, a: f32) -> Vec<f32> {
        (0..n)
            .map(|k| a * (std::f64::consts::TAU * f * k as f64 / RATE).sin() as f32)
            .collect()
    }

    #[test]
    fn meets_the_block_contract() {
        // No delay probe: an adaptive canceller is not linear time-invariant (its weights
        // depend on the input); its direct path has no delay.
        let x: Vec<f32> = random_real(20_000, 8)
            .iter()
            .zip(tone(20_000, 1_900.0, 1.0))
            .map(|(a, b)| a + b)
            .collect();
        let make = || LineCanceller::new(RATE).unwrap();
        check_block(&BlockCheck::new(&make, &x));
    }

    #[test]
    fn removes_a_steady_tone_and_passes_white_noise() {
        // Widrow et al. 1975, §VIII: with white broadband input of power σ² the Wiener
        // canceller leaves σ²/(σ² + L·P/2) of the line (L = 1920 taps, P = 0.5, σ² = 0.03:
        // −78 dB). The LMS weights jitter around it (misadjustment μ̃/2, Haykin, Adaptive
        // Filter Theory, §6.4), so the test asks the line −30 dB over the second half second,
        // and the broadband part (the excess error, misadjustment plus the notch's share of
        // the noise) within 0.2 dB of the input noise.
        let n = 48_000;
        let noise: Vec<f32> = random_real(n, 2).iter().map(|v| 0.3 * v).collect();
        let whistle = tone(n, 1_900.0, 1.0);
        let x: Vec<f32> = noise.iter().zip(&whistle).map(|(a, b)| a + b).collect();
        let mut c = LineCanceller::new(RATE).unwrap();
        let y = process_to_vec(&mut c, &x);
        let tail = 24_000..n;
        let line = |z: &[f32]| {
            let (mut i, mut q) = (0.0, 0.0);
            for (k, v) in z.iter().enumerate() {
                let ph = std::f64::consts::TAU * 1_900.0 * (k + 24_000) as f64 / RATE;
                i += *v as f64 * ph.cos();
                q += *v as f64 * ph.sin();
            }
            (i * i + q * q) / (z.len() as f64).powi(2)
        };
        let depth = 10.0 * (line(&y[tail.clone()]) / line(&x[tail.clone()])).log10();
        assert!(depth < -30.0, "line {depth} dB");
        let power = |z: &[f32]| z.iter().map(|v| (*v as f64).powi(2)).sum::<f64>();
        let broadband = 10.0 * (power(&y[tail.clone()]) / power(&noise[tail])).log10();
        assert!(broadband.abs() < 0.2, "broadband {broadband} dB");
    }

    #[test]
    fn survives_non_finite_input() {
        let mut c = LineCanceller::new(RATE).unwrap();
        let mut x = tone(4_000, 700.0, 1.0);
        x[100] = f32::NAN;
        x[200] = f32::INFINITY;
        let y = process_to_vec(&mut c, &x);
        assert!(y.iter().all(|v| v.is_finite()));
    }

    #[test]
    fn rejects_bad_rate() {
        assert!(LineCanceller::new(0.0).is_err());
        assert!(LineCanceller::new(f64::NAN).is_err());
    }
}

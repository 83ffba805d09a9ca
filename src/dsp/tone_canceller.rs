//! The manual notch: the two-weight adaptive notch of B. Widrow et al., "Adaptive noise
//! cancelling: principles and applications", Proc. IEEE 63(12), 1975, §VI ("cancelling
//! periodic interference", fig. 6–7). A reference cosine and sine at the chosen frequency are
//! weighted by LMS to match the interfering tone's amplitude and phase and subtracted; the
//! result is a second-order notch at exactly that frequency (the paper's eq. (30)) with poles
//! at radius 1 − μ/2 for our update w += μ·e·x and unit reference, hence a −3 dB width of
//! μ rad/sample.

use crate::block::SampleBlock;
use crate::{Error, Result};

/// Width of the notch at −3 dB, in Hz (common practice, no source: narrower than a speech
/// harmonic spacing, wide enough to follow a drifting heterodyne of a few Hz).
pub const NOTCH_WIDTH_HZ: f64 = 20.0;

/// Removes one tone of known frequency from audio: one sample in, one out, no delay.
///
/// ```
/// let notch = amrx::dsp::ToneCanceller::new(1_000.0, 48_000.0).unwrap();
/// ```
#[derive(Debug, Clone)]
pub struct ToneCanceller {
    /// Reference phasor e^{jωn} and its per-sample step, advanced by complex multiplication
    /// in f64 and renormalised.
    phasor: (f64, f64),
    step: (f64, f64),
    weights: (f64, f64),
    mu: f64,
}

impl ToneCanceller {
    /// A notch at `frequency_hz` for audio at `sample_rate`.
    pub fn new(frequency_hz: f64, sample_rate: f64) -> Result<Self> {
        if !(sample_rate.is_finite() && sample_rate > 0.0) {
            return Err(Error::parameter(
                "audio_rate",
                sample_rate,
                "must be positive and finite",
            ));
        }
        if !(frequency_hz.is_finite() && frequency_hz > 0.0 && frequency_hz < sample_rate / 2.0) {
            return Err(Error::parameter(
                "notch_hz",
                frequency_hz,
                format!("must lie between 0 and {} Hz", sample_rate / 2.0),
            ));
        }
        let w = std::f64::consts::TAU * frequency_hz / sample_rate;
        // Widrow et al. 1975, §VI: the −3 dB width is μ rad/sample for our update, μ·fs/(2π) Hz.
        let mu = std::f64::consts::TAU * NOTCH_WIDTH_HZ / sample_rate;
        Ok(ToneCanceller {
            phasor: (1.0, 0.0),
            step: (w.cos(), w.sin()),
            weights: (0.0, 0.0),
            mu,
        })
    }
}

impl SampleBlock for ToneCanceller {
    type In = f32;
    type Out = f32;

    #[inline]
    fn next(&mut self, x: f32) -> f32 {
        let x = if x.is_finite() { x as f64 } else { 0.0 };
        let (c, s) = self.phasor;
        let estimate = self.weights.0 * c + self.weights.1 * s;
        let e = x - estimate;
        self.weights.0 += self.mu * e * c;
        self.weights.1 += self.mu * e * s;
        if !(self.weights.0.is_finite() && self.weights.1.is_finite()) {
            self.weights = (0.0, 0.0);
        }
        let (a, b) = self.step;
        let (re, im) = (c * a - s * b, c * b + s * a);
        let g = 1.5 - 0.5 * (re * re + im * im);
        self.phasor = (re * g, im * g);
        if e.is_finite() {
            e as f32
        } else {
            0.0
        }
    }

    fn sample_delay(&self) -> f64 {
        0.0
    }

    fn reset_state(&mut self) {
        self.phasor = (1.0, 0.0);
        self.weights = (0.0, 0.0);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::check::{check_block, BlockCheck, DelayProbe};
    use crate::block::process_to_vec;
    use crate::dsp::test_util::{random_real, real_tone};

    const RATE: f64 = 48_000.0;

    fn tone(n: usize, f: f64, phase: f64) -> Vec<f32> {
        (0..n)
            .map(|k| (std::f64::consts::TAU * f * k as f64 / RATE + phase).cos() as f32)
            .collect()
    }

    fn power(x: &[f32]) -> f64 {
        x.iter().map(|v| (*v as f64).powi(2)).sum::<f64>() / x.len() as f64
    }

    #[test]
    fn meets_the_block_contract() {
        // Linear and time-invariant once written as its transfer function (Widrow et al.
        // 1975, eq. (30): a second-order notch), so the delay probe applies, with tones far
        // from the notch where the group delay is ~0.
        let x = random_real(20_000, 4);
        let make = || ToneCanceller::new(1_000.0, RATE).unwrap();
        let signal = |f: f64| real_tone(20_000, f);
        check_block(&BlockCheck {
            delay_probe: Some(DelayProbe {
                signal: &signal,
                tones: [0.2, 0.21],
            }),
            ..BlockCheck::new(&make, &x)
        });
    }

    #[test]
    fn notch_depth_and_width_follow_the_transfer_function() {
        // Widrow et al. 1975, eq. (30): H(z) has zeros on the unit circle at ±ω0 and poles
        // at radius ≈ 1 − μ/2, so a tone at ω0 is removed completely and a tone NOTCH_WIDTH/2
        // away is down 3 dB; one twice the width away loses < 1 dB.
        let n = 96_000;
        let gain_db = |f: f64| {
            let mut c = ToneCanceller::new(1_000.0, RATE).unwrap();
            let x = tone(n, f, 0.3);
            let y = process_to_vec(&mut c, &x);
            10.0 * (power(&y[n / 2..]) / power(&x[n / 2..])).log10()
        };
        assert!(gain_db(1_000.0) < -60.0, "{}", gain_db(1_000.0));
        let edge = gain_db(1_000.0 + NOTCH_WIDTH_HZ / 2.0);
        assert!((edge + 3.0).abs() < 0.5, "{edge}");
        assert!(gain_db(1_000.0 + 2.0 * NOTCH_WIDTH_HZ) > -1.0);
        assert!(gain_db(3_000.0).abs() < 0.05);
    }

    #[test]
    fn rejects_bad_frequency() {
        assert!(ToneCanceller::new(0.0, RATE).is_err());
        assert!(ToneCanceller::new(24_000.0, RATE).is_err());
        assert!(ToneCanceller::new(f64::NAN, RATE).is_err());
        assert!(ToneCanceller::new(1_000.0, 0.0).is_err());
    }
}

//! One or more sinusoidal test tones as a message.

use super::message::MessageSource;
use crate::{Error, Result};

/// A sum of cosines `Σ a_k cos(2π f_k n/fs)`, f64 phases in cycles.
///
/// [`single`](Self::single) has amplitude 1; [`two_tone`](Self::two_tone) has two tones of 1/2
/// each, so both peak at 1 (the two-tone test signal of intermodulation practice).
#[derive(Debug, Clone)]
pub struct ToneMessage {
    tones: Vec<(f64, f64, f64)>,
    frequencies: Vec<f64>,
}

impl ToneMessage {
    /// One tone of amplitude 1 at `frequency_hz` (in (0, fs/2)).
    pub fn single(frequency_hz: f64, sample_rate: f64) -> Result<Self> {
        Self::new(&[(1.0, frequency_hz)], sample_rate)
    }

    /// Two tones of amplitude 1/2 each.
    pub fn two_tone(f1_hz: f64, f2_hz: f64, sample_rate: f64) -> Result<Self> {
        Self::new(&[(0.5, f1_hz), (0.5, f2_hz)], sample_rate)
    }

    /// Tones given as (amplitude, frequency in Hz); frequencies in (0, fs/2), amplitudes finite.
    pub fn new(tones: &[(f64, f64)], sample_rate: f64) -> Result<Self> {
        if !(sample_rate.is_finite() && sample_rate > 0.0) {
            return Err(Error::parameter(
                "message sample rate",
                sample_rate,
                "must be positive",
            ));
        }
        if tones.is_empty() {
            return Err(Error::parameter("tones", "[]", "need at least one tone"));
        }
        for &(a, f) in tones {
            if !(f.is_finite() && f > 0.0 && f < sample_rate / 2.0) {
                return Err(Error::parameter(
                    "tone_hz",
                    format!("{f} Hz"),
                    format!("must lie in (0, {} Hz)", sample_rate / 2.0),
                ));
            }
            if !a.is_finite() {
                return Err(Error::parameter("tone_amplitude", a, "must be finite"));
            }
        }
        Ok(ToneMessage {
            tones: tones
                .iter()
                .map(|&(a, f)| (a, f / sample_rate, 0.0))
                .collect(),
            frequencies: tones.iter().map(|t| t.1).collect(),
        })
    }
}

impl MessageSource for ToneMessage {
    fn fill(&mut self, out: &mut [f64]) {
        for y in out.iter_mut() {
            let mut sum = 0.0;
            for (a, step, phase) in self.tones.iter_mut() {
                sum += *a * (std::f64::consts::TAU * *phase).cos();
                let v = *phase + *step;
                *phase = v - v.floor();
            }
            *y = sum;
        }
    }

    /// Σ a_k²/2 (distinct frequencies).
    fn mean_square(&self) -> f64 {
        self.tones.iter().map(|t| t.0 * t.0 / 2.0).sum()
    }

    fn band_hz(&self) -> (f64, f64) {
        let lo = self.frequencies.iter().cloned().fold(f64::MAX, f64::min);
        let hi = self.frequencies.iter().cloned().fold(0.0, f64::max);
        (lo, hi)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn closed_form_and_power() {
        let fs = 8000.0;
        let mut m = ToneMessage::two_tone(700.0, 1900.0, fs).unwrap();
        let mut out = vec![0.0; 8000];
        m.fill(&mut out[..3333]);
        m.fill(&mut out[3333..]);
        for (n, y) in out.iter().enumerate() {
            let t = n as f64 / fs;
            let tau = std::f64::consts::TAU;
            let want = 0.5 * (tau * 700.0 * t).cos() + 0.5 * (tau * 1900.0 * t).cos();
            assert!((y - want).abs() < 1e-9);
        }
        // Whole number of cycles of both tones in 1 s: the mean square is exactly Σa²/2.
        let ms = out.iter().map(|y| y * y).sum::<f64>() / out.len() as f64;
        assert!((ms - m.mean_square()).abs() < 1e-9);
        assert_eq!(m.band_hz(), (700.0, 1900.0));
        assert!(ToneMessage::single(4000.0, fs).is_err());
        assert!(ToneMessage::single(0.0, fs).is_err());
    }
}

//! Full-carrier AM with tone modulation: s(t) = A_c·(1 + μ·cos 2πf_m t)·e^{j2πf_c t}.
//!
//! Notation of S. Haykin, Communication Systems, ch. 2 (amplitude modulation): A_c carrier
//! amplitude, μ = k_a·A_m modulation index, f_m tone frequency; here at complex baseband with the
//! carrier at offset f_c from the recording centre.

use crate::dsp::phasor::Phasor;
use crate::{Complex32, Error, Result};

/// A full-carrier AM transmitter modulated by one tone, at complex baseband.
///
/// Sample n is `A_c·(1 + μ·cos(2π f_m n/fs))·e^{j2π f_c n/fs}`, the formula as written for every
/// μ ≥ 0: above μ = 1 the amplitude factor goes negative for part of each cycle, so the envelope
/// |1 + μ cos| folds back up through zero (overmodulation) and the carrier phase flips by π there.
/// The tone and carrier are f64 phasors exact at every 1024th sample and rotated between, so
/// sample n depends on n alone, not on how the output is split between [`fill`](Self::fill)
/// calls. Callgrind on one point of a lab sweep: a `cos` and a `sin_cos` per sample were a
/// fifth of the instructions.
#[derive(Debug, Clone)]
pub struct AmToneTransmitter {
    carrier_amplitude: f64,
    mu: f64,
    tone_step: f64,
    carrier_step: f64,
    tone: Phasor,
    carrier: Phasor,
}

fn finite(name: &'static str, value: f64) -> Result<f64> {
    if value.is_finite() {
        Ok(value)
    } else {
        Err(Error::parameter(name, value, "must be finite"))
    }
}

impl AmToneTransmitter {
    /// `carrier_amplitude` A_c, modulation index `mu` (≥ 0; above 1 overmodulates), tone in Hz,
    /// carrier offset from the recording centre in Hz, sample rate in Hz.
    ///
    /// Errors: any value non-finite, A_c < 0, μ < 0, sample rate ≤ 0, |offset| > fs/2,
    /// tone outside [0, fs/2), or a peak amplitude A_c(1 + μ) beyond the f32 range.
    pub fn new(
        carrier_amplitude: f64,
        mu: f64,
        tone_hz: f64,
        offset_hz: f64,
        sample_rate: f64,
    ) -> Result<Self> {
        let fs = finite("sample_rate", sample_rate)?;
        if fs <= 0.0 {
            return Err(Error::parameter("sample_rate", fs, "must be positive"));
        }
        let a_c = finite("carrier_amplitude", carrier_amplitude)?;
        if a_c < 0.0 {
            return Err(Error::parameter("carrier_amplitude", a_c, "must be ≥ 0"));
        }
        let mu = finite("mu", mu)?;
        if mu < 0.0 {
            return Err(Error::parameter("mu", mu, "must be ≥ 0"));
        }
        if a_c * (1.0 + mu) > f64::from(f32::MAX) {
            return Err(Error::parameter(
                "carrier_amplitude",
                a_c,
                "peak amplitude A_c·(1 + μ) exceeds the f32 range",
            ));
        }
        let tone = finite("tone_hz", tone_hz)?;
        if !(0.0..fs / 2.0).contains(&tone) {
            return Err(Error::parameter(
                "tone_hz",
                tone,
                format!("must be in [0, {}) Hz (half the sample rate)", fs / 2.0),
            ));
        }
        let offset = finite("offset_hz", offset_hz)?;
        if offset.abs() > fs / 2.0 {
            return Err(Error::parameter(
                "offset_hz",
                offset,
                format!("must be within ±{} Hz (half the sample rate)", fs / 2.0),
            ));
        }
        Ok(AmToneTransmitter {
            carrier_amplitude: a_c,
            mu,
            tone_step: tone / fs,
            carrier_step: offset / fs,
            tone: Phasor::at(tone / fs, 0),
            carrier: Phasor::at(offset / fs, 0),
        })
    }

    /// The transmitter from its modulator parameters: amplitude sensitivity `k_a` (per unit of
    /// message) and message amplitude A_m, giving μ = k_a·A_m (Haykin, Communication Systems,
    /// ch. 2). Same errors as [`new`](Self::new), with μ < 0 reported for k_a·A_m < 0.
    pub fn from_sensitivity(
        carrier_amplitude: f64,
        k_a: f64,
        message_amplitude: f64,
        tone_hz: f64,
        offset_hz: f64,
        sample_rate: f64,
    ) -> Result<Self> {
        let k_a = finite("amplitude_sensitivity", k_a)?;
        let a_m = finite("message_amplitude", message_amplitude)?;
        Self::new(
            carrier_amplitude,
            k_a * a_m,
            tone_hz,
            offset_hz,
            sample_rate,
        )
    }

    /// The modulation index μ.
    pub fn modulation_index(&self) -> f64 {
        self.mu
    }

    /// Fills `out` with the next samples.
    pub fn fill(&mut self, out: &mut [Complex32]) {
        for s in out.iter_mut() {
            let amplitude = self.carrier_amplitude * (1.0 + self.mu * self.tone.value().0);
            let (cos, sin) = self.carrier.value();
            *s = Complex32::new((amplitude * cos) as f32, (amplitude * sin) as f32);
            self.tone.advance();
            self.carrier.advance();
        }
    }

    /// Restarts at sample 0.
    pub fn reset(&mut self) {
        self.tone = Phasor::at(self.tone_step, 0);
        self.carrier = Phasor::at(self.carrier_step, 0);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{rngs::StdRng, RngExt, SeedableRng};

    #[test]
    fn rejects_bad_parameters() {
        let fs = 48e3;
        assert!(AmToneTransmitter::new(1.0, -0.1, 1e3, 0.0, fs).is_err());
        assert!(AmToneTransmitter::new(1.0, f64::NAN, 1e3, 0.0, fs).is_err());
        assert!(AmToneTransmitter::new(f64::INFINITY, 0.5, 1e3, 0.0, fs).is_err());
        assert!(AmToneTransmitter::new(1.0, 0.5, 24e3, 0.0, fs).is_err());
        assert!(AmToneTransmitter::new(1.0, 0.5, 1e3, 24_001.0, fs).is_err());
        assert!(AmToneTransmitter::new(1.0, 0.5, 1e3, 0.0, 0.0).is_err());
        assert!(AmToneTransmitter::new(1e39, 0.5, 1e3, 0.0, fs).is_err());
        assert!(AmToneTransmitter::new(1.0, 0.5, 1e3, -24e3, fs).is_ok());
        assert!(AmToneTransmitter::from_sensitivity(1.0, 0.5, -1.0, 1e3, 0.0, fs).is_err());
    }

    #[test]
    fn matches_the_closed_form() {
        // Against the formula evaluated directly from n; f32 output rounding bounds the error.
        let (a_c, mu, f_m, f_c, fs) = (0.7, 1.3, 997.0, -3210.5, 48e3);
        let mut tx = AmToneTransmitter::new(a_c, mu, f_m, f_c, fs).unwrap();
        let mut out = vec![Complex32::default(); 20_000];
        tx.fill(&mut out);
        use std::f64::consts::TAU;
        for (n, s) in out.iter().enumerate() {
            let t = n as f64 / fs;
            let amp = a_c * (1.0 + mu * (TAU * f_m * t).cos());
            let (want_re, want_im) = (amp * (TAU * f_c * t).cos(), amp * (TAU * f_c * t).sin());
            assert!((f64::from(s.re) - want_re).abs() < 1e-6, "n={n}");
            assert!((f64::from(s.im) - want_im).abs() < 1e-6, "n={n}");
        }
    }

    #[test]
    fn sensitivity_constructor_sets_mu() {
        let tx = AmToneTransmitter::from_sensitivity(1.0, 0.25, 2.0, 1e3, 0.0, 8e3).unwrap();
        assert_eq!(tx.modulation_index(), 0.5);
    }

    #[test]
    fn chunking_does_not_change_the_output() {
        let make = || AmToneTransmitter::new(1.0, 0.8, 1234.5, 5678.9, 96e3).unwrap();
        let mut whole = vec![Complex32::default(); 30_000];
        make().fill(&mut whole);
        let mut tx = make();
        let mut pieces = vec![Complex32::default(); 30_000];
        let mut rng = StdRng::seed_from_u64(4);
        let mut at = 0;
        while at < pieces.len() {
            let n = rng.random_range(0..3000usize).min(pieces.len() - at);
            tx.fill(&mut pieces[at..at + n]);
            at += n;
        }
        assert_eq!(whole, pieces);
    }

    #[test]
    fn overmodulated_envelope_folds() {
        // μ = 2: the envelope |1 + 2cos| reaches 0 and rises back to 1 at the tone's trough.
        let fs = 8000.0;
        let mut tx = AmToneTransmitter::new(1.0, 2.0, 100.0, 0.0, fs).unwrap();
        let mut out = vec![Complex32::default(); 80];
        tx.fill(&mut out);
        assert!((out[40].norm() - 1.0).abs() < 1e-6); // cos = −1: |1 − 2| = 1
        assert!(out.iter().map(|z| z.norm()).fold(f32::MAX, f32::min) < 0.05);
        assert!((out[0].norm() - 3.0).abs() < 1e-6);
    }
}

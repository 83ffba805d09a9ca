//! One Monte Carlo trial: a detector's tone test signal plus seeded white noise at a given
//! channel SNR, through the detector's receiver with AGC off, and the output SNR measured.

use super::detector::Detector;
use super::theory::noise_power;
use crate::block::process_to_vec;
use crate::demod::{ReceiverConfig, ReceiverOptions};
use crate::dsp::AgcSettings;
use crate::dsp::ComplexNoise;
use crate::measure::snr_in_band_db;
use crate::{Complex32, Error, Result};

use super::signal::ToneSource;

/// Mean power of every test signal, mean|s|² (the scale is arbitrary: AGC is off and every
/// measurement is a ratio).
pub const SIGNAL_POWER: f64 = 0.1;

/// The signal and timing settings of a trial, shared by every trial of a sweep.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TrialSettings {
    /// IQ sample rate in Hz.
    pub iq_rate: f64,
    /// Carrier (or suppressed-carrier reference) offset from the recording centre, in Hz.
    pub carrier_offset_hz: f64,
    /// Modulation index μ of the full-carrier signal.
    pub mu: f64,
    /// Tone frequency f_m in Hz.
    pub tone_hz: f64,
    /// Message bandwidth W in Hz: the receiver's bandwidth and the band the noise is measured in.
    pub bandwidth_hz: f64,
    /// Audio rate of the receivers in Hz.
    pub audio_rate: f64,
    /// Seconds of audio measured per trial.
    pub seconds: f64,
    /// Seconds dropped at the start for filters, DC blockers and carrier loops to settle.
    pub settle_s: f64,
}

impl Default for TrialSettings {
    /// 96 kS/s IQ, carrier at +12 kHz, μ = 0.5, a 1 kHz tone, W = 5 kHz, audio at 48 kHz,
    /// 0.5 s measured after 0.25 s of settling.
    fn default() -> Self {
        TrialSettings {
            iq_rate: 96_000.0,
            carrier_offset_hz: 12_000.0,
            mu: 0.5,
            tone_hz: 1000.0,
            bandwidth_hz: 5000.0,
            audio_rate: 48_000.0,
            seconds: 0.5,
            settle_s: 0.25,
        }
    }
}

impl TrialSettings {
    /// Checks what the receivers do not check themselves.
    pub fn validate(&self) -> Result<()> {
        let positive = |name: &'static str, v: f64| {
            if v.is_finite() && v > 0.0 {
                Ok(())
            } else {
                Err(Error::parameter(name, v, "must be a positive number"))
            }
        };
        positive("seconds", self.seconds)?;
        positive("tone_hz", self.tone_hz)?;
        positive("bandwidth_hz", self.bandwidth_hz)?;
        if !(self.settle_s.is_finite() && self.settle_s >= 0.0) {
            return Err(Error::parameter("settle_s", self.settle_s, "must be ≥ 0 s"));
        }
        if !(self.mu.is_finite() && self.mu > 0.0) {
            return Err(Error::parameter("mu", self.mu, "must be positive"));
        }
        if self.tone_hz >= self.bandwidth_hz {
            return Err(Error::parameter(
                "tone_hz",
                self.tone_hz,
                format!("must lie below the bandwidth ({} Hz)", self.bandwidth_hz),
            ));
        }
        if self.iq_rate * (self.seconds + self.settle_s) > 1e9 {
            return Err(Error::parameter(
                "seconds",
                self.seconds,
                "too long a trial",
            ));
        }
        Ok(())
    }

    /// The receiver settings: the mode's defaults except bandwidth W, the audio rate, AGC off.
    pub fn receiver_config(&self) -> ReceiverConfig {
        ReceiverConfig {
            input_rate: self.iq_rate,
            offset_hz: self.carrier_offset_hz,
            options: ReceiverOptions {
                audio_rate: self.audio_rate,
                bandwidth_hz: Some(self.bandwidth_hz),
                agc: Some(AgcSettings::OFF),
                ..ReceiverOptions::default()
            },
        }
    }

    /// IQ samples per trial, settling included.
    pub fn iq_len(&self) -> usize {
        (self.iq_rate * (self.seconds + self.settle_s)).round() as usize
    }
}

/// The noise seed of one trial, from the sweep seed, the detector's name, the point and the
/// trial index: the same numbers give the same noise whatever thread runs the trial.
pub fn trial_seed(seed: u64, detector: &str, point: usize, trial: usize) -> u64 {
    // FNV-1a of the name, then SplitMix64 finalisers (Steele, Lea, Flood, "Fast splittable
    // pseudorandom number generators", OOPSLA 2014) over each field.
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for b in detector.bytes() {
        h = (h ^ u64::from(b)).wrapping_mul(0x0100_0000_01b3);
    }
    [seed, h, point as u64, trial as u64]
        .into_iter()
        .fold(0x9e37_79b9_7f4a_7c15, |acc, v| splitmix(acc ^ splitmix(v)))
}

fn splitmix(mut z: u64) -> u64 {
    z = z.wrapping_add(0x9e37_79b9_7f4a_7c15);
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    z ^ (z >> 31)
}

/// The detector's noisy test signal at `channel_snr_db` (noise from `noise_seed`).
pub fn trial_input(
    detector: &Detector,
    settings: &TrialSettings,
    channel_snr_db: f64,
    noise_seed: u64,
) -> Result<Vec<Complex32>> {
    let mut source = ToneSource::new(
        detector.test_signal()?,
        SIGNAL_POWER,
        settings.mu,
        settings.tone_hz,
        settings.carrier_offset_hz,
        settings.iq_rate,
    )?;
    let mut iq = vec![Complex32::default(); settings.iq_len()];
    source.fill(&mut iq);
    let power = noise_power(
        SIGNAL_POWER,
        channel_snr_db,
        settings.bandwidth_hz,
        settings.iq_rate,
    );
    ComplexNoise::try_new(power, noise_seed)?.add_to(&mut iq);
    Ok(iq)
}

/// Runs one trial and returns the output SNR in dB: tone power over the noise and distortion
/// in (0, W] of the audio after the settling time, DC removed
/// ([`snr_in_band_db`]).
pub fn run_trial(
    detector: &Detector,
    settings: &TrialSettings,
    channel_snr_db: f64,
    noise_seed: u64,
) -> Result<f64> {
    settings.validate()?;
    if !channel_snr_db.is_finite() {
        return Err(Error::parameter(
            "SNR point",
            channel_snr_db,
            "must be finite",
        ));
    }
    let mut receiver = detector.build(&settings.receiver_config())?;
    let iq = trial_input(detector, settings, channel_snr_db, noise_seed)?;
    let audio = process_to_vec(receiver.as_mut(), &iq);
    let rate = receiver.audio_rate();
    let channels = receiver.audio_channels();
    let skip = ((settings.settle_s * rate).round() as usize * channels).min(audio.len());
    let mono: Vec<f32> = audio[skip..].iter().step_by(channels).copied().collect();
    snr_in_band_db(&mono, rate, settings.tone_hz, settings.bandwidth_hz)
        .filter(|snr| snr.is_finite())
        .ok_or_else(|| {
            Error::parameter(
                "trial",
                format!("{detector} at {channel_snr_db} dB"),
                "the output SNR could not be measured (no tone in the audio)",
            )
        })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::demod::Mode;
    use crate::lab::theory::{db, full_carrier_figure_of_merit};

    #[test]
    fn seeds_differ_per_field_and_repeat() {
        let a = trial_seed(1, "am", 0, 0);
        assert_eq!(a, trial_seed(1, "am", 0, 0));
        for b in [
            trial_seed(2, "am", 0, 0),
            trial_seed(1, "sam", 0, 0),
            trial_seed(1, "am", 1, 0),
            trial_seed(1, "am", 0, 1),
        ] {
            assert_ne!(a, b);
        }
    }

    #[test]
    fn noise_is_set_for_the_channel_snr() {
        // Measured mean|s|² / (N0·W) with N0 = mean|w|²/fs from the generated samples; 72 000
        // samples estimate the noise power to 0.4 % (1/√N), 0.02 dB.
        let s = TrialSettings::default();
        let am = Detector::Receiver(Mode::Am);
        let noisy = trial_input(&am, &s, 10.0, 3).unwrap();
        let clean = trial_input(&am, &s, 300.0, 3).unwrap();
        let n = noisy.len() as f64;
        let p_s = clean.iter().map(|z| f64::from(z.norm_sqr())).sum::<f64>() / n;
        let p_w = noisy
            .iter()
            .zip(&clean)
            .map(|(a, b)| f64::from((a - b).norm_sqr()))
            .sum::<f64>()
            / n;
        let snr = db(p_s / (p_w / s.iq_rate * s.bandwidth_hz));
        assert!((snr - 10.0).abs() < 0.1, "{snr}");
    }

    #[test]
    fn envelope_trial_meets_theory_at_high_snr() {
        // Haykin, Communication Systems, ch. 2: FoM μ²/(2+μ²) above threshold. One 0.5 s
        // trial measures the noise in 2500 Hann-windowed bins: standard error about 0.1 dB.
        let s = TrialSettings::default();
        let got = run_trial(&Detector::Receiver(Mode::Am), &s, 30.0, 9).unwrap();
        let want = 30.0 + db(full_carrier_figure_of_merit(s.mu));
        assert!((got - want).abs() < 0.5, "{got} vs {want}");
    }
}

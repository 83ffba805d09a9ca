//! One Monte Carlo trial: a detector's tone test signal plus seeded white noise at a given
//! channel SNR, through the detector's receiver with AGC off, and the output SNR measured.

use super::channel::ChannelCondition;
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
    /// Fading and impulses besides the white noise ([`ChannelCondition::NONE`]: none).
    pub channel: ChannelCondition,
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
            channel: ChannelCondition::NONE,
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
        self.channel.validate()?;
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

/// The detector's noisy test signal at `channel_snr_db` (noise from `noise_seed`), through
/// the settings' channel condition (fading and impulses seeded by `channel_seed`).
pub fn trial_input(
    detector: &Detector,
    settings: &TrialSettings,
    channel_snr_db: f64,
    noise_seed: u64,
    channel_seed: u64,
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
    let channel = settings.channel;
    let mut iq = channel.fade(iq, settings.iq_rate, channel_seed)?;
    let impulse_seed = channel_seed ^ 0x5eed_1e55_0000_0001;
    channel.add_impulses(&mut iq, SIGNAL_POWER, settings.iq_rate, impulse_seed)?;
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
/// ([`snr_in_band_db`]). The channel condition's fading and impulses take the noise seed
/// too; [`run_trial_in_channel`] seeds them apart.
pub fn run_trial(
    detector: &Detector,
    settings: &TrialSettings,
    channel_snr_db: f64,
    noise_seed: u64,
) -> Result<f64> {
    run_trial_in_channel(detector, settings, channel_snr_db, noise_seed, noise_seed)
}

/// [`run_trial`] with the fading and impulses seeded by `channel_seed`, so that detectors fed
/// the same test signal can share one channel realisation while their noise differs.
///
/// Under fading the output SINAD is read by [`tracking_sinad_db`] (the tone re-fitted every
/// [`TRACKING_BLOCK_S`]), so that the slow change of the wanted tone's level and phase is not
/// counted as noise; what remains is the noise and the distortion the detector adds.
pub fn run_trial_in_channel(
    detector: &Detector,
    settings: &TrialSettings,
    channel_snr_db: f64,
    noise_seed: u64,
    channel_seed: u64,
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
    let iq = trial_input(detector, settings, channel_snr_db, noise_seed, channel_seed)?;
    let audio = process_to_vec(receiver.as_mut(), &iq);
    let rate = receiver.audio_rate();
    let channels = receiver.audio_channels();
    let pick = detector.audio_channel().min(channels - 1);
    let skip = ((settings.settle_s * rate).round() as usize * channels).min(audio.len());
    let mono: Vec<f32> = audio[skip..]
        .iter()
        .skip(pick)
        .step_by(channels)
        .copied()
        .collect();
    let measured = if settings.channel.fading.is_some() {
        tracking_sinad_db(
            &mono,
            rate,
            settings.tone_hz,
            settings.bandwidth_hz,
            TRACKING_BLOCK_S,
        )
    } else {
        snr_in_band_db(&mono, rate, settings.tone_hz, settings.bandwidth_hz)
    };
    measured.filter(|snr| snr.is_finite()).ok_or_else(|| {
        Error::parameter(
            "trial",
            format!("{detector} at {channel_snr_db} dB"),
            "the output SNR could not be measured (no tone in the audio)",
        )
    })
}

/// Block length of [`tracking_sinad_db`], 20 ms: short against the fades of the standard
/// conditions with spreads up to a few hertz (those of 10 Hz and more — flutter and the
/// disturbed low/high-latitude sets — change within a block, and what changes is read as
/// distortion), long against a 1 kHz tone's period (common practice, no source).
pub const TRACKING_BLOCK_S: f64 = 0.02;

/// The SINAD of a tone whose level and phase drift slowly: in consecutive blocks of
/// `block_s` (the last one shorter), a least-squares fit of a·cos ωt + b·sin ωt + c; SINAD =
/// Σ fitted tone energy / residual energy in (0, `band_hz`], dB (the band by Parseval over
/// the zero-padded FFT of the whole residual, as [`snr_in_band_db`] reads it). The fit
/// absorbs 3 degrees of freedom per block: with `block_s` = 20 ms at 48 kHz, 3 of 960
/// samples, a bias of +0.014 dB. `None` for an empty or silent input.
pub fn tracking_sinad_db(
    audio: &[f32],
    rate: f64,
    tone_hz: f64,
    band_hz: f64,
    block_s: f64,
) -> Option<f64> {
    let block = ((block_s * rate).round() as usize).max(8);
    let w = std::f64::consts::TAU * tone_hz / rate;
    let mut tone = 0.0f64;
    let mut residual = vec![num_complex::Complex64::default(); audio.len().next_power_of_two()];
    for (b, chunk) in audio.chunks(block).enumerate() {
        if chunk.len() < 8 {
            continue;
        }
        let start = b * block;
        // Normal equations of [cos, sin, 1], phases from the absolute sample index.
        let mut g = [[0.0f64; 3]; 3];
        let mut r = [0.0f64; 3];
        for (k, &x) in chunk.iter().enumerate() {
            let (s, c) = (w * (start + k) as f64).sin_cos();
            let basis = [c, s, 1.0];
            for i in 0..3 {
                r[i] += basis[i] * f64::from(x);
                for j in 0..3 {
                    g[i][j] += basis[i] * basis[j];
                }
            }
        }
        let coef = solve3(g, r)?;
        for (k, &x) in chunk.iter().enumerate() {
            let (s, c) = (w * (start + k) as f64).sin_cos();
            let t = coef[0] * c + coef[1] * s;
            tone += t * t;
            residual[start + k].re = f64::from(x) - t - coef[2];
        }
    }
    if !(tone > 0.0 && band_hz > 0.0) {
        return None;
    }
    let n = residual.len();
    crate::measure::spectrum::plan_forward(n).process(&mut residual);
    let top = ((band_hz * n as f64 / rate).floor() as usize).clamp(1, n / 2 - 1);
    // A real residual: the negative-frequency half mirrors the positive one.
    let rest = 2.0 * residual[1..=top].iter().map(|z| z.norm_sqr()).sum::<f64>() / n as f64;
    (rest > 0.0).then(|| 10.0 * (tone / rest).log10())
}

/// Solves a 3×3 system by Cramer's rule; `None` when singular.
fn solve3(g: [[f64; 3]; 3], r: [f64; 3]) -> Option<[f64; 3]> {
    let det = |m: [[f64; 3]; 3]| {
        m[0][0] * (m[1][1] * m[2][2] - m[1][2] * m[2][1])
            - m[0][1] * (m[1][0] * m[2][2] - m[1][2] * m[2][0])
            + m[0][2] * (m[1][0] * m[2][1] - m[1][1] * m[2][0])
    };
    let d = det(g);
    if !(d.is_finite() && d.abs() > 1e-12) {
        return None;
    }
    let mut out = [0.0; 3];
    for (col, o) in out.iter_mut().enumerate() {
        let mut m = g;
        for row in 0..3 {
            m[row][col] = r[row];
        }
        *o = det(m) / d;
    }
    Some(out)
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
        let noisy = trial_input(&am, &s, 10.0, 3, 3).unwrap();
        let clean = trial_input(&am, &s, 300.0, 3, 3).unwrap();
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

    #[test]
    fn tracking_sinad_reads_a_steady_tone_like_the_spectral_method() {
        // Without fading both readings measure the same tone over the same noise in (0, W]:
        // the block fit absorbs 3 of 960 samples' worth of noise (+0.014 dB), the spectral
        // reading weights the noise by a Hann window; they agree within 0.2 dB, about the
        // spread of two estimates of one 0.5 s noise power (common practice).
        let s = TrialSettings::default();
        let am = Detector::Receiver(Mode::Am);
        let mut receiver = am.build(&s.receiver_config()).unwrap();
        let iq = trial_input(&am, &s, 25.0, 5, 5).unwrap();
        let audio = process_to_vec(receiver.as_mut(), &iq);
        let rate = receiver.audio_rate();
        let tail = &audio[(s.settle_s * rate) as usize..];
        let spectral = snr_in_band_db(tail, rate, s.tone_hz, s.bandwidth_hz).unwrap();
        let tracked = tracking_sinad_db(tail, rate, s.tone_hz, 5000.0, TRACKING_BLOCK_S).unwrap();
        assert!((spectral - tracked).abs() < 0.2, "{spectral} vs {tracked}");
    }

    #[test]
    fn tracking_sinad_follows_a_slow_level_change_and_sees_distortion() {
        // A tone whose level swings ±20 % at 0.5 Hz (a slow fade) is read as clean (> 40 dB)
        // by the tracking fit; a 10 % second harmonic reads 20 dB (power ratio 1/0.01).
        let rate = 48_000.0;
        let w = std::f64::consts::TAU * 1000.0 / rate;
        let faded: Vec<f32> = (0..48_000)
            .map(|n| {
                let t = n as f64 / rate;
                ((1.0 + 0.2 * (std::f64::consts::TAU * 0.5 * t).sin()) * (w * n as f64).cos())
                    as f32
            })
            .collect();
        assert!(tracking_sinad_db(&faded, rate, 1000.0, 5000.0, TRACKING_BLOCK_S).unwrap() > 40.0);
        let distorted: Vec<f32> = (0..48_000)
            .map(|n| ((w * n as f64).cos() + 0.1 * (2.0 * w * n as f64).cos()) as f32)
            .collect();
        let sinad = tracking_sinad_db(&distorted, rate, 1000.0, 5000.0, TRACKING_BLOCK_S).unwrap();
        assert!((sinad - 20.0).abs() < 0.05, "{sinad}");
        assert!(tracking_sinad_db(&[0.0; 100], rate, 1000.0, 5000.0, 0.02).is_none());
    }
}

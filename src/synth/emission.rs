//! One emission of a scene: message(s), a modulator at a low message rate, an interpolator to
//! the recording rate and the shift to the carrier offset.
//!
//! The modulator runs at r_m = fs/D with D = ⌊fs/(5·E)⌋ (E = 1.2 × the emission's widest
//! envelope frequency, so each message's filter transitions fit); a polyphase interpolator by
//! D ([`RationalResampler`], passband E, stopband r_m − E where the first image begins, 90 dB)
//! brings it to fs, and a [`Mixer`] moves it to the offset. Everything is sample-exact however
//! the output is requested, so a scene gives the same file for any piece size.

use super::message::MessageSource;
use super::{
    AmModulator, DsbModulator, IsbModulator, NoiseMessage, Sideband, SsbModulator, ToneMessage,
    VsbModulator, WavMessage,
};
use crate::block::Block;
use crate::channel::{FrequencyOffset, HfCondition, PathSpec, PhaseNoise, WattersonChannel};
use crate::dsp::{design_lowpass, LowpassSpec, Mixer, RationalResampler};
use crate::{Complex32, Error, Result};
use serde::{Deserialize, Serialize};
use std::path::Path;

/// Message samples produced per refill at most (fewer for large interpolation factors, so
/// the interpolated piece stays near 64 Ki samples: bounded memory). Not [`crate::block::PIECE`]:
/// it counts samples at the message rate, before interpolation by up to 2^16.
const MESSAGE_PIECE: usize = 256;
/// Interpolator stopband attenuation, dB (images of the envelope; common practice, no source).
const IMAGE_ATTENUATION_DB: f64 = 90.0;
/// Largest interpolation factor (the resampler's limit).
const MAX_FACTOR: usize = 1 << 16;

/// The mode of an emission, as written in a scene file.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum ModeSpec {
    /// Full-carrier AM (A3E).
    Am,
    /// Double sideband, suppressed carrier.
    Dsb,
    /// Upper sideband (carrier per `carrier_db`).
    Usb,
    /// Lower sideband.
    Lsb,
    /// Independent sidebands: `lower_message` below, `message` above.
    Isb,
    /// Vestigial sideband with carrier.
    Vsb,
}

/// A message, as written in a scene file (`"type"` selects the kind).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "type", rename_all = "snake_case", deny_unknown_fields)]
pub enum MessageSpec {
    /// One tone of peak 1.
    Tone {
        /// Tone frequency, Hz.
        frequency_hz: f64,
    },
    /// Two tones of peak 1/2 each.
    TwoTone {
        /// First tone, Hz.
        f1_hz: f64,
        /// Second tone, Hz.
        f2_hz: f64,
    },
    /// Band-limited soft-limited noise ("speech-like programme"), see [`NoiseMessage`].
    Noise {
        /// Upper band edge W, Hz.
        bandwidth_hz: f64,
        /// Lower band edge, Hz (default 0.1·W).
        #[serde(default, skip_serializing_if = "Option::is_none")]
        low_hz: Option<f64>,
        /// Peak/RMS, linear, in [1.5, 5] (default 3).
        #[serde(default, skip_serializing_if = "Option::is_none")]
        crest_factor: Option<f64>,
    },
    /// Audio from a WAV file, see [`WavMessage`].
    Wav {
        /// The file; relative paths are taken from the scene file's folder.
        path: String,
        /// Upper band edge W, Hz (default 4000; must lie below 0.45 × the file's rate).
        #[serde(default, skip_serializing_if = "Option::is_none")]
        bandwidth_hz: Option<f64>,
        /// Lower band edge, Hz (default 100).
        #[serde(default, skip_serializing_if = "Option::is_none")]
        low_hz: Option<f64>,
    },
}

/// One emission, as written in a scene file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct EmissionSpec {
    /// Short label (SigMF `core:label`).
    pub label: String,
    /// Modulation.
    pub mode: ModeSpec,
    /// Carrier offset from the recording centre, Hz.
    pub offset_hz: f64,
    /// Level in dB re full scale: 20·log10(amplitude). Give this or `amplitude`.
    #[serde(default)]
    pub level_db: Option<f64>,
    /// Amplitude: the carrier amplitude for am/vsb, the peak sideband amplitude for a
    /// full-scale tone for dsb/usb/lsb/isb (per sideband for isb).
    #[serde(default)]
    pub amplitude: Option<f64>,
    /// Modulation index for am/vsb (default 0.5).
    #[serde(default)]
    pub mu: Option<f64>,
    /// Carrier level for usb/lsb/isb in dB re peak envelope power (absent: suppressed).
    #[serde(default)]
    pub carrier_db: Option<f64>,
    /// Vestige width for vsb, Hz (default 0.25·W).
    #[serde(default)]
    pub vestige_hz: Option<f64>,
    /// The message (the upper one for isb).
    pub message: MessageSpec,
    /// The lower message for isb.
    #[serde(default)]
    pub lower_message: Option<MessageSpec>,
    /// Start time, s (default 0).
    #[serde(default)]
    pub start_s: Option<f64>,
    /// Stop time, s (default: the end of the recording).
    #[serde(default)]
    pub stop_s: Option<f64>,
    /// The emission's own channel (oscillator errors and fading), absent: none.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub channel: Option<ChannelSpec>,
}

/// Longest fading delay accepted, ms (HF differential delays are a few ms; the generous
/// bound only keeps the delay line small: common practice, no source).
const MAX_FADING_DELAY_MS: f64 = 100.0;
/// Longest fading delay in samples (bounds the delay line's memory at high rates, 64 MiB;
/// common practice, no source).
const MAX_FADING_DELAY_SAMPLES: f64 = 4_194_304.0;
/// Most fading paths accepted (common practice, no source).
const MAX_FADING_PATHS: u32 = 8;
/// Largest Doppler spread as a fraction of the sample rate: the tap gain needs a rate of at
/// least 8σ = 4 × the spread (see [`crate::channel::TapGain`]); fs/16 leaves a margin of 4.
const MAX_SPREAD_PER_RATE: f64 = 1.0 / 16.0;

/// An emission's channel, as written in a scene file: the transmitter oscillator's frequency
/// error, drift and phase noise, then multipath fading, applied to that emission alone before
/// it is summed into the scene (each emission has its own path to the receiver).
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ChannelSpec {
    /// Carrier frequency error added to `offset_hz`, Hz.
    #[serde(default)]
    pub offset_hz: f64,
    /// Linear carrier drift from the emission's start, Hz/s.
    #[serde(default)]
    pub drift_hz_per_s: f64,
    /// Wiener phase noise of this −3 dB (Lorentzian) linewidth, Hz; 0 ≤ Δν < sample rate.
    #[serde(default)]
    pub phase_noise_linewidth_hz: f64,
    /// Watterson fading: a condition name or explicit paths.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub fading: Option<FadingSpec>,
    /// Seed of the phase noise and fading (default: from the scene seed and the emission's
    /// index).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub seed: Option<u64>,
}

/// Fading as written: `"moderate"` (any [`HfCondition::parse`] name) or
/// `{"delay_ms": .., "doppler_spread_hz": .., "paths": ..}`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(untagged, try_from = "serde_json::Value")]
pub enum FadingSpec {
    /// A standard condition by name (checked when the scene is checked).
    Condition(String),
    /// Equal-power paths spread evenly over a delay.
    Paths(FadingPaths),
}

/// Explicit fading: `paths` equal-power Rayleigh paths (power 1/paths each, so the mean power
/// gain is 1), path k delayed by k·delay/(paths − 1), each of Gaussian Doppler spread
/// `doppler_spread_hz` (2σ). One path is flat fading.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FadingPaths {
    /// Delay between the first and the last path, ms (0 ..= 100).
    pub delay_ms: f64,
    /// Doppler spread 2σ of every path, Hz (0: fixed paths; at most fs/16).
    pub doppler_spread_hz: f64,
    /// Number of paths (1 ..= 8, default 2).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub paths: Option<u32>,
}

impl TryFrom<serde_json::Value> for FadingSpec {
    type Error = String;

    fn try_from(v: serde_json::Value) -> std::result::Result<Self, String> {
        match v {
            serde_json::Value::String(name) => Ok(FadingSpec::Condition(name)),
            v @ serde_json::Value::Object(_) => serde_json::from_value(v)
                .map(FadingSpec::Paths)
                .map_err(|e| format!("channel.fading: {e}")),
            other => Err(format!(
                "channel.fading: {other} is neither a condition name nor \
                 {{\"delay_ms\", \"doppler_spread_hz\", \"paths\"}}"
            )),
        }
    }
}

impl FadingSpec {
    /// The paths and a short description, e.g. `moderate (1 ms, 0.5 Hz)`; an error (naming
    /// the field below `fading`) for an unknown condition or values out of range.
    pub fn resolve(
        &self,
        sample_rate: f64,
    ) -> std::result::Result<(Vec<PathSpec>, String), String> {
        let (paths, text) = match self {
            FadingSpec::Condition(name) => {
                let c = HfCondition::parse(name).ok_or_else(|| {
                    let names: Vec<&str> = HfCondition::ALL.iter().map(|c| c.name()).collect();
                    format!("fading: unknown condition '{name}' ({})", names.join(", "))
                })?;
                let (delay, spread) = c.delay_and_spread();
                let text = format!("{name} ({} ms, {spread} Hz)", delay * 1e3);
                (c.paths().to_vec(), text)
            }
            FadingSpec::Paths(p) => {
                let count = p.paths.unwrap_or(2);
                if !(p.delay_ms.is_finite() && (0.0..=MAX_FADING_DELAY_MS).contains(&p.delay_ms)) {
                    return Err(format!(
                        "fading.delay_ms: {} must lie in 0 ..= {MAX_FADING_DELAY_MS} ms",
                        p.delay_ms
                    ));
                }
                if !(1..=MAX_FADING_PATHS).contains(&count) {
                    return Err(format!(
                        "fading.paths: {count} must lie in 1 ..= {MAX_FADING_PATHS}"
                    ));
                }
                let paths = (0..count)
                    .map(|k| PathSpec {
                        delay_s: if count > 1 {
                            1e-3 * p.delay_ms * f64::from(k) / f64::from(count - 1)
                        } else {
                            0.0
                        },
                        power: 1.0 / f64::from(count),
                        spread_hz: p.doppler_spread_hz,
                        shift_hz: 0.0,
                    })
                    .collect();
                let text = if count == 1 {
                    format!("1 path (flat), {} Hz", p.doppler_spread_hz)
                } else {
                    format!(
                        "{count} paths over {} ms, {} Hz",
                        p.delay_ms, p.doppler_spread_hz
                    )
                };
                (paths, text)
            }
        };
        let limit = MAX_SPREAD_PER_RATE * sample_rate;
        for path in &paths {
            if path.delay_s * sample_rate > MAX_FADING_DELAY_SAMPLES {
                return Err(format!(
                    "fading: a delay of {} s is {} samples at {sample_rate} Hz, more than 2^22",
                    path.delay_s,
                    (path.delay_s * sample_rate).round()
                ));
            }
            if !(path.spread_hz.is_finite() && (0.0..=limit).contains(&path.spread_hz)) {
                return Err(format!(
                    "fading.doppler_spread_hz: {} must lie in 0 ..= fs/16 = {limit} Hz",
                    path.spread_hz
                ));
            }
        }
        Ok((paths, text))
    }
}

impl ChannelSpec {
    /// Checks every value at `sample_rate`; the error names the field below `channel`.
    pub fn check(&self, sample_rate: f64) -> std::result::Result<(), String> {
        for (name, v) in [
            ("offset_hz", self.offset_hz),
            ("drift_hz_per_s", self.drift_hz_per_s),
        ] {
            if !v.is_finite() {
                return Err(format!("{name}: {v} must be finite"));
            }
        }
        let lw = self.phase_noise_linewidth_hz;
        if !(lw.is_finite() && lw >= 0.0 && lw < sample_rate) {
            return Err(format!(
                "phase_noise_linewidth_hz: {lw} must be finite, ≥ 0 and below the sample rate {sample_rate} Hz"
            ));
        }
        if let Some(f) = &self.fading {
            f.resolve(sample_rate)?;
        }
        Ok(())
    }

    /// The carrier's extra offset over an active time of `active_s` seconds:
    /// (lowest, highest) of offset + drift·t, t ∈ [0, active_s].
    pub fn offset_range_hz(&self, active_s: f64) -> (f64, f64) {
        let end = self.offset_hz + self.drift_hz_per_s * active_s;
        (self.offset_hz.min(end), self.offset_hz.max(end))
    }

    /// A short description for annotations, e.g.
    /// `offset 3 Hz, drift 2 Hz/s, phase noise 1 Hz, fading moderate (1 ms, 0.5 Hz)`
    /// (empty for a channel with no effect).
    pub fn describe(&self, sample_rate: f64) -> String {
        let mut parts = Vec::new();
        if self.offset_hz != 0.0 {
            parts.push(format!("offset {} Hz", self.offset_hz));
        }
        if self.drift_hz_per_s != 0.0 {
            parts.push(format!("drift {} Hz/s", self.drift_hz_per_s));
        }
        if self.phase_noise_linewidth_hz > 0.0 {
            parts.push(format!("phase noise {} Hz", self.phase_noise_linewidth_hz));
        }
        if let Some(Ok((_, text))) = self.fading.as_ref().map(|f| f.resolve(sample_rate)) {
            parts.push(format!("fading {text}"));
        }
        parts.join(", ")
    }
}

/// SplitMix64's output function (S. Vigna, "Further scramblings of Marsaglia's xorshift
/// generators", 2017; the finaliser of `splitmix64.c`): decorrelates derived seeds.
fn mix_seed(x: u64) -> u64 {
    let mut z = x.wrapping_add(0x9e37_79b9_7f4a_7c15);
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    z ^ (z >> 31)
}

/// The blocks of an emission's channel, in the order a signal meets them: the transmitter's
/// frequency error and drift, its phase noise, then the multipath fading.
struct ChannelChain {
    offset: Option<FrequencyOffset>,
    phase_noise: Option<PhaseNoise>,
    fading: Option<WattersonChannel>,
}

impl ChannelChain {
    fn new(spec: &ChannelSpec, fs: f64, emission_seed: u64) -> Result<Self> {
        spec.check(fs)
            .map_err(|e| Error::parameter("channel", "", e))?;
        let seed = spec
            .seed
            .unwrap_or_else(|| mix_seed(emission_seed ^ 0x6368_616e_6e65_6c00));
        let offset = (spec.offset_hz != 0.0 || spec.drift_hz_per_s != 0.0)
            .then(|| FrequencyOffset::new(spec.offset_hz, spec.drift_hz_per_s, fs))
            .transpose()?;
        let phase_noise = (spec.phase_noise_linewidth_hz > 0.0)
            .then(|| PhaseNoise::new(spec.phase_noise_linewidth_hz, fs, mix_seed(seed ^ 1)))
            .transpose()?;
        let fading = match &spec.fading {
            Some(f) => {
                let (paths, _) = f
                    .resolve(fs)
                    .map_err(|e| Error::parameter("channel", "", e))?;
                Some(WattersonChannel::new(&paths, fs, mix_seed(seed ^ 2))?)
            }
            None => None,
        };
        Ok(ChannelChain {
            offset,
            phase_noise,
            fading,
        })
    }

    /// Passes `signal` through every block, using `scratch` (at least as long) in between.
    fn apply(&mut self, signal: &mut [Complex32], scratch: &mut [Complex32]) {
        let n = signal.len();
        let scratch = &mut scratch[..n];
        let blocks: [Option<&mut dyn Block<Input = Complex32, Output = Complex32>>; 3] = [
            self.offset.as_mut().map(|b| b as _),
            self.phase_noise.as_mut().map(|b| b as _),
            self.fading.as_mut().map(|b| b as _),
        ];
        for block in blocks.into_iter().flatten() {
            block.process(signal, scratch);
            signal.copy_from_slice(scratch);
        }
    }
}

enum Modulator {
    Am(AmModulator),
    Dsb(DsbModulator),
    Ssb(SsbModulator),
    Isb(IsbModulator),
    Vsb(VsbModulator),
}

/// A running emission: adds its samples into a scene.
pub struct Emission {
    label: String,
    start: u64,
    stop: u64,
    position: u64,
    message: Box<dyn MessageSource>,
    lower_message: Option<Box<dyn MessageSource>>,
    modulator: Modulator,
    interpolator: Option<RationalResampler<Complex32>>,
    mixer: Mixer,
    channel: Option<ChannelChain>,
    piece: usize,
    message_buf: Vec<f64>,
    lower_buf: Vec<f64>,
    real_buf: Vec<f32>,
    pair_buf: Vec<[f32; 2]>,
    envelope: Vec<Complex32>,
    interpolated: Vec<Complex32>,
    pending: Vec<Complex32>,
    at: usize,
    ready: usize,
    edges: (f64, f64),
    carrier_power: f64,
    mean_power: f64,
    message_bandwidth: f64,
    message_rate: f64,
}

impl std::fmt::Debug for Emission {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Emission")
            .field("label", &self.label)
            .field("edges", &self.edges)
            .finish_non_exhaustive()
    }
}

/// The message's band: given for tones and noise, and for WAV files from the spec.
fn spec_band(spec: &MessageSpec) -> (f64, f64) {
    match spec {
        MessageSpec::Tone { frequency_hz } => (*frequency_hz, *frequency_hz),
        MessageSpec::TwoTone { f1_hz, f2_hz } => (f1_hz.min(*f2_hz), f1_hz.max(*f2_hz)),
        MessageSpec::Noise {
            bandwidth_hz,
            low_hz,
            ..
        } => (low_hz.unwrap_or(0.1 * bandwidth_hz), *bandwidth_hz),
        MessageSpec::Wav {
            bandwidth_hz,
            low_hz,
            ..
        } => (low_hz.unwrap_or(100.0), bandwidth_hz.unwrap_or(4000.0)),
    }
}

fn build_message(
    spec: &MessageSpec,
    rate: f64,
    seed: u64,
    base_dir: &Path,
) -> Result<Box<dyn MessageSource>> {
    let (low, high) = spec_band(spec);
    Ok(match spec {
        MessageSpec::Tone { frequency_hz } => Box::new(ToneMessage::single(*frequency_hz, rate)?),
        MessageSpec::TwoTone { f1_hz, f2_hz } => {
            Box::new(ToneMessage::two_tone(*f1_hz, *f2_hz, rate)?)
        }
        MessageSpec::Noise { crest_factor, .. } => Box::new(NoiseMessage::new(
            low,
            high,
            crest_factor.unwrap_or(3.0),
            rate,
            seed,
        )?),
        MessageSpec::Wav { path, .. } => {
            Box::new(WavMessage::open(&base_dir.join(path), low, high, rate)?)
        }
    })
}

/// Checks a finite, positive value.
fn positive(name: &'static str, v: f64) -> Result<f64> {
    if v.is_finite() && v > 0.0 {
        Ok(v)
    } else {
        Err(Error::parameter(name, v, "must be positive and finite"))
    }
}

impl EmissionSpec {
    /// The amplitude from `amplitude` or `level_db` (exactly one must be given).
    pub fn amplitude_value(&self) -> Result<f64> {
        match (self.amplitude, self.level_db) {
            (Some(a), None) if a.is_finite() && a >= 0.0 => Ok(a),
            (None, Some(db)) if db.is_finite() => Ok(10f64.powf(db / 20.0)),
            (Some(_), Some(_)) => Err(Error::parameter(
                "amplitude",
                "amplitude and level_db",
                "give only one",
            )),
            (None, None) => Err(Error::parameter(
                "amplitude",
                "none",
                "give amplitude or level_db",
            )),
            (Some(a), None) => Err(Error::parameter("amplitude", a, "must be finite and ≥ 0")),
            (None, Some(db)) => Err(Error::parameter("level_db", db, "must be finite")),
        }
    }

    /// The occupied band relative to the carrier, (lower, upper) Hz, from the message bands
    /// (am/dsb ±W, usb 0..W, lsb −W..0, isb −W_L..W_U, vsb −f_v..W).
    pub fn edges_hz(&self) -> Result<(f64, f64)> {
        let (_, w) = spec_band(&self.message);
        positive("message bandwidth", w)?;
        Ok(match self.mode {
            ModeSpec::Am | ModeSpec::Dsb => (-w, w),
            ModeSpec::Usb => (0.0, w),
            ModeSpec::Lsb => (-w, 0.0),
            ModeSpec::Isb => {
                let lower = self.lower_message.as_ref().ok_or_else(|| {
                    Error::parameter("lower_message", "none", "isb needs a lower_message")
                })?;
                (-positive("lower message bandwidth", spec_band(lower).1)?, w)
            }
            ModeSpec::Vsb => (-self.vestige(w)?, w),
        })
    }

    fn vestige(&self, w: f64) -> Result<f64> {
        positive("vestige_hz", self.vestige_hz.unwrap_or(0.25 * w))
    }
}

impl Emission {
    /// Builds the emission for a recording at `sample_rate`, starting at sample 0 of it;
    /// `duration` samples bound an open stop time; WAV paths are taken relative to `base_dir`.
    pub fn new(
        spec: &EmissionSpec,
        sample_rate: f64,
        duration: u64,
        seed: u64,
        base_dir: &Path,
    ) -> Result<Self> {
        let fs = positive("sample_rate", sample_rate)?;
        let edges = spec.edges_hz()?;
        let offset = spec.offset_hz;
        if !(offset.is_finite() && offset + edges.0 >= -fs / 2.0 && offset + edges.1 <= fs / 2.0) {
            return Err(Error::parameter(
                "offset_hz",
                offset,
                format!(
                    "the emission spans {}..{} Hz, beyond ±{} Hz (half the rate)",
                    offset + edges.0,
                    offset + edges.1,
                    fs / 2.0
                ),
            ));
        }
        let reach = 1.2 * edges.0.abs().max(edges.1);
        let factor = ((fs / (5.0 * reach)).floor() as usize).clamp(1, MAX_FACTOR);
        let rate = fs / factor as f64;
        let a = spec.amplitude_value()?;
        let message = build_message(&spec.message, rate, seed, base_dir)?;
        let lower_message = match (&spec.lower_message, spec.mode) {
            (Some(m), ModeSpec::Isb) => Some(build_message(m, rate, seed ^ 0x5bd1_e995, base_dir)?),
            (Some(_), _) => {
                return Err(Error::parameter(
                    "lower_message",
                    "given",
                    "only isb takes a lower_message",
                ))
            }
            (None, _) => None,
        };
        let hilbert_low = |m: &dyn MessageSource| -> Result<f64> {
            let low = m.band_hz().0;
            if low > 0.0 {
                Ok(0.5 * low)
            } else {
                Err(Error::parameter(
                    "message low edge",
                    low,
                    "sideband modes need a message low edge above 0 Hz",
                ))
            }
        };
        let mu = spec.mu.unwrap_or(0.5);
        let p = message.mean_square();
        let w = message.band_hz().1;
        let (modulator, carrier_power, mean_power) = match spec.mode {
            ModeSpec::Am => (
                Modulator::Am(AmModulator::new(a, mu, 0.0, rate)?),
                a * a,
                a * a * (1.0 + mu * mu * p),
            ),
            ModeSpec::Dsb => (
                Modulator::Dsb(DsbModulator::new(a, 0.0, rate)?),
                0.0,
                a * a * p,
            ),
            ModeSpec::Usb | ModeSpec::Lsb => {
                let side = if spec.mode == ModeSpec::Usb {
                    Sideband::Upper
                } else {
                    Sideband::Lower
                };
                let m = SsbModulator::new(
                    side,
                    a,
                    spec.carrier_db,
                    hilbert_low(message.as_ref())?,
                    0.0,
                    rate,
                )?;
                let c = m.carrier_amplitude().powi(2);
                (Modulator::Ssb(m), c, c + 2.0 * a * a * p)
            }
            ModeSpec::Isb => {
                let lower = lower_message.as_deref().ok_or_else(|| {
                    Error::parameter("lower_message", "none", "isb needs a lower_message")
                })?;
                let low = hilbert_low(message.as_ref())?.min(hilbert_low(lower)?);
                let m = IsbModulator::new(a, spec.carrier_db, low, 0.0, rate)?;
                let c = m.carrier_amplitude().powi(2);
                (
                    Modulator::Isb(m),
                    c,
                    c + 2.0 * a * a * (p + lower.mean_square()),
                )
            }
            ModeSpec::Vsb => {
                let m = VsbModulator::new(a, mu, spec.vestige(w)?, w, 0.0, rate)?;
                // Message power taken as all above the vestige (2H = 2 there): approximate.
                (Modulator::Vsb(m), a * a, a * a * (1.0 + 2.0 * mu * mu * p))
            }
        };
        let interpolator = if factor > 1 {
            let taps = design_lowpass(&LowpassSpec {
                passband_hz: reach,
                stopband_hz: rate - reach,
                attenuation_db: IMAGE_ATTENUATION_DB,
                sample_rate: fs,
            })?;
            Some(RationalResampler::new(factor, 1, &taps)?)
        } else {
            None
        };
        let piece = (MAX_FACTOR / factor).clamp(1, MESSAGE_PIECE);
        let interpolated_len = interpolator
            .as_ref()
            .map_or(piece, |r| r.max_output_len(piece));
        let (start, stop) = gate(spec, fs, duration)?;
        Ok(Emission {
            label: spec.label.clone(),
            start,
            stop,
            position: 0,
            message,
            lower_message,
            modulator,
            interpolator,
            mixer: Mixer::new(offset, fs)?,
            channel: spec
                .channel
                .as_ref()
                .map(|c| ChannelChain::new(c, fs, seed))
                .transpose()?,
            piece,
            message_buf: vec![0.0; piece],
            lower_buf: vec![0.0; piece],
            real_buf: vec![0.0; piece],
            pair_buf: vec![[0.0; 2]; piece],
            envelope: vec![Complex32::default(); piece],
            interpolated: vec![Complex32::default(); interpolated_len],
            pending: vec![Complex32::default(); interpolated_len],
            at: 0,
            ready: 0,
            edges,
            carrier_power,
            mean_power,
            message_bandwidth: w.max(lower_message_w(&spec.lower_message)),
            message_rate: rate,
        })
    }

    /// The label.
    pub fn label(&self) -> &str {
        &self.label
    }

    /// Active samples [start, stop) of the recording.
    pub fn active(&self) -> (u64, u64) {
        (self.start, self.stop)
    }

    /// Occupied band relative to the carrier (lower, upper) in Hz.
    pub fn edges_hz(&self) -> (f64, f64) {
        self.edges
    }

    /// Carrier power A_c² (0 without a carrier).
    pub fn carrier_power(&self) -> f64 {
        self.carrier_power
    }

    /// Mean power E|s|² while active, from the message's mean square (exact for am, dsb,
    /// usb/lsb, isb; for vsb it counts all message power as above the vestige).
    pub fn mean_power(&self) -> f64 {
        self.mean_power
    }

    /// The message bandwidth W (the larger of the two for isb), Hz.
    pub fn message_bandwidth(&self) -> f64 {
        self.message_bandwidth
    }

    /// The rate the modulator runs at, Hz.
    pub fn message_rate(&self) -> f64 {
        self.message_rate
    }

    /// Adds the next `out.len()` samples of the emission into `out` (zero while inactive).
    pub fn add_to(&mut self, out: &mut [Complex32]) {
        let begin = self.position;
        let end = begin + out.len() as u64;
        self.position = end;
        let from = self.start.clamp(begin, end);
        let to = self.stop.clamp(begin, end);
        for o in &mut out[(from - begin) as usize..(to - begin) as usize] {
            if self.at == self.ready {
                self.refill();
            }
            *o += self.pending[self.at];
            self.at += 1;
        }
    }

    fn refill(&mut self) {
        let k = self.piece;
        self.message.fill(&mut self.message_buf[..k]);
        for (r, m) in self.real_buf.iter_mut().zip(&self.message_buf) {
            *r = *m as f32;
        }
        let env = &mut self.envelope[..k];
        match &mut self.modulator {
            Modulator::Am(m) => m.process(&self.real_buf, env),
            Modulator::Dsb(m) => m.process(&self.real_buf, env),
            Modulator::Ssb(m) => m.process(&self.real_buf, env),
            Modulator::Vsb(m) => m.process(&self.real_buf, env),
            Modulator::Isb(m) => {
                if let Some(lower) = self.lower_message.as_mut() {
                    lower.fill(&mut self.lower_buf[..k]);
                }
                for ((pair, u), l) in self
                    .pair_buf
                    .iter_mut()
                    .zip(&self.message_buf)
                    .zip(&self.lower_buf)
                {
                    *pair = [*l as f32, *u as f32];
                }
                m.process(&self.pair_buf, env)
            }
        };
        let produced = match &mut self.interpolator {
            Some(r) => r.process(&self.envelope[..k], &mut self.interpolated).1,
            None => {
                self.interpolated[..k].copy_from_slice(&self.envelope[..k]);
                k
            }
        };
        self.mixer.process(
            &self.interpolated[..produced],
            &mut self.pending[..produced],
        );
        if let Some(channel) = &mut self.channel {
            channel.apply(&mut self.pending[..produced], &mut self.interpolated);
        }
        self.at = 0;
        self.ready = produced;
    }
}

fn lower_message_w(spec: &Option<MessageSpec>) -> f64 {
    spec.as_ref().map_or(0.0, |m| spec_band(m).1)
}

/// Start and stop samples from the spec's times (stop clamped to the recording).
fn gate(spec: &EmissionSpec, fs: f64, duration: u64) -> Result<(u64, u64)> {
    let start_s = spec.start_s.unwrap_or(0.0);
    if !(start_s.is_finite() && start_s >= 0.0) {
        return Err(Error::parameter(
            "start_s",
            start_s,
            "must be finite and ≥ 0",
        ));
    }
    let start = ((start_s * fs).round() as u64).min(duration);
    let stop = match spec.stop_s {
        None => duration,
        Some(s) if s.is_finite() && s > start_s => ((s * fs).round() as u64).min(duration),
        Some(s) => {
            return Err(Error::parameter(
                "stop_s",
                s,
                "must be finite and after start_s",
            ))
        }
    };
    Ok((start, stop))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn spec(json: &str) -> EmissionSpec {
        serde_json::from_str(json).unwrap()
    }

    #[test]
    fn same_samples_for_any_piece_size() {
        let s = spec(
            r#"{"label":"x","mode":"usb","offset_hz":-30000,"amplitude":0.3,"carrier_db":-16,
            "message":{"type":"noise","bandwidth_hz":3000,"crest_factor":3},"start_s":0.01,"stop_s":0.09}"#,
        );
        let fs = 240e3;
        let make = || Emission::new(&s, fs, 24_000, 7, Path::new(".")).unwrap();
        let mut whole = vec![Complex32::default(); 24_000];
        make().add_to(&mut whole);
        let mut e = make();
        let mut pieces = vec![Complex32::default(); 24_000];
        let mut at = 0;
        for n in [1usize, 7, 1024, 5000, 3, 17_000].iter().cycle() {
            if at >= pieces.len() {
                break;
            }
            let n = (*n).min(pieces.len() - at);
            e.add_to(&mut pieces[at..at + n]);
            at += n;
        }
        assert_eq!(whole, pieces);
        assert!(whole[..2400].iter().all(|z| *z == Complex32::default()));
        assert!(whole[21_600..].iter().all(|z| *z == Complex32::default()));
        assert!(whole[5000].norm() > 0.0);
    }

    #[test]
    fn interpolated_tone_am_is_the_closed_form() {
        // Through the low-rate path (D = 40) the AM tone must still equal
        // A_c(1 + μ cos 2πf_m t)e^{j2πf_c t}; the interpolator's 90 dB images and passband
        // ripple (≈ 3e-5) and its group delay are allowed for.
        let s = spec(
            r#"{"label":"a","mode":"am","offset_hz":12345.6,"amplitude":0.4,"mu":0.7,"message":{"type":"tone","frequency_hz":1000}}"#,
        );
        let fs = 240e3;
        let mut e = Emission::new(&s, fs, 48_000, 1, Path::new(".")).unwrap();
        let mut z = vec![Complex32::default(); 48_000];
        e.add_to(&mut z);
        let factor = (fs / e.message_rate()).round();
        let delay = e.interpolator.as_ref().unwrap().delay() * factor; // output samples
        let tau = std::f64::consts::TAU;
        let mut worst = 0.0f64;
        for (n, v) in z.iter().enumerate().skip(10_000) {
            let t = n as f64 / fs;
            let td = (n as f64 - delay) / fs;
            let want = num_complex::Complex64::from_polar(
                0.4 * (1.0 + 0.7 * (tau * 1000.0 * td).cos()),
                tau * 12345.6 * t,
            );
            worst = worst
                .max((num_complex::Complex64::new(f64::from(v.re), f64::from(v.im)) - want).norm());
        }
        eprintln!("interpolated AM worst error {worst:.2e}");
        assert!(worst < 1e-3, "{worst}");
    }

    #[test]
    fn fading_resolves_to_paths_and_describes_itself() {
        let c: ChannelSpec = serde_json::from_str(
            r#"{"drift_hz_per_s":2,"fading":{"delay_ms":1.5,"doppler_spread_hz":2,"paths":3}}"#,
        )
        .unwrap();
        let (paths, _) = c.fading.as_ref().unwrap().resolve(48e3).unwrap();
        let delays: Vec<f64> = paths.iter().map(|p| p.delay_s).collect();
        assert_eq!(delays, vec![0.0, 0.75e-3, 1.5e-3]);
        assert!(paths
            .iter()
            .all(|p| p.power == 1.0 / 3.0 && p.spread_hz == 2.0));
        assert_eq!(
            c.describe(48e3),
            "drift 2 Hz/s, fading 3 paths over 1.5 ms, 2 Hz"
        );
        assert_eq!(c.offset_range_hz(4.0), (0.0, 8.0));
        let named = FadingSpec::Condition("moderate".into());
        let (paths, text) = named.resolve(48e3).unwrap();
        assert_eq!(paths, HfCondition::Moderate.paths().to_vec());
        assert_eq!(text, "moderate (1 ms, 0.5 Hz)");
        // 7 ms at 1 GHz is 7·10⁶ samples: refused before the delay line is allocated.
        let nvis = FadingSpec::Condition("mid-latitude-disturbed-nvis".into());
        assert!(nvis.resolve(1e9).unwrap_err().contains("2^22"));
        let flat: FadingSpec =
            serde_json::from_str(r#"{"delay_ms":0,"doppler_spread_hz":1,"paths":1}"#).unwrap();
        assert_eq!(flat.resolve(8e3).unwrap().0.len(), 1);
    }

    #[test]
    fn rejects_emissions_outside_the_band() {
        let s = spec(
            r#"{"label":"a","mode":"am","offset_hz":118000,"amplitude":0.4,"message":{"type":"tone","frequency_hz":3000}}"#,
        );
        assert!(Emission::new(&s, 240e3, 1000, 1, Path::new(".")).is_err());
        let s = spec(
            r#"{"label":"a","mode":"usb","offset_hz":-120000,"amplitude":0.4,"message":{"type":"tone","frequency_hz":3000}}"#,
        );
        assert!(Emission::new(&s, 240e3, 1000, 1, Path::new(".")).is_ok());
        let s = spec(
            r#"{"label":"a","mode":"am","offset_hz":0,"amplitude":0.4,"mu":-1,"message":{"type":"tone","frequency_hz":3000}}"#,
        );
        assert!(Emission::new(&s, 240e3, 1000, 1, Path::new(".")).is_err());
    }
}

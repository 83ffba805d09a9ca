//! Scenes: a JSON description of a recording (emissions, their channels, noise, front-end
//! impairments) and the generator that produces it in pieces.
//!
//! # Schema
//! ```json
//! {
//!   "sample_rate": 240000,            // Hz, required
//!   "centre_frequency": 7100000,      // Hz, required (absolute edges in annotations use it)
//!   "duration_s": 2.0,                // required, > 0
//!   "datatype": "ci16_le",            // SigMF datatype, default "cf32_le"
//!   "seed": 1,                        // default 1; every random process derives from it
//!   "description": "...",             // optional, SigMF core:description
//!   "noise": { "cnr_db": 30, "reference": "LABEL" }   // or
//!            { "snr_db": 20, "reference": "LABEL" }   // channel SNR of that emission, or
//!            { "density_db_hz": -90 },                // N0 in dB re full scale²/Hz
//!                                                      // (absent: no noise)
//!   "impulse_noise": { "rate_hz": 20, "duration_s": 0.002, "power_db": -20, "seed": 5 },
//!   "impairments": { "dc_i": 0.01, "dc_q": -0.01, "gain_db": 0.3, "phase_deg": 1.0 },
//!   "emissions": [ EmissionSpec, ... ]               // see EmissionSpec
//! }
//! ```
//! (comments are not allowed in the file; they explain the fields here.) CNR and channel SNR
//! follow the definitions of [`crate::channel::snr`] with W the reference's message bandwidth
//! and the reference's unfaded (mean) power.
//! Emission fields: `label`, `mode` (am|dsb|usb|lsb|isb|vsb), `offset_hz`, `level_db` or
//! `amplitude`, `mu` (am, vsb), `carrier_db` (usb, lsb, isb), `vestige_hz` (vsb), `message`
//! (`{"type":"tone","frequency_hz":..}`, `{"type":"two_tone","f1_hz":..,"f2_hz":..}`,
//! `{"type":"noise","bandwidth_hz":..,"low_hz":..,"crest_factor":..}`,
//! `{"type":"wav","path":..,"bandwidth_hz":..,"low_hz":..}`), `lower_message` (isb),
//! `start_s`, `stop_s`, `channel`.
//! A noise message's band edges get transitions of min(0.15·`bandwidth_hz`, `low_hz`/2)
//! (`low_hz` defaults to 0.1·`bandwidth_hz`), and its band-pass may be at most
//! [`MAX_NOISE_TAPS`](super::noise_message::MAX_NOISE_TAPS) taps long at the emission's
//! message rate (about 5× its widest edge): a band narrower than about 1/47 of that rate is
//! refused, the error naming the smallest `bandwidth_hz` (or `low_hz`) accepted.
//!
//! # Channel of an emission
//! ```json
//! "channel": { "offset_hz": 3.5, "drift_hz_per_s": 2.0, "phase_noise_linewidth_hz": 1.0,
//!              "fading": "moderate", "seed": 9 }
//! ```
//! Every key is optional ([`ChannelSpec`](super::emission::ChannelSpec)). The emission's
//! signal passes, in this order, a carrier frequency error `offset_hz` (added to the
//! emission's `offset_hz`) drifting linearly by `drift_hz_per_s` from the emission's start
//! ([`FrequencyOffset`](crate::channel::FrequencyOffset)), Wiener phase noise of −3 dB
//! linewidth `phase_noise_linewidth_hz` (0 ≤ Δν < sample rate;
//! [`PhaseNoise`](crate::channel::PhaseNoise)), and Watterson fading
//! ([`WattersonChannel`](crate::channel::WattersonChannel)) of mean power gain 1: `fading`
//! is a condition name (`good`, `moderate`, `poor`, `flutter` or any other
//! [`HfCondition::parse`](crate::channel::HfCondition::parse) name) or
//! `{"delay_ms": 1.5, "doppler_spread_hz": 2, "paths": 3}` (equal-power paths spread evenly
//! over the delay, default 2 paths, see [`FadingPaths`](super::emission::FadingPaths)). Each
//! emission has its own channel, applied before the emissions are summed. `seed` defaults to
//! one derived from the scene seed and the emission's index, so a scene always gives the
//! same file. The drifting carrier must keep the emission inside ±fs/2 while it is active.
//!
//! # Impulse noise
//! `impulse_noise` adds Poisson bursts ([`ImpulseNoise`]):
//! `rate_hz` bursts per second (≥ 0, below the sample rate), each `duration_s` long (> 0,
//! rounded to at least one sample, at most the scene's duration), of complex Gaussian noise of
//! power `power_db` in dB re full scale² (E|w|² during a burst; absolute, so it works in a
//! scene without noise), after the emissions and the white noise are summed and before the
//! front-end `impairments`. A sample lies in a burst with probability 1 − e^(−rate·duration).
//! `seed` defaults to one derived from the scene seed.

use super::{Emission, EmissionSpec};
use crate::block::Block;
use crate::channel::snr::{n0_from_cnr, n0_from_snr};
use crate::channel::ImpulseNoise;
use crate::channel::IqImpairment;
use crate::dsp::ComplexNoise;
use crate::io::SampleFormat;
use crate::{Complex32, Error, Result};
use serde::{Deserialize, Serialize};
use std::path::{Path, PathBuf};

/// Samples passed through the impulse-noise block per step (its scratch buffer).
const IMPULSE_STEP: usize = 4096;

/// Longest scene accepted, in samples (2⁴⁰, far beyond any test; common practice, no source).
const MAX_SAMPLES: f64 = 1_099_511_627_776.0;

/// How the scene's white noise is set.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct NoiseSpec {
    /// Carrier-to-noise ratio of the reference emission, dB.
    #[serde(default)]
    pub cnr_db: Option<f64>,
    /// Channel SNR of the reference emission, dB.
    #[serde(default)]
    pub snr_db: Option<f64>,
    /// Two-sided density N0 in dB re full scale²/Hz.
    #[serde(default)]
    pub density_db_hz: Option<f64>,
    /// Label of the reference emission (for cnr_db or snr_db).
    #[serde(default)]
    pub reference: Option<String>,
}

/// A direct-conversion front end's DC offset and IQ imbalance (see [`IqImpairment`]).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ImpairmentSpec {
    /// DC added to I.
    #[serde(default)]
    pub dc_i: f64,
    /// DC added to Q.
    #[serde(default)]
    pub dc_q: f64,
    /// Q gain relative to I, dB.
    #[serde(default)]
    pub gain_db: f64,
    /// Q phase error from quadrature, degrees.
    #[serde(default)]
    pub phase_deg: f64,
}

/// Poisson bursts of Gaussian noise added after the sum (see the module docs).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ImpulseNoiseSpec {
    /// Mean burst rate λ, bursts per second.
    pub rate_hz: f64,
    /// Burst length T, s (rounded to at least one sample).
    pub duration_s: f64,
    /// Burst power E|w|² in dB re full scale².
    pub power_db: f64,
    /// Seed (default: derived from the scene seed).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub seed: Option<u64>,
}

/// A scene file's contents (see the module docs for the schema).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Scene {
    /// Sample rate, Hz.
    pub sample_rate: f64,
    /// Centre frequency of the recording, Hz.
    pub centre_frequency: f64,
    /// Length, s.
    pub duration_s: f64,
    /// SigMF datatype name (default `cf32_le`).
    #[serde(default)]
    pub datatype: Option<String>,
    /// Master seed (default 1).
    #[serde(default)]
    pub seed: Option<u64>,
    /// Free-text description.
    #[serde(default)]
    pub description: Option<String>,
    /// White noise.
    #[serde(default)]
    pub noise: Option<NoiseSpec>,
    /// Impulse noise, added after the sum and the white noise.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub impulse_noise: Option<ImpulseNoiseSpec>,
    /// Front-end impairments, applied after the noise.
    #[serde(default)]
    pub impairments: Option<ImpairmentSpec>,
    /// The emissions.
    pub emissions: Vec<EmissionSpec>,
}

impl Scene {
    /// Reads and checks a scene file; every problem is an [`Error::InvalidFile`] naming the
    /// file and the field.
    pub fn load(path: &Path) -> Result<Self> {
        let text = std::fs::read_to_string(path).map_err(|e| Error::io(path, e))?;
        Self::parse(&text, path)
    }

    /// Parses and checks scene JSON; `origin` names it in errors.
    pub fn parse(text: &str, origin: &Path) -> Result<Self> {
        let scene: Scene = serde_json::from_str(text)
            .map_err(|e| Error::file(origin, format!("bad scene JSON: {e}")))?;
        scene.check().map_err(|e| Error::file(origin, e))?;
        Ok(scene)
    }

    /// Number of samples, ⌊duration·rate⌉.
    pub fn total_samples(&self) -> u64 {
        (self.duration_s * self.sample_rate).round() as u64
    }

    /// The datatype (default `cf32_le`).
    pub fn format(&self) -> std::result::Result<SampleFormat, String> {
        let name = self.datatype.as_deref().unwrap_or("cf32_le");
        SampleFormat::parse(name)
            .filter(|f| f.is_complex())
            .ok_or_else(|| {
                format!(
                    "datatype: '{name}' is not a complex SigMF datatype ({})",
                    crate::io::format::supported_names()
                )
            })
    }

    /// The scene-level checks (field-by-field problems, without the file name).
    fn check(&self) -> std::result::Result<(), String> {
        if !(self.sample_rate.is_finite() && self.sample_rate >= 1.0 && self.sample_rate <= 1e12) {
            return Err(format!(
                "sample_rate: {} must lie in 1 Hz ..= 1e12 Hz",
                self.sample_rate
            ));
        }
        if !(self.centre_frequency.is_finite() && self.centre_frequency.abs() <= 1e12) {
            return Err(format!(
                "centre_frequency: {} must be finite, within ±1e12 Hz",
                self.centre_frequency
            ));
        }
        if !(self.duration_s.is_finite()
            && self.duration_s > 0.0
            && self.duration_s * self.sample_rate <= MAX_SAMPLES)
        {
            return Err(format!(
                "duration_s: {} must be positive and at most 2^40 samples",
                self.duration_s
            ));
        }
        if self.duration_s * self.sample_rate < 0.5 {
            return Err(format!(
                "duration_s: {:e} s is less than one sample at sample_rate {} Hz",
                self.duration_s, self.sample_rate
            ));
        }
        self.format()?;
        if let Some(noise) = &self.noise {
            check_noise(noise, &self.emissions)?;
        }
        if let Some(imp) = &self.impulse_noise {
            self.check_impulses(imp)?;
        }
        if let Some(imp) = &self.impairments {
            for (name, v) in [
                ("dc_i", imp.dc_i),
                ("dc_q", imp.dc_q),
                ("gain_db", imp.gain_db),
                ("phase_deg", imp.phase_deg),
            ] {
                if !v.is_finite() {
                    return Err(format!("impairments.{name}: {v} must be finite"));
                }
            }
        }
        for (i, e) in self.emissions.iter().enumerate() {
            self.check_emission(e)
                .map_err(|err| format!("emissions[{i}] '{}'{err}", e.label))?;
        }
        Ok(())
    }

    /// One emission's checks; the error starts with `.field` or `: problem`.
    fn check_emission(&self, e: &EmissionSpec) -> std::result::Result<(), String> {
        if let Some(mu) = e.mu.filter(|mu| !(mu.is_finite() && *mu >= 0.0)) {
            return Err(format!(".mu: {mu} must be finite and ≥ 0"));
        }
        let edges = e.edges_hz().map_err(|err| format!(": {err}"))?;
        let half = self.sample_rate / 2.0;
        if !(e.offset_hz.is_finite()
            && e.offset_hz + edges.0 >= -half
            && e.offset_hz + edges.1 <= half)
        {
            return Err(format!(
                ".offset_hz: {} Hz puts the emission ({}..{} Hz) beyond ±{half} Hz",
                e.offset_hz,
                e.offset_hz + edges.0,
                e.offset_hz + edges.1
            ));
        }
        let Some(channel) = &e.channel else {
            return Ok(());
        };
        channel
            .check(self.sample_rate)
            .map_err(|err| format!(".channel.{err}"))?;
        let (low, high) = channel.offset_range_hz(self.active_seconds(e));
        let (lower, upper) = (e.offset_hz + low + edges.0, e.offset_hz + high + edges.1);
        if lower < -half || upper > half {
            return Err(format!(
                ".channel: offset and drift move the emission to {lower}..{upper} Hz, beyond ±{half} Hz"
            ));
        }
        Ok(())
    }

    /// How long an emission is active, s (from its start and stop times, within the scene).
    fn active_seconds(&self, e: &EmissionSpec) -> f64 {
        let start = e.start_s.unwrap_or(0.0).clamp(0.0, self.duration_s);
        let stop = e
            .stop_s
            .unwrap_or(self.duration_s)
            .clamp(start, self.duration_s);
        stop - start
    }

    fn check_impulses(&self, imp: &ImpulseNoiseSpec) -> std::result::Result<(), String> {
        if !(imp.rate_hz.is_finite() && imp.rate_hz >= 0.0 && imp.rate_hz < self.sample_rate) {
            return Err(format!(
                "impulse_noise.rate_hz: {} must be finite, ≥ 0 and below the sample rate",
                imp.rate_hz
            ));
        }
        if !(imp.duration_s.is_finite()
            && imp.duration_s > 0.0
            && imp.duration_s <= self.duration_s)
        {
            return Err(format!(
                "impulse_noise.duration_s: {} must be positive and at most the scene's duration_s",
                imp.duration_s
            ));
        }
        if !imp.power_db.is_finite() {
            return Err(format!(
                "impulse_noise.power_db: {} must be finite",
                imp.power_db
            ));
        }
        Ok(())
    }
}

fn check_noise(noise: &NoiseSpec, emissions: &[EmissionSpec]) -> std::result::Result<(), String> {
    let given = [noise.cnr_db, noise.snr_db, noise.density_db_hz]
        .iter()
        .filter(|v| v.is_some())
        .count();
    if given != 1 {
        return Err("noise: give exactly one of cnr_db, snr_db, density_db_hz".into());
    }
    for (name, v) in [
        ("cnr_db", noise.cnr_db),
        ("snr_db", noise.snr_db),
        ("density_db_hz", noise.density_db_hz),
    ] {
        if let Some(v) = v.filter(|v| !v.is_finite()) {
            return Err(format!("noise.{name}: {v} must be finite"));
        }
    }
    if noise.density_db_hz.is_none() {
        let Some(label) = &noise.reference else {
            return Err(
                "noise.reference: cnr_db and snr_db need the label of a reference emission".into(),
            );
        };
        if !emissions.iter().any(|e| &e.label == label) {
            return Err(format!(
                "noise.reference: no emission is labelled '{label}'"
            ));
        }
    }
    Ok(())
}

/// Produces a scene's samples in pieces of any size (bounded memory).
pub struct SceneGenerator {
    emissions: Vec<Emission>,
    noise: ComplexNoise,
    noise_power: f64,
    impulses: Option<ImpulseNoise>,
    impulse_scratch: Vec<Complex32>,
    front_end: Option<IqImpairment>,
    total: u64,
    produced: u64,
}

impl std::fmt::Debug for SceneGenerator {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("SceneGenerator")
            .field("emissions", &self.emissions)
            .field("total", &self.total)
            .finish_non_exhaustive()
    }
}

impl SceneGenerator {
    /// Builds every emission; `base_dir` resolves relative WAV paths. Errors name the field
    /// (wrap them with the file name, as [`crate::pipeline::synth_job::run_scene`] does).
    pub fn new(scene: &Scene, base_dir: &Path) -> Result<Self> {
        scene
            .check()
            .map_err(|e| Error::parameter("scene", "", e))?;
        let seed = scene.seed.unwrap_or(1);
        let total = scene.total_samples();
        let emissions = scene
            .emissions
            .iter()
            .enumerate()
            .map(|(i, spec)| {
                let derived = seed
                    .wrapping_mul(0x9e37_79b9_7f4a_7c15)
                    .wrapping_add(i as u64 + 1);
                Emission::new(spec, scene.sample_rate, total, derived, base_dir).map_err(|e| {
                    Error::parameter(
                        "emission",
                        format!("emissions[{i}] '{}'", spec.label),
                        e.to_string(),
                    )
                })
            })
            .collect::<Result<Vec<_>>>()?;
        let n0 = noise_density(scene, &emissions)?;
        let noise_power = n0 * scene.sample_rate;
        let front_end = scene.impairments.map(|imp| IqImpairment {
            dc: Complex32::new(imp.dc_i as f32, imp.dc_q as f32),
            gain_db: imp.gain_db,
            phase_deg: imp.phase_deg,
        });
        let impulses = scene
            .impulse_noise
            .map(|imp| {
                ImpulseNoise::new(
                    imp.rate_hz,
                    imp.duration_s,
                    10f64.powf(imp.power_db / 10.0),
                    scene.sample_rate,
                    imp.seed.unwrap_or(seed ^ 0x696d_7075_6c73_6521),
                )
            })
            .transpose()?;
        let impulse_scratch =
            vec![Complex32::default(); if impulses.is_some() { IMPULSE_STEP } else { 0 }];
        Ok(SceneGenerator {
            emissions,
            noise: ComplexNoise::try_new(noise_power, seed ^ 0x2545_f491_4f6c_dd1d)?,
            noise_power,
            impulses,
            impulse_scratch,
            front_end,
            total,
            produced: 0,
        })
    }

    /// The emissions.
    pub fn emissions(&self) -> &[Emission] {
        &self.emissions
    }

    /// Complex noise power per sample, N0·fs.
    pub fn noise_power(&self) -> f64 {
        self.noise_power
    }

    /// Samples still to come.
    pub fn remaining(&self) -> u64 {
        self.total - self.produced
    }

    /// Writes the next samples into `out` (up to [`remaining`](Self::remaining); returns how
    /// many were written).
    pub fn fill(&mut self, out: &mut [Complex32]) -> usize {
        let n = out.len().min(self.remaining() as usize);
        let out = &mut out[..n];
        out.fill(Complex32::default());
        for e in &mut self.emissions {
            e.add_to(out);
        }
        self.noise.add_to(out);
        if let Some(imp) = &mut self.impulses {
            for part in out.chunks_mut(IMPULSE_STEP) {
                let scratch = &mut self.impulse_scratch[..part.len()];
                scratch.copy_from_slice(part);
                imp.process(scratch, part);
            }
        }
        if let Some(fe) = &self.front_end {
            fe.apply(out);
        }
        self.produced += n as u64;
        n
    }
}

/// N0 from the scene's noise setting.
fn noise_density(scene: &Scene, emissions: &[Emission]) -> Result<f64> {
    let Some(noise) = &scene.noise else {
        return Ok(0.0);
    };
    if let Some(db) = noise.density_db_hz {
        return Ok(10f64.powf(db / 10.0));
    }
    let label = noise.reference.as_deref().unwrap_or("");
    let reference = emissions
        .iter()
        .find(|e| e.label() == label)
        .ok_or_else(|| Error::parameter("noise.reference", label, "no such emission"))?;
    let w = reference.message_bandwidth();
    match (noise.cnr_db, noise.snr_db) {
        (Some(cnr), _) => {
            if reference.carrier_power() <= 0.0 {
                return Err(Error::parameter(
                    "noise.cnr_db",
                    cnr,
                    format!("reference '{label}' has no carrier; use snr_db"),
                ));
            }
            n0_from_cnr(reference.carrier_power(), cnr, w)
        }
        (_, Some(snr)) => n0_from_snr(reference.mean_power(), snr, w),
        _ => Ok(0.0),
    }
}

/// Resolves the folder relative WAV paths of a scene file are taken from.
pub fn scene_dir(path: &Path) -> PathBuf {
    path.parent()
        .map_or_else(|| PathBuf::from("."), Path::to_path_buf)
}

#[cfg(test)]
mod tests {
    use super::*;

    const GOOD: &str = r#"{"sample_rate":48000,"centre_frequency":1e6,"duration_s":0.5,"seed":3,
      "noise":{"cnr_db":20,"reference":"A"},
      "emissions":[{"label":"A","mode":"am","offset_hz":5000,"amplitude":0.3,"mu":0.5,
                    "message":{"type":"tone","frequency_hz":1000}}]}"#;

    #[test]
    fn noise_follows_the_cnr() {
        // CNR = A_c²/(N0·2W) (channel::snr): N0·fs = A_c²·fs/(2W·10^(CNR/10)).
        let scene: Scene = serde_json::from_str(GOOD).unwrap();
        let g = SceneGenerator::new(&scene, Path::new(".")).unwrap();
        let want = 0.09 * 48000.0 / (2.0 * 1000.0 * 100.0);
        assert!((g.noise_power() / want - 1.0).abs() < 1e-12);
        assert_eq!(g.remaining(), 24_000);
    }

    #[test]
    fn bad_fields_are_named() {
        let cases = [
            (GOOD.replace("\"am\"", "\"fm\""), "unknown variant"),
            (GOOD.replace("\"mu\":0.5", "\"mu\":-0.5"), ".mu"),
            (
                GOOD.replace("\"duration_s\":0.5", "\"duration_s\":0"),
                "duration_s",
            ),
            (
                GOOD.replace("\"offset_hz\":5000", "\"offset_hz\":23500"),
                "offset_hz",
            ),
            (
                GOOD.replace("\"cnr_db\":20", "\"cnr_db\":1e999"),
                "bad scene JSON",
            ),
            (
                GOOD.replace("\"reference\":\"A\"", "\"reference\":\"B\""),
                "reference",
            ),
            (
                GOOD.replace("\"seed\":3,", "\"seed\":3,\"datatype\":\"rf32_le\","),
                "datatype",
            ),
            (
                GOOD.replace("{\"sample_rate\"", "{{\"sample_rate\""),
                "bad scene JSON",
            ),
        ];
        let dir = std::env::temp_dir().join(format!("amrx-scene-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        for (i, (text, field)) in cases.iter().enumerate() {
            let path = dir.join(format!("bad{i}.json"));
            std::fs::write(&path, text).unwrap();
            let err = Scene::load(&path).unwrap_err();
            let msg = err.to_string();
            assert!(matches!(err, Error::InvalidFile { .. }), "{msg}");
            assert!(
                msg.contains(&format!("bad{i}.json")) && msg.contains(field),
                "case {i}: {msg}"
            );
        }
        let _ = std::fs::remove_dir_all(&dir);
    }
}

//! The library side of `amrx synth`: read a scene file, generate it, write a SigMF recording.
//!
//! Samples are produced and written in pieces of [`PIECE`] samples, so memory stays bounded
//! whatever the duration. Each emission becomes a SigMF annotation (`core:sample_start`,
//! `core:sample_count`, absolute `core:freq_lower_edge`/`core:freq_upper_edge`, `core:label`,
//! `core:comment` with mode, carrier, message and the emission's channel). With a channel's
//! frequency error and drift, the carrier is given at the emission's start and the edges span
//! the whole drift.

use super::progress::Progress;
use crate::io::{SampleFormat, SigmfAnnotation, SigmfWriter};
use crate::synth::scene::{scene_dir, Scene, SceneGenerator};
use crate::synth::EmissionSpec;
use crate::{Complex32, Error, Result};
use std::path::{Path, PathBuf};

/// Samples generated and written per piece.
pub const PIECE: usize = 1 << 16;

/// One emission as written.
#[derive(Debug, Clone, PartialEq)]
pub struct EmissionSummary {
    /// Its label.
    pub label: String,
    /// Carrier frequency at the emission's start, Hz (absolute, with the channel's offset).
    pub carrier_hz: f64,
    /// Occupied band, absolute Hz (over the whole drift).
    pub lower_edge_hz: f64,
    /// Occupied band, absolute Hz.
    pub upper_edge_hz: f64,
    /// First and one-past-last sample.
    pub samples: (u64, u64),
    /// Mean power while active (see [`crate::synth::Emission::mean_power`]).
    pub mean_power: f64,
    /// CNR in dB against the scene noise (None without carrier or noise).
    pub cnr_db: Option<f64>,
    /// The bandwidth the CNR's noise is counted in, 2W (W the message bandwidth), Hz.
    pub cnr_bandwidth_hz: f64,
    /// Channel SNR in dB against the scene noise (None without noise).
    pub snr_db: Option<f64>,
    /// The emission's channel in words (empty without one), e.g.
    /// `drift 2 Hz/s, fading moderate (1 ms, 0.5 Hz)`.
    pub channel: String,
}

/// What [`run_scene`] wrote.
#[derive(Debug, Clone, PartialEq)]
pub struct SceneSummary {
    /// The metadata file.
    pub meta_path: PathBuf,
    /// The data file.
    pub data_path: PathBuf,
    /// The datatype written.
    pub format: SampleFormat,
    /// Samples written.
    pub samples: u64,
    /// Sample rate, Hz.
    pub sample_rate: f64,
    /// Noise power per sample N0·fs.
    pub noise_power: f64,
    /// Samples with a component beyond ±1 (clipped by integer datatypes).
    pub clipped: u64,
    /// One entry per emission.
    pub emissions: Vec<EmissionSummary>,
}

/// Generates the scene in `scene_path` into `out_base.sigmf-data`/`.sigmf-meta`, in the
/// scene's datatype unless `datatype` overrides it.
///
/// Errors: the scene's problems as [`Error::InvalidFile`] naming the scene file and the field;
/// write failures as [`Error::Io`] naming the output file.
pub fn run_scene(
    scene_path: &Path,
    out_base: &Path,
    datatype: Option<SampleFormat>,
) -> Result<SceneSummary> {
    run_scene_limited(scene_path, out_base, datatype, DEFAULT_MAX_SAMPLES)
}

/// The most samples [`run_scene`] generates: 2^30 (8 GiB of `cf32_le`, e.g. 7.5 min at
/// 2.4 MS/s). A larger scene is refused with its size, unless a caller passes a larger limit
/// to [`run_scene_limited`] (the command line's `--allow-large`). Common practice, no source.
pub const DEFAULT_MAX_SAMPLES: u64 = 1 << 30;

/// As [`run_scene`], refusing a scene of more than `max_samples` samples.
pub fn run_scene_limited(
    scene_path: &Path,
    out_base: &Path,
    datatype: Option<SampleFormat>,
    max_samples: u64,
) -> Result<SceneSummary> {
    run_scene_with_progress(scene_path, out_base, datatype, max_samples, &|_| {})
}

/// As [`run_scene_limited`], calling `progress` with the samples written so far and the
/// scene's total after every piece.
pub fn run_scene_with_progress(
    scene_path: &Path,
    out_base: &Path,
    datatype: Option<SampleFormat>,
    max_samples: u64,
    progress: &dyn Fn(Progress),
) -> Result<SceneSummary> {
    let scene = Scene::load(scene_path)?;
    let samples = scene.total_samples();
    if samples > max_samples {
        let bytes = samples as f64
            * datatype
                .or_else(|| scene.format().ok())
                .map_or(8.0, |f| f.bytes_per_sample() as f64);
        return Err(Error::file(
            scene_path,
            format!(
                "the scene asks for {samples} samples ({:.1} GB), more than {max_samples}; \
                 shorten duration_s, lower sample_rate or allow it (synth --allow-large)",
                bytes / 1e9
            ),
        ));
    }
    let name = out_base.to_string_lossy();
    let base = [".sigmf-meta", ".sigmf-data"]
        .iter()
        .find_map(|s| name.strip_suffix(s))
        .unwrap_or(&name)
        .to_string();
    for suffix in [".sigmf-data", ".sigmf-meta"] {
        crate::io::check_not_input(Path::new(&format!("{base}{suffix}")), &[scene_path])?;
    }
    write_scene_with_progress(
        &scene,
        scene_path,
        &scene_dir(scene_path),
        out_base,
        datatype,
        progress,
    )
}

/// Generates an already loaded `scene` into `out_base.sigmf-data`/`.sigmf-meta`. `origin`
/// names the scene in errors; relative WAV paths are taken from `base_dir`.
pub fn write_scene(
    scene: &Scene,
    origin: &Path,
    base_dir: &Path,
    out_base: &Path,
    datatype: Option<SampleFormat>,
) -> Result<SceneSummary> {
    write_scene_with_progress(scene, origin, base_dir, out_base, datatype, &|_| {})
}

/// As [`write_scene`], calling `progress` with the samples written so far and the scene's
/// total after every piece.
pub fn write_scene_with_progress(
    scene: &Scene,
    origin: &Path,
    base_dir: &Path,
    out_base: &Path,
    datatype: Option<SampleFormat>,
    progress: &dyn Fn(Progress),
) -> Result<SceneSummary> {
    let scene_path = origin;
    let total = scene.total_samples();
    let format = match datatype {
        Some(f) if f.is_complex() => f,
        Some(f) => {
            return Err(Error::parameter(
                "datatype",
                f.name(),
                "synth writes complex datatypes only",
            ))
        }
        None => scene.format().map_err(|e| Error::file(scene_path, e))?,
    };
    let mut generator =
        SceneGenerator::new(scene, base_dir).map_err(|e| Error::file(scene_path, e.to_string()))?;
    let description = scene
        .description
        .clone()
        .unwrap_or_else(|| format!("amrx synth scene {}", scene_path.display()));
    let mut writer = SigmfWriter::create(
        out_base,
        format,
        scene.sample_rate,
        Some(scene.centre_frequency),
        &description,
    )?;
    let summaries = summarise(scene, &generator);
    for (spec, s) in scene.emissions.iter().zip(&summaries) {
        writer.annotate(annotation(spec, s));
    }
    let mut piece = vec![Complex32::default(); PIECE];
    let mut clipped = 0u64;
    while generator.remaining() > 0 {
        let n = generator.fill(&mut piece);
        clipped += piece[..n]
            .iter()
            .filter(|z| z.re.abs() > 1.0 || z.im.abs() > 1.0)
            .count() as u64;
        writer.write(&piece[..n])?;
        progress(Progress {
            done: writer.samples_written(),
            total: Some(total),
        });
    }
    let summary = SceneSummary {
        meta_path: writer.meta_path().to_path_buf(),
        data_path: writer.data_path().to_path_buf(),
        format,
        samples: writer.samples_written(),
        sample_rate: scene.sample_rate,
        noise_power: generator.noise_power(),
        clipped,
        emissions: summaries,
    };
    writer.finish()?;
    Ok(summary)
}

fn summarise(scene: &Scene, generator: &SceneGenerator) -> Vec<EmissionSummary> {
    let n0 = generator.noise_power() / scene.sample_rate;
    generator
        .emissions()
        .iter()
        .zip(&scene.emissions)
        .map(|(e, spec)| {
            let (lo, hi) = e.edges_hz();
            let active_s = (e.active().1 - e.active().0) as f64 / scene.sample_rate;
            let (drift_low, drift_high, start_offset) =
                spec.channel.as_ref().map_or((0.0, 0.0, 0.0), |c| {
                    let (a, b) = c.offset_range_hz(active_s);
                    (a, b, c.offset_hz)
                });
            let nominal = scene.centre_frequency + spec.offset_hz;
            let w = e.message_bandwidth();
            let with_noise = |v: f64| (n0 > 0.0 && v > 0.0).then_some(v);
            EmissionSummary {
                label: e.label().to_string(),
                carrier_hz: nominal + start_offset,
                lower_edge_hz: nominal + drift_low + lo,
                upper_edge_hz: nominal + drift_high + hi,
                samples: e.active(),
                mean_power: e.mean_power(),
                cnr_db: with_noise(e.carrier_power())
                    .map(|c| crate::channel::snr::cnr_db(c, n0, w)),
                cnr_bandwidth_hz: 2.0 * w,
                snr_db: with_noise(e.mean_power()).map(|s| crate::channel::snr::snr_db(s, n0, w)),
                channel: spec
                    .channel
                    .as_ref()
                    .map(|c| c.describe(scene.sample_rate))
                    .unwrap_or_default(),
            }
        })
        .collect()
}

fn annotation(spec: &EmissionSpec, s: &EmissionSummary) -> SigmfAnnotation {
    let mode = format!("{:?}", spec.mode).to_lowercase();
    let message = serde_json::to_string(&spec.message).unwrap_or_default();
    SigmfAnnotation {
        sample_start: s.samples.0,
        sample_count: Some(s.samples.1 - s.samples.0),
        freq_lower_edge: Some(s.lower_edge_hz),
        freq_upper_edge: Some(s.upper_edge_hz),
        label: Some(s.label.clone()),
        comment: Some(if s.channel.is_empty() {
            format!(
                "amrx synth: {mode}, carrier {} Hz, message {message}",
                s.carrier_hz
            )
        } else {
            format!(
                "amrx synth: {mode}, carrier {} Hz, message {message}, channel: {}",
                s.carrier_hz, s.channel
            )
        }),
    }
}

//! SigMF recordings: `NAME.sigmf-meta` (JSON) beside `NAME.sigmf-data` (samples).
//!
//! Reading follows SigMF v1.2.x: `core:datatype` is required, `core:sample_rate` is optional
//! (then `--rate` must supply it), `core:num_channels` channels are interleaved sample by
//! sample, `core:trailing_bytes` are skipped and `core:dataset` names a non-conforming data
//! file. An explicit rate overrides `core:sample_rate`; a differing override is noted in the
//! warnings. Captures with `core:header_bytes` and `.sigmf` archives are refused with a message.

use super::frames::{check_rate_parameter, no_samples, Codec, FrameReader};
use super::{IqSource, SampleFormat, SourceInfo};
use crate::{Complex32, Error, Result};
use serde::{Deserialize, Serialize};
use std::ffi::OsString;
use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};

/// SigMF version written into `core:version`.
pub const SIGMF_VERSION: &str = "1.2.0";

/// More channels than this is taken as a corrupt `core:num_channels` (common practice, no source).
const MAX_CHANNELS: u64 = 65_536;

/// The numeric range the SigMF schema allows for rates and frequencies.
const SIGMF_FREQUENCY_LIMIT: f64 = 1e12;

/// Reads a SigMF recording.
pub struct SigmfSource {
    info: SourceInfo,
    frames: FrameReader,
    annotations: Vec<SigmfAnnotation>,
    notes: Vec<String>,
}

impl SigmfSource {
    /// Opens the recording named by either file; `rate` supplies a missing `core:sample_rate`,
    /// `channel` picks one of `core:num_channels`.
    ///
    /// `NAME.sigmf-meta`, `NAME.sigmf-data`, `NAME.sigmf-`, `NAME.` and bare `NAME` all name the
    /// pair. An explicit `rate` overrides the file's rate; a differing override is noted in
    /// [`IqSource::warnings`].
    pub fn open(path: &Path, rate: Option<f64>, channel: usize) -> Result<Self> {
        let (meta_path, data_default) = pair_paths(path)?;
        let meta = read_meta(&meta_path)?;
        let global = &meta.global;
        let format = datatype(&meta_path, global)?;
        let channels = channel_count(&meta_path, global, channel)?;
        let (sample_rate, notes) = resolve_rate(&meta_path, global.sample_rate, rate)?;
        if meta
            .captures
            .iter()
            .any(|c| c.header_bytes.unwrap_or(0) > 0)
        {
            return Err(Error::file(
                &meta_path,
                "core:header_bytes is not supported",
            ));
        }
        let data_path = match &global.dataset {
            Some(name) => meta_path.with_file_name(name),
            None => data_default,
        };
        let file = File::open(&data_path).map_err(|e| Error::io(&data_path, e))?;
        let size = file.metadata().map_err(|e| Error::io(&data_path, e))?.len();
        let trailing = global.trailing_bytes.unwrap_or(0);
        let Some(data_bytes) = size.checked_sub(trailing) else {
            let problem = format!("core:trailing_bytes {trailing} exceeds the data size {size}");
            return Err(Error::file(&meta_path, problem));
        };
        let frame_bytes = format.bytes_per_sample() * channels;
        if data_bytes < frame_bytes as u64 {
            return Err(no_samples(&data_path, data_bytes, frame_bytes));
        }
        let codec = Codec::Sigmf(format);
        let frames = FrameReader::new(
            Box::new(file),
            &data_path,
            codec,
            channels,
            channel,
            Some(data_bytes),
        );
        let info = SourceInfo {
            path: data_path,
            datatype: format.name().to_string(),
            sample_rate,
            centre_frequency: meta.captures.first().and_then(|c| c.frequency),
            total_samples: Some(data_bytes / frame_bytes as u64),
            num_channels: channels,
            channel,
        };
        let annotations = meta.annotations.into_iter().map(Into::into).collect();
        Ok(SigmfSource {
            info,
            frames,
            annotations,
            notes,
        })
    }

    /// The annotations of the recording.
    pub fn annotations(&self) -> &[SigmfAnnotation] {
        &self.annotations
    }
}

impl IqSource for SigmfSource {
    fn read(&mut self, buf: &mut [Complex32]) -> Result<usize> {
        self.frames.read(buf)
    }
    fn info(&self) -> &SourceInfo {
        &self.info
    }
    fn warnings(&self) -> Vec<String> {
        let mut warnings = self.notes.clone();
        warnings.extend(self.frames.warnings());
        warnings
    }
    fn annotations(&self) -> &[SigmfAnnotation] {
        &self.annotations
    }
}

/// The base name of a SigMF pair if `path` names one: `NAME.sigmf-meta`, `NAME.sigmf-data`,
/// `NAME.sigmf-`, `NAME.`, `NAME.sigmf` or bare `NAME` (the last four only when
/// `NAME.sigmf-meta` exists and `path` itself is not a file).
pub fn sigmf_base(path: &Path) -> Option<PathBuf> {
    let name = path.to_str()?;
    for suffix in [".sigmf-meta", ".sigmf-data"] {
        if let Some(base) = name.strip_suffix(suffix) {
            return Some(PathBuf::from(base));
        }
    }
    if path.is_file() {
        return None;
    }
    let base = [".sigmf-", ".sigmf", "."]
        .iter()
        .find_map(|s| name.strip_suffix(s))
        .unwrap_or(name);
    let base = PathBuf::from(base);
    with_suffix(&base, ".sigmf-meta").is_file().then_some(base)
}

/// `base` with `suffix` appended to its last component (not replacing any extension).
fn with_suffix(base: &Path, suffix: &str) -> PathBuf {
    let mut name = OsString::from(base.as_os_str());
    name.push(suffix);
    PathBuf::from(name)
}

/// The meta file and the default data file for `path`.
fn pair_paths(path: &Path) -> Result<(PathBuf, PathBuf)> {
    let base = match sigmf_base(path) {
        Some(base) => base,
        None if path.extension().is_some_and(|e| e == "sigmf") && path.is_file() => {
            return Err(Error::file(
                path,
                "SigMF archives (.sigmf) are not read; extract the .sigmf-meta/.sigmf-data pair",
            ))
        }
        // Not a pair on disk: name the meta file the user would need.
        None => {
            let name = path.to_string_lossy();
            let base = [".sigmf-", ".sigmf", "."]
                .iter()
                .find_map(|s| name.strip_suffix(s));
            PathBuf::from(base.unwrap_or(&name))
        }
    };
    Ok((
        with_suffix(&base, ".sigmf-meta"),
        with_suffix(&base, ".sigmf-data"),
    ))
}

fn read_meta(meta_path: &Path) -> Result<MetaFile> {
    let text = std::fs::read(meta_path).map_err(|e| Error::io(meta_path, e))?;
    serde_json::from_slice(&text).map_err(|e| {
        let kind = match e.classify() {
            serde_json::error::Category::Data => "metadata does not fit SigMF",
            _ => "metadata is not valid JSON",
        };
        Error::file(meta_path, format!("{kind}: {e}"))
    })
}

fn datatype(meta_path: &Path, global: &GlobalMeta) -> Result<SampleFormat> {
    if global.metadata_only == Some(true) {
        return Err(Error::file(
            meta_path,
            "core:metadata_only recording has no samples",
        ));
    }
    let Some(name) = global.datatype.as_deref() else {
        return Err(Error::file(meta_path, "core:datatype missing"));
    };
    SampleFormat::parse(name).ok_or_else(|| {
        let supported = super::format::supported_names();
        let problem = format!("unsupported datatype '{name}' (supported: {supported})");
        Error::file(meta_path, problem)
    })
}

fn channel_count(meta_path: &Path, global: &GlobalMeta, channel: usize) -> Result<usize> {
    let channels = global.num_channels.unwrap_or(1);
    if channels == 0 || channels > MAX_CHANNELS {
        return Err(Error::file(
            meta_path,
            format!("core:num_channels {channels} is not between 1 and {MAX_CHANNELS}"),
        ));
    }
    let channels = channels as usize;
    if channel >= channels {
        let problem = format!(
            "channel {channel} requested but the recording has {channels} (0 to {})",
            channels - 1
        );
        return Err(Error::file(meta_path, problem));
    }
    Ok(channels)
}

/// An explicit rate wins over `core:sample_rate`; a differing override is noted.
fn resolve_rate(
    meta_path: &Path,
    file_rate: Option<f64>,
    explicit: Option<f64>,
) -> Result<(f64, Vec<String>)> {
    match (explicit, file_rate) {
        (Some(rate), file_rate) => {
            check_rate_parameter(rate)?;
            let notes = match file_rate {
                Some(f) if f != rate => {
                    vec![format!(
                        "the given rate {rate} Hz overrides core:sample_rate {f} Hz"
                    )]
                }
                _ => Vec::new(),
            };
            Ok((rate, notes))
        }
        (None, Some(rate)) if (1.0..=SIGMF_FREQUENCY_LIMIT).contains(&rate) => {
            Ok((rate, Vec::new()))
        }
        // Bounds: the writer's (1 Hz to 1e12 Hz); common practice, no source.
        (None, Some(rate)) if rate.is_nan() || rate <= 0.0 => Err(Error::file(
            meta_path,
            format!("core:sample_rate {rate} is not positive"),
        )),
        (None, Some(rate)) => Err(Error::file(
            meta_path,
            format!("core:sample_rate {rate:e} Hz is outside 1 Hz to 1e12 Hz"),
        )),
        (None, None) => Err(Error::file(
            meta_path,
            "core:sample_rate missing; give --rate",
        )),
    }
}

/// A SigMF annotation describing one emission in a recording.
#[derive(Debug, Clone, PartialEq, Default, serde::Serialize)]
pub struct SigmfAnnotation {
    /// First sample of the emission.
    pub sample_start: u64,
    /// Number of samples, if bounded.
    pub sample_count: Option<u64>,
    /// Lower edge in Hz (absolute, as SigMF defines it).
    pub freq_lower_edge: Option<f64>,
    /// Upper edge in Hz (absolute).
    pub freq_upper_edge: Option<f64>,
    /// Short label (e.g. `A3E station`).
    pub label: Option<String>,
    /// Longer free-text comment.
    pub comment: Option<String>,
}

/// Writes a SigMF recording in a chosen datatype.
///
/// Non-finite samples are written as zero and counted ([`SigmfWriter::non_finite_replaced`]).
pub struct SigmfWriter {
    data: BufWriter<File>,
    data_guard: super::output::OutputFile,
    data_path: PathBuf,
    meta_path: PathBuf,
    format: SampleFormat,
    sample_rate: f64,
    centre_frequency: Option<f64>,
    description: String,
    annotations: Vec<SigmfAnnotation>,
    scratch: Vec<u8>,
    samples_written: u64,
    non_finite: u64,
}

impl SigmfWriter {
    /// Creates `base.sigmf-data` and, on `finish`, `base.sigmf-meta`.
    ///
    /// `sample_rate` must lie in 1 Hz ..= 1e12 Hz and `centre_frequency` within ±1e12 Hz, the
    /// ranges of the SigMF schema. A `base` ending in `.sigmf-meta`/`.sigmf-data` is accepted.
    pub fn create(
        base: &Path,
        format: SampleFormat,
        sample_rate: f64,
        centre_frequency: Option<f64>,
        description: &str,
    ) -> Result<Self> {
        if !(1.0..=SIGMF_FREQUENCY_LIMIT).contains(&sample_rate) {
            return Err(Error::parameter(
                "sample_rate",
                sample_rate,
                "SigMF needs 1 Hz to 1e12 Hz",
            ));
        }
        if let Some(f) = centre_frequency.filter(|f| !in_frequency_range(*f)) {
            return Err(Error::parameter(
                "centre frequency",
                f,
                "SigMF needs a finite value within ±1e12 Hz",
            ));
        }
        let name = base.to_string_lossy();
        let base = [".sigmf-meta", ".sigmf-data"]
            .iter()
            .find_map(|s| name.strip_suffix(s))
            .map_or_else(|| base.to_path_buf(), PathBuf::from);
        let data_path = with_suffix(&base, ".sigmf-data");
        let (data_guard, file) = super::output::OutputFile::create(&data_path, &[])?;
        Ok(SigmfWriter {
            data: BufWriter::with_capacity(super::frames::READER_CAPACITY, file),
            data_guard,
            meta_path: with_suffix(&base, ".sigmf-meta"),
            data_path,
            format,
            sample_rate,
            centre_frequency,
            description: description.to_string(),
            annotations: Vec::new(),
            scratch: Vec::new(),
            samples_written: 0,
            non_finite: 0,
        })
    }

    /// Appends samples.
    pub fn write(&mut self, samples: &[Complex32]) -> Result<()> {
        let width = self.format.bytes_per_sample();
        let needed = samples.len() * width;
        if self.scratch.len() < needed {
            self.scratch.resize(needed, 0);
        }
        for (s, out) in samples.iter().zip(self.scratch.chunks_exact_mut(width)) {
            if !(s.re.is_finite() && s.im.is_finite()) {
                self.non_finite += 1;
            }
            self.format.encode(*s, out);
        }
        self.data
            .write_all(&self.scratch[..needed])
            .map_err(|e| Error::io(&self.data_path, e))?;
        self.samples_written += samples.len() as u64;
        Ok(())
    }

    /// Adds an annotation to the metadata (checked by [`SigmfWriter::finish`]).
    pub fn annotate(&mut self, annotation: SigmfAnnotation) {
        self.annotations.push(annotation);
    }

    /// Samples written so far.
    pub fn samples_written(&self) -> u64 {
        self.samples_written
    }

    /// Non-finite samples written as zero so far.
    pub fn non_finite_replaced(&self) -> u64 {
        self.non_finite
    }

    /// The data file being written.
    pub fn data_path(&self) -> &Path {
        &self.data_path
    }

    /// The metadata file `finish` writes.
    pub fn meta_path(&self) -> &Path {
        &self.meta_path
    }

    /// Flushes the data and writes the metadata.
    ///
    /// An annotation with a frequency edge that is non-finite, beyond ±1e12 Hz, without its
    /// partner edge, or with lower above upper is an error (SigMF: the edges go together).
    pub fn finish(mut self) -> Result<()> {
        for a in &self.annotations {
            check_annotation(a)?;
        }
        self.data
            .flush()
            .map_err(|e| Error::io(&self.data_path, e))?;
        let meta = self.meta();
        let mut text = serde_json::to_vec_pretty(&meta)
            .map_err(|e| Error::file(&self.meta_path, format!("cannot encode metadata: {e}")))?;
        text.push(b'\n');
        // The data first, then the metadata that describes it: a failure before the end
        // leaves no metadata announcing a recording that is not there.
        self.data_guard.commit()?;
        super::output::write_file(&self.meta_path, &[], &text)
    }

    fn meta(&self) -> MetaFile {
        MetaFile {
            global: GlobalMeta {
                datatype: Some(self.format.name().to_string()),
                version: Some(SIGMF_VERSION.to_string()),
                sample_rate: Some(self.sample_rate),
                num_channels: Some(1),
                description: Some(self.description.clone()),
                recorder: Some("amrx".to_string()),
                ..GlobalMeta::default()
            },
            captures: vec![CaptureMeta {
                sample_start: 0,
                frequency: self.centre_frequency,
                header_bytes: None,
            }],
            annotations: self.annotations.iter().cloned().map(Into::into).collect(),
        }
    }
}

fn in_frequency_range(f: f64) -> bool {
    f.is_finite() && f.abs() <= SIGMF_FREQUENCY_LIMIT
}

fn check_annotation(a: &SigmfAnnotation) -> Result<()> {
    let ok = match (a.freq_lower_edge, a.freq_upper_edge) {
        (None, None) => true,
        (Some(lo), Some(hi)) => in_frequency_range(lo) && in_frequency_range(hi) && lo <= hi,
        _ => false,
    };
    if ok {
        return Ok(());
    }
    Err(Error::parameter(
        "annotation frequency edges",
        format!("{:?}..{:?}", a.freq_lower_edge, a.freq_upper_edge),
        "need both edges, finite, lower <= upper, within ±1e12 Hz",
    ))
}

/// The meta file, for both reading and writing; unknown keys are ignored on reading.
#[derive(Debug, Default, Serialize, Deserialize)]
struct MetaFile {
    global: GlobalMeta,
    #[serde(default)]
    captures: Vec<CaptureMeta>,
    #[serde(default)]
    annotations: Vec<AnnotationMeta>,
}

#[derive(Debug, Default, Serialize, Deserialize)]
struct GlobalMeta {
    #[serde(rename = "core:datatype", skip_serializing_if = "Option::is_none")]
    datatype: Option<String>,
    #[serde(rename = "core:version", skip_serializing_if = "Option::is_none")]
    version: Option<String>,
    #[serde(rename = "core:sample_rate", skip_serializing_if = "Option::is_none")]
    sample_rate: Option<f64>,
    #[serde(rename = "core:num_channels", skip_serializing_if = "Option::is_none")]
    num_channels: Option<u64>,
    #[serde(rename = "core:description", skip_serializing_if = "Option::is_none")]
    description: Option<String>,
    #[serde(rename = "core:recorder", skip_serializing_if = "Option::is_none")]
    recorder: Option<String>,
    #[serde(
        rename = "core:trailing_bytes",
        skip_serializing_if = "Option::is_none"
    )]
    trailing_bytes: Option<u64>,
    #[serde(rename = "core:dataset", skip_serializing_if = "Option::is_none")]
    dataset: Option<String>,
    #[serde(rename = "core:metadata_only", skip_serializing_if = "Option::is_none")]
    metadata_only: Option<bool>,
}

#[derive(Debug, Default, Serialize, Deserialize)]
struct CaptureMeta {
    #[serde(rename = "core:sample_start", default)]
    sample_start: u64,
    #[serde(rename = "core:frequency", skip_serializing_if = "Option::is_none")]
    frequency: Option<f64>,
    #[serde(rename = "core:header_bytes", skip_serializing_if = "Option::is_none")]
    header_bytes: Option<u64>,
}

#[derive(Debug, Default, Serialize, Deserialize)]
struct AnnotationMeta {
    #[serde(rename = "core:sample_start", default)]
    sample_start: u64,
    #[serde(rename = "core:sample_count", skip_serializing_if = "Option::is_none")]
    sample_count: Option<u64>,
    #[serde(
        rename = "core:freq_lower_edge",
        skip_serializing_if = "Option::is_none"
    )]
    freq_lower_edge: Option<f64>,
    #[serde(
        rename = "core:freq_upper_edge",
        skip_serializing_if = "Option::is_none"
    )]
    freq_upper_edge: Option<f64>,
    #[serde(rename = "core:label", skip_serializing_if = "Option::is_none")]
    label: Option<String>,
    #[serde(rename = "core:comment", skip_serializing_if = "Option::is_none")]
    comment: Option<String>,
}

impl From<AnnotationMeta> for SigmfAnnotation {
    fn from(a: AnnotationMeta) -> Self {
        SigmfAnnotation {
            sample_start: a.sample_start,
            sample_count: a.sample_count,
            freq_lower_edge: a.freq_lower_edge,
            freq_upper_edge: a.freq_upper_edge,
            label: a.label,
            comment: a.comment,
        }
    }
}

impl From<SigmfAnnotation> for AnnotationMeta {
    fn from(a: SigmfAnnotation) -> Self {
        AnnotationMeta {
            sample_start: a.sample_start,
            sample_count: a.sample_count,
            freq_lower_edge: a.freq_lower_edge,
            freq_upper_edge: a.freq_upper_edge,
            label: a.label,
            comment: a.comment,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn explicit_rate_overrides_and_is_noted() {
        let p = Path::new("x.sigmf-meta");
        assert_eq!(resolve_rate(p, Some(1e6), None).unwrap(), (1e6, vec![]));
        let (rate, notes) = resolve_rate(p, Some(1e6), Some(2e6)).unwrap();
        assert_eq!(rate, 2e6);
        assert_eq!(
            notes,
            ["the given rate 2000000 Hz overrides core:sample_rate 1000000 Hz"]
        );
        assert!(resolve_rate(p, Some(2e6), Some(2e6)).unwrap().1.is_empty());
        assert!(matches!(
            resolve_rate(p, None, Some(-1.0)),
            Err(Error::InvalidParameter {
                name: "sample_rate",
                ..
            })
        ));
        assert!(matches!(
            resolve_rate(p, Some(0.0), None),
            Err(Error::InvalidFile { .. })
        ));
    }

    #[test]
    fn annotation_edges_must_come_together() {
        let mut a = SigmfAnnotation {
            freq_lower_edge: Some(1.0),
            ..Default::default()
        };
        assert!(check_annotation(&a).is_err());
        a.freq_upper_edge = Some(0.5);
        assert!(check_annotation(&a).is_err());
        a.freq_upper_edge = Some(2.0);
        assert!(check_annotation(&a).is_ok());
    }
}

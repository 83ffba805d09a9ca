//! SigMF recordings: `NAME.sigmf-meta` (JSON) beside `NAME.sigmf-data` (samples).

use super::{IqSource, SampleFormat, SourceInfo};
use crate::{Complex32, Result};
use std::path::Path;

/// Reads a SigMF recording.
pub struct SigmfSource {
    info: SourceInfo,
}

impl SigmfSource {
    /// Opens the recording named by either file; `rate` supplies a missing `core:sample_rate`,
    /// `channel` picks one of `core:num_channels`.
    pub fn open(path: &Path, rate: Option<f64>, channel: usize) -> Result<Self> {
        let _ = (path, rate, channel);
        todo!()
    }
    /// The annotations of the recording.
    pub fn annotations(&self) -> &[SigmfAnnotation] {
        todo!()
    }
}

impl IqSource for SigmfSource {
    fn read(&mut self, buf: &mut [Complex32]) -> Result<usize> {
        let _ = buf;
        todo!()
    }
    fn info(&self) -> &SourceInfo {
        &self.info
    }
    fn warnings(&self) -> Vec<String> {
        todo!()
    }
}

/// A SigMF annotation describing one emission in a recording.
#[derive(Debug, Clone, PartialEq, Default)]
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
pub struct SigmfWriter {}

impl SigmfWriter {
    /// Creates `base.sigmf-data` and, on `finish`, `base.sigmf-meta`.
    pub fn create(
        base: &Path,
        format: SampleFormat,
        sample_rate: f64,
        centre_frequency: Option<f64>,
        description: &str,
    ) -> Result<Self> {
        let _ = (base, format, sample_rate, centre_frequency, description);
        todo!()
    }
    /// Appends samples.
    pub fn write(&mut self, samples: &[Complex32]) -> Result<()> {
        let _ = samples;
        todo!()
    }
    /// Adds an annotation to the metadata.
    pub fn annotate(&mut self, annotation: SigmfAnnotation) {
        let _ = annotation;
        todo!()
    }
    /// Flushes the data and writes the metadata.
    pub fn finish(self) -> Result<()> {
        todo!()
    }
}

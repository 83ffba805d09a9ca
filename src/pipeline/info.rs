//! `info`: what a recording holds, without demodulating it.

use crate::io::{open_input, InputOptions};
use crate::Result;
use serde::Serialize;
use std::fmt;
use std::path::Path;

/// A summary of a recording.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RecordingSummary {
    /// The file.
    pub path: String,
    /// Datatype in SigMF notation.
    pub datatype: String,
    /// Sample rate in Hz.
    pub sample_rate: f64,
    /// Centre frequency in Hz, if recorded.
    pub centre_frequency: Option<f64>,
    /// Complex samples per channel, if known.
    pub samples: Option<u64>,
    /// Duration in seconds, if known.
    pub duration_s: Option<f64>,
    /// Channels in the recording.
    pub channels: usize,
    /// Warnings from opening it.
    pub warnings: Vec<String>,
}

/// Opens `path` and summarises it.
pub fn describe(path: &Path, options: &InputOptions) -> Result<RecordingSummary> {
    let source = open_input(path, options)?;
    let info = source.info();
    Ok(RecordingSummary {
        path: path.display().to_string(),
        datatype: info.datatype.clone(),
        sample_rate: info.sample_rate,
        centre_frequency: info.centre_frequency,
        samples: info.total_samples,
        duration_s: info.total_samples.map(|n| n as f64 / info.sample_rate),
        channels: info.num_channels,
        warnings: source.warnings(),
    })
}

impl fmt::Display for RecordingSummary {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        writeln!(f, "file         {}", self.path)?;
        writeln!(f, "datatype     {}", self.datatype)?;
        writeln!(f, "sample rate  {} Hz", self.sample_rate)?;
        match self.centre_frequency {
            Some(c) => writeln!(f, "centre       {c} Hz")?,
            None => writeln!(f, "centre       (not recorded)")?,
        }
        writeln!(f, "channels     {}", self.channels)?;
        match (self.samples, self.duration_s) {
            (Some(n), Some(d)) => {
                writeln!(f, "samples      {n}")?;
                writeln!(f, "duration     {d:.3} s")?;
            }
            _ => writeln!(f, "samples      (unknown: a stream)")?,
        }
        for w in &self.warnings {
            writeln!(f, "warning      {w}")?;
        }
        Ok(())
    }
}

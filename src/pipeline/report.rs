//! The JSON report of a receive run.

use crate::measure::ModulationDepth;
use crate::{Error, Result};
use serde::Serialize;
use std::path::Path;

/// What a `demod` run did and measured. Absent values serialise as JSON `null`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Report {
    /// Mode name (`am`, `sam`, ...).
    pub mode: String,
    /// ITU emission designator class of the mode.
    pub emission: String,
    /// The input file.
    pub input: String,
    /// IQ sample rate in Hz.
    pub input_rate: f64,
    /// Audio sample rate in Hz.
    pub audio_rate: f64,
    /// Audio (message) bandwidth in Hz.
    pub bandwidth_hz: f64,
    /// Tuned carrier offset from the recording centre, as requested, in Hz.
    pub tuned_offset_hz: f64,
    /// Complex samples read.
    pub samples_in: u64,
    /// Audio frames written (per channel).
    pub samples_out: u64,
    /// Audio channels.
    pub audio_channels: usize,
    /// Measured carrier frequency relative to the recording centre, in Hz.
    pub carrier_offset_hz: Option<f64>,
    /// Lock detector verdict; `null` where the mode has no loop.
    pub locked: Option<bool>,
    /// Carrier-to-noise ratio estimate in dB (carrier over noise in 2 × bandwidth).
    pub cnr_db: Option<f64>,
    /// Peak modulation depth as fractions.
    pub modulation_depth: Option<ModulationDepth>,
    /// Warnings for the user.
    pub warnings: Vec<String>,
}

impl Report {
    /// Writes the report as pretty JSON to `path`.
    pub fn write(&self, path: &Path) -> Result<()> {
        self.write_checked(path, &[])
    }

    /// Writes the report to `path`, refusing a `path` that is one of `inputs`; through a
    /// temporary file renamed on success (see [`crate::io::output`]).
    pub fn write_checked(&self, path: &Path, inputs: &[&Path]) -> Result<()> {
        let text = serde_json::to_string_pretty(self)
            .map_err(|e| Error::file(path, format!("cannot encode report: {e}")))?;
        crate::io::output::write_file(path, inputs, (text + "\n").as_bytes())
    }
}

//! `info`: what a recording holds, without demodulating it.

use crate::io::{open_input, InputOptions, SigmfAnnotation};
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
    /// Complex (IQ) channels in the recording.
    pub channels: usize,
    /// How the channels are stored, in words (e.g. `1 IQ pair: WAV channels 1 = I, 2 = Q`).
    pub layout: String,
    /// The recording's annotations, as recorded (SigMF; empty for other inputs).
    pub annotations: Vec<SigmfAnnotation>,
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
        layout: layout(&info.datatype, info.num_channels, info.channel),
        annotations: source.annotations().to_vec(),
        warnings: source.warnings(),
    })
}

/// The channel layout in words: IQ pairs for complex data, raw channels for real data.
fn layout(datatype: &str, channels: usize, reading: usize) -> String {
    let pairs = if channels == 1 {
        "1 IQ pair".to_string()
    } else {
        format!("{channels} IQ pairs, interleaved; reading pair {reading}")
    };
    if datatype.starts_with("wav-") {
        format!("{pairs} from 2 WAV channels (left = I, right = Q)")
    } else if datatype.starts_with('r') {
        // SigMF real types (rf32_le, ri16_le): samples of a real (IF) signal.
        let word = if channels == 1 { "channel" } else { "channels" };
        format!("{channels} raw real {word}, read as complex with Q = 0")
    } else {
        format!("{pairs} (I, Q interleaved)")
    }
}

/// Seconds for a sample count, or `-`.
fn seconds(samples: Option<u64>, rate: f64) -> String {
    samples.map_or("-".to_string(), |n| format!("{:.3}", n as f64 / rate))
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
        writeln!(f, "channels     {}", self.layout)?;
        match (self.samples, self.duration_s) {
            (Some(n), Some(d)) => {
                writeln!(f, "samples      {n}")?;
                writeln!(f, "duration     {d:.3} s")?;
            }
            _ => writeln!(f, "samples      (unknown: a stream)")?,
        }
        if !self.annotations.is_empty() {
            writeln!(f, "annotations  {}", self.annotations.len())?;
            writeln!(
                f,
                "  {:>9} {:>9} {:>14} {:>14}  label",
                "start s", "length s", "lower Hz", "upper Hz"
            )?;
            let hz = |v: Option<f64>| v.map_or("-".to_string(), |x| format!("{x:.1}"));
            for a in &self.annotations {
                writeln!(
                    f,
                    "  {:>9} {:>9} {:>14} {:>14}  {}",
                    seconds(Some(a.sample_start), self.sample_rate),
                    seconds(a.sample_count, self.sample_rate),
                    hz(a.freq_lower_edge),
                    hz(a.freq_upper_edge),
                    a.label.as_deref().unwrap_or("-")
                )?;
            }
        }
        for w in &self.warnings {
            writeln!(f, "warning      {w}")?;
        }
        Ok(())
    }
}

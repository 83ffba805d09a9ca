//! Opens any supported input by its name: SigMF, IQ WAV, raw file or standard input.

use super::{IqSource, SampleFormat};
use crate::Result;
use std::path::Path;

/// Options that complete or override what the file says.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct InputOptions {
    /// Raw format (required for raw files and `-`).
    pub format: Option<SampleFormat>,
    /// Sample rate in Hz (required for raw input; supplies a missing `core:sample_rate`).
    pub rate: Option<f64>,
    /// Channel to read from a multi-channel recording (0-based).
    pub channel: usize,
}

/// Opens `path`: `NAME.sigmf-meta` or `NAME.sigmf-data` as SigMF, `*.wav` as 2-channel IQ WAV,
/// `-` or anything else with `options.format` as raw samples.
pub fn open_input(path: &Path, options: &InputOptions) -> Result<Box<dyn IqSource>> {
    let _ = (path, options);
    todo!()
}

//! Raw interleaved samples from a file or standard input, streamed.

use super::{IqSource, SampleFormat, SourceInfo};
use crate::{Complex32, Result};
use std::path::Path;

/// Reads raw samples of a given format from any reader.
pub struct RawSource {
    info: SourceInfo,
}

impl RawSource {
    /// Opens `path` (`-` is standard input) as raw `format` at `rate`.
    pub fn open(path: &Path, format: SampleFormat, rate: f64) -> Result<Self> {
        let _ = (path, format, rate);
        todo!()
    }
}

impl IqSource for RawSource {
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

//! Two-channel IQ WAV input (I left, Q right; 16-bit PCM or 32-bit float).

use super::{IqSource, SourceInfo};
use crate::{Complex32, Result};
use std::path::Path;

/// An IQ WAV file read in pieces.
pub struct WavIqSource {
    info: SourceInfo,
}

impl WavIqSource {
    /// Opens `path`; a file that is not 2-channel is an error.
    pub fn open(path: &Path) -> Result<Self> {
        let _ = path;
        todo!()
    }
}

impl IqSource for WavIqSource {
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

//! Audio sinks: WAV files (32-bit float or 16-bit PCM) and raw f32 to standard output.

use crate::Result;
use std::path::Path;

/// Where demodulated audio goes. Samples are interleaved by channel. A sink replaces any
/// non-finite sample with zero as a last guard.
///
/// A real-time sound-card sink implements this same trait, so blocks never change for it.
pub trait AudioSink: Send {
    /// Writes interleaved samples.
    fn write(&mut self, samples: &[f32]) -> Result<()>;
    /// Flushes and closes the sink.
    fn finish(self: Box<Self>) -> Result<()>;
}

/// A WAV file of audio.
pub struct WavAudioSink {}

impl WavAudioSink {
    /// Creates `path` for `channels` channels at `sample_rate`; 32-bit float unless `pcm16`.
    pub fn create(path: &Path, sample_rate: u32, channels: u16, pcm16: bool) -> Result<Self> {
        let _ = (path, sample_rate, channels, pcm16);
        todo!()
    }
}

impl AudioSink for WavAudioSink {
    fn write(&mut self, samples: &[f32]) -> Result<()> {
        let _ = samples;
        todo!()
    }
    fn finish(self: Box<Self>) -> Result<()> {
        todo!()
    }
}

/// Raw little-endian f32 samples to any writer (standard output for `--out -`).
pub struct RawAudioSink {}

impl RawAudioSink {
    /// Raw f32 to standard output.
    pub fn stdout() -> Self {
        todo!()
    }
}

impl AudioSink for RawAudioSink {
    fn write(&mut self, samples: &[f32]) -> Result<()> {
        let _ = samples;
        todo!()
    }
    fn finish(self: Box<Self>) -> Result<()> {
        todo!()
    }
}

//! Audio sinks: WAV files (32-bit float or 16-bit PCM) and raw f32 to standard output.

use super::wav_iq::wav_error;
use crate::{Error, Result};
use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};

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
pub struct WavAudioSink {
    writer: hound::WavWriter<BufWriter<File>>,
    path: PathBuf,
    pcm16: bool,
}

impl WavAudioSink {
    /// Creates `path` for `channels` channels at `sample_rate`; 32-bit float unless `pcm16`.
    ///
    /// 16-bit PCM scales by 32768, rounds to nearest and clips to −32768..=32767.
    pub fn create(path: &Path, sample_rate: u32, channels: u16, pcm16: bool) -> Result<Self> {
        if sample_rate == 0 {
            return Err(Error::parameter("audio_rate", 0, "must be positive"));
        }
        if channels == 0 {
            return Err(Error::parameter("audio_channels", 0, "must be at least 1"));
        }
        let spec = hound::WavSpec {
            channels,
            sample_rate,
            bits_per_sample: if pcm16 { 16 } else { 32 },
            sample_format: if pcm16 {
                hound::SampleFormat::Int
            } else {
                hound::SampleFormat::Float
            },
        };
        let writer = hound::WavWriter::create(path, spec).map_err(|e| wav_error(path, e))?;
        Ok(WavAudioSink {
            writer,
            path: path.to_path_buf(),
            pcm16,
        })
    }
}

/// `x · 32768`, rounded and clipped to the 16-bit range; non-finite gives 0.
pub fn to_pcm16(x: f32) -> i16 {
    let x = if x.is_finite() { x } else { 0.0 };
    (x * 32768.0).round().clamp(-32768.0, 32767.0) as i16
}

fn finite_or_zero(x: f32) -> f32 {
    if x.is_finite() {
        x
    } else {
        0.0
    }
}

impl AudioSink for WavAudioSink {
    fn write(&mut self, samples: &[f32]) -> Result<()> {
        let path = &self.path;
        for &x in samples {
            let written = if self.pcm16 {
                self.writer.write_sample(to_pcm16(x))
            } else {
                self.writer.write_sample(finite_or_zero(x))
            };
            written.map_err(|e| wav_error(path, e))?;
        }
        Ok(())
    }
    fn finish(self: Box<Self>) -> Result<()> {
        let path = self.path;
        self.writer.finalize().map_err(|e| wav_error(&path, e))
    }
}

/// Raw little-endian f32 samples to any writer (standard output for `--out -`).
pub struct RawAudioSink {
    out: BufWriter<Box<dyn Write + Send>>,
    label: PathBuf,
    scratch: Vec<u8>,
}

impl RawAudioSink {
    /// Raw f32 to standard output.
    pub fn stdout() -> Self {
        Self::new(Box::new(std::io::stdout()))
    }

    /// Raw f32 to any writer; errors name it `-`.
    pub fn new(writer: Box<dyn Write + Send>) -> Self {
        RawAudioSink {
            out: BufWriter::with_capacity(64 * 1024, writer),
            label: PathBuf::from("-"),
            scratch: Vec::new(),
        }
    }
}

impl AudioSink for RawAudioSink {
    fn write(&mut self, samples: &[f32]) -> Result<()> {
        let needed = samples.len() * 4;
        if self.scratch.len() < needed {
            self.scratch.resize(needed, 0);
        }
        for (&x, out) in samples.iter().zip(self.scratch.chunks_exact_mut(4)) {
            out.copy_from_slice(&finite_or_zero(x).to_le_bytes());
        }
        self.out
            .write_all(&self.scratch[..needed])
            .map_err(|e| Error::io(&self.label, e))
    }
    fn finish(mut self: Box<Self>) -> Result<()> {
        self.out.flush().map_err(|e| Error::io(&self.label, e))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn pcm16_rounds_and_clips() {
        assert_eq!(to_pcm16(1.0), 32767);
        assert_eq!(to_pcm16(-1.0), -32768);
        assert_eq!(to_pcm16(-2.0), -32768);
        assert_eq!(to_pcm16(0.5), 16384);
        assert_eq!(to_pcm16(1.4 / 32768.0), 1);
        assert_eq!(to_pcm16(1.6 / 32768.0), 2);
        assert_eq!(to_pcm16(f32::NAN), 0);
    }
}

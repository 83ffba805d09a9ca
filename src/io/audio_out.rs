//! Audio sinks: WAV files (32-bit float or 16-bit PCM) and raw f32 to standard output.

use super::output::{OutputFile, OutputKind};
use crate::{Error, Result};
use std::fs::File;
use std::io::{BufWriter, Seek, SeekFrom, Write};
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

/// A WAV file of audio, written through an [`OutputFile`] (temporary file renamed on
/// [`AudioSink::finish`]).
///
/// The header reserves a `JUNK` chunk the size of an RF64 `ds64` chunk (EBU Tech 3306, "RF64:
/// An extended File Format for Audio", section 3): when the file outgrows the 32-bit RIFF size
/// (4 GiB), `finish` turns it into RF64 in place (`RF64` id, `ds64` with the 64-bit sizes,
/// 32-bit size fields set to 0xFFFFFFFF), so no sample is lost and no size wraps.
pub struct WavAudioSink {
    out: BufWriter<File>,
    guard: Option<OutputFile>,
    path: PathBuf,
    pcm16: bool,
    channels: u16,
    data_bytes: u64,
    riff_limit: u64,
    scratch: Vec<u8>,
}

/// Bytes of the RF64 `ds64` body reserved by the `JUNK` chunk: riff size, data size, sample
/// count (3 × u64) and a table length (u32) (EBU Tech 3306 §3.3).
const DS64_BODY: usize = 28;

/// How a WAV file stores its samples.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum WavEncoding {
    /// 32-bit IEEE float, full scale ±1.0 (nothing is clipped).
    #[default]
    Float32,
    /// 16-bit PCM: scaled by 32768, rounded to nearest, clipped to −32768..=32767.
    Pcm16,
}

impl WavAudioSink {
    /// Creates `path` for `channels` channels at `sample_rate`, samples stored as `encoding`.
    ///
    /// ```no_run
    /// use amrx::io::{AudioSink, WavAudioSink, WavEncoding};
    /// # fn main() -> amrx::Result<()> {
    /// let mut sink = WavAudioSink::create("out.wav".as_ref(), 48_000, 1, WavEncoding::Float32)?;
    /// sink.write(&[0.0, 0.25, -0.25])?;
    /// sink.finish()?;
    /// # Ok(())
    /// # }
    /// ```
    pub fn create(
        path: &Path,
        sample_rate: u32,
        channels: u16,
        encoding: WavEncoding,
    ) -> Result<Self> {
        Self::create_checked(path, &[], sample_rate, channels, encoding)
    }

    /// Finishes the file (see [`AudioSink::finish`]); callable on the sink itself, unboxed.
    pub fn finish(self) -> Result<()> {
        AudioSink::finish(Box::new(self))
    }

    /// As [`WavAudioSink::create`], refusing a `path` that is one of `inputs`.
    pub fn create_checked(
        path: &Path,
        inputs: &[&Path],
        sample_rate: u32,
        channels: u16,
        encoding: WavEncoding,
    ) -> Result<Self> {
        let pcm16 = encoding == WavEncoding::Pcm16;
        if sample_rate == 0 {
            return Err(Error::parameter("audio_rate", 0, "must be positive"));
        }
        if channels == 0 {
            return Err(Error::parameter("audio_channels", 0, "must be at least 1"));
        }
        let (guard, file) = OutputFile::create(path, inputs)?;
        let mut sink = WavAudioSink {
            out: BufWriter::with_capacity(256 * 1024, file),
            guard: Some(guard),
            path: path.to_path_buf(),
            pcm16,
            channels,
            data_bytes: 0,
            riff_limit: u64::from(u32::MAX),
            scratch: Vec::new(),
        };
        let header = sink.header(sample_rate);
        sink.out
            .write_all(&header)
            .map_err(|e| Error::io(path, e))?;
        Ok(sink)
    }

    /// Sets the largest RIFF size written as plain RIFF/WAVE (4 GiB − 1 by default); beyond it
    /// `finish` writes RF64. Meant for tests, which cannot write 4 GiB.
    pub fn with_riff_limit(mut self, bytes: u64) -> Self {
        self.riff_limit = bytes;
        self
    }

    fn bytes_per_sample(&self) -> u16 {
        if self.pcm16 {
            2
        } else {
            4
        }
    }

    /// The header with placeholder sizes of 0xFFFFFFFF ("unknown length": a reader of a file
    /// whose writer was killed reads to the end of the file).
    fn header(&self, sample_rate: u32) -> Vec<u8> {
        let mut h = Vec::with_capacity(96);
        let width = self.bytes_per_sample();
        let block_align = width * self.channels;
        h.extend_from_slice(b"RIFF");
        h.extend_from_slice(&u32::MAX.to_le_bytes());
        h.extend_from_slice(b"WAVE");
        h.extend_from_slice(b"JUNK");
        h.extend_from_slice(&(DS64_BODY as u32).to_le_bytes());
        h.extend_from_slice(&[0; DS64_BODY]);
        h.extend_from_slice(b"fmt ");
        // WAVEFORMATEX: PCM (1) in 16 bytes; IEEE float (3) with cbSize 0 in 18.
        h.extend_from_slice(&(if self.pcm16 { 16u32 } else { 18 }).to_le_bytes());
        h.extend_from_slice(&(if self.pcm16 { 1u16 } else { 3 }).to_le_bytes());
        h.extend_from_slice(&self.channels.to_le_bytes());
        h.extend_from_slice(&sample_rate.to_le_bytes());
        h.extend_from_slice(&(sample_rate.saturating_mul(u32::from(block_align))).to_le_bytes());
        h.extend_from_slice(&block_align.to_le_bytes());
        h.extend_from_slice(&(width * 8).to_le_bytes());
        if !self.pcm16 {
            h.extend_from_slice(&0u16.to_le_bytes());
            // Non-PCM data carries a fact chunk with the frame count.
            h.extend_from_slice(b"fact");
            h.extend_from_slice(&4u32.to_le_bytes());
            h.extend_from_slice(&u32::MAX.to_le_bytes());
        }
        h.extend_from_slice(b"data");
        h.extend_from_slice(&u32::MAX.to_le_bytes());
        h
    }

    fn header_len(&self) -> u64 {
        if self.pcm16 {
            80
        } else {
            94
        }
    }

    /// Rewrites the sizes in the header for the data written.
    fn finalise_header(&mut self) -> std::io::Result<()> {
        let frames = self.data_bytes / u64::from(self.bytes_per_sample() * self.channels);
        let riff = self.header_len() - 8 + self.data_bytes;
        let data_size_at = self.header_len() - 4;
        let pcm16 = self.pcm16;
        let riff_limit = self.riff_limit;
        let data_bytes = self.data_bytes;
        let file = self.out.get_mut();
        let put = |file: &mut File, at: u64, bytes: &[u8]| -> std::io::Result<()> {
            file.seek(SeekFrom::Start(at))?;
            file.write_all(bytes)
        };
        if riff <= riff_limit {
            put(file, 4, &(riff as u32).to_le_bytes())?;
            put(file, data_size_at, &(data_bytes as u32).to_le_bytes())?;
            if !pcm16 {
                put(
                    file,
                    82,
                    &(frames.min(u64::from(u32::MAX)) as u32).to_le_bytes(),
                )?;
            }
        } else {
            put(file, 0, b"RF64")?;
            let mut ds64 = Vec::with_capacity(8 + DS64_BODY);
            ds64.extend_from_slice(b"ds64");
            ds64.extend_from_slice(&(DS64_BODY as u32).to_le_bytes());
            ds64.extend_from_slice(&riff.to_le_bytes());
            ds64.extend_from_slice(&data_bytes.to_le_bytes());
            ds64.extend_from_slice(&frames.to_le_bytes());
            ds64.extend_from_slice(&0u32.to_le_bytes());
            put(file, 12, &ds64)?;
            // The 32-bit sizes stay 0xFFFFFFFF: "use the ds64 value" (EBU Tech 3306 §3.2).
        }
        file.seek(SeekFrom::End(0))?;
        Ok(())
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
        let width = usize::from(self.bytes_per_sample());
        let needed = samples.len() * width;
        if self.scratch.len() < needed {
            self.scratch.resize(needed, 0);
        }
        if self.pcm16 {
            for (&x, out) in samples.iter().zip(self.scratch.chunks_exact_mut(2)) {
                out.copy_from_slice(&to_pcm16(x).to_le_bytes());
            }
        } else {
            for (&x, out) in samples.iter().zip(self.scratch.chunks_exact_mut(4)) {
                out.copy_from_slice(&finite_or_zero(x).to_le_bytes());
            }
        }
        self.out
            .write_all(&self.scratch[..needed])
            .map_err(|e| Error::io(&self.path, e))?;
        self.data_bytes += needed as u64;
        Ok(())
    }
    fn finish(mut self: Box<Self>) -> Result<()> {
        let path = self.path.clone();
        let io = |e| Error::io(&path, e);
        self.out.flush().map_err(io)?;
        let direct = self
            .guard
            .as_ref()
            .is_some_and(|g| g.kind() == OutputKind::Direct);
        match self.finalise_header() {
            Ok(()) => {}
            // A FIFO or device cannot seek: the header keeps its "unknown length" sizes.
            Err(_) if direct && !is_seekable(self.out.get_mut()) => {}
            Err(e) => return Err(io(e)),
        }
        self.out
            .get_ref()
            .sync_all()
            .or_else(|e| if direct { Ok(()) } else { Err(e) })
            .map_err(io)?;
        match self.guard.take() {
            Some(guard) => guard.commit(),
            None => Ok(()),
        }
    }
}

/// True when the process started with standard output closed. Rust's runtime then opens
/// `/dev/null` read-write in its place (so writes vanish without error); a shell's
/// `> /dev/null` opens it write-only. Read from `/proc/self/fdinfo/1` (Linux, proc(5)).
#[cfg(target_os = "linux")]
fn stdout_was_closed() -> bool {
    let is_null = std::fs::read_link("/proc/self/fd/1").is_ok_and(|p| p == Path::new("/dev/null"));
    let read_write = std::fs::read_to_string("/proc/self/fdinfo/1")
        .ok()
        .and_then(|info| {
            let flags = info.lines().find_map(|l| l.strip_prefix("flags:"))?;
            u32::from_str_radix(flags.trim(), 8).ok()
        })
        .is_some_and(|flags| flags & 0o3 == 0o2);
    is_null && read_write
}

fn is_seekable(file: &mut File) -> bool {
    file.stream_position().is_ok()
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

    /// Raw f32 to standard output, refusing a closed one: Rust's standard output swallows
    /// writes to a closed descriptor, so the audio would vanish with no error. On Unix the
    /// descriptor is duplicated and written as a file, so every failure is reported.
    pub fn try_stdout() -> Result<Self> {
        #[cfg(target_os = "linux")]
        if stdout_was_closed() {
            return Err(Error::file(
                "-",
                "standard output is closed; nowhere to write the audio",
            ));
        }
        #[cfg(unix)]
        {
            use std::os::fd::AsFd;
            let fd = std::io::stdout()
                .as_fd()
                .try_clone_to_owned()
                .map_err(|e| Error::file("-", format!("standard output is closed ({e})")))?;
            Ok(Self::new(Box::new(File::from(fd))))
        }
        #[cfg(not(unix))]
        {
            Ok(Self::stdout())
        }
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

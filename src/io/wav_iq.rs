//! Two-channel IQ WAV input (I left, Q right; 16-bit PCM or 32-bit float, also 8/24/32-bit PCM).
//!
//! hound parses the header; the data chunk is then streamed through the same frame reader as
//! every other source (hound's per-sample iterator would be the bottleneck).

use super::frames::{check_rate_parameter, no_samples, Codec, FrameReader};
use super::{IqSource, SampleFormat, SourceInfo};
use crate::{Complex32, Error, Result};
use std::fs::File;
use std::io::{BufReader, Read, Seek, SeekFrom};
use std::path::Path;

/// An IQ WAV file read in pieces.
pub struct WavIqSource {
    info: SourceInfo,
    frames: FrameReader,
    notes: Vec<String>,
}

impl WavIqSource {
    /// Opens `path`; a file that is not 2-channel is an error.
    pub fn open(path: &Path) -> Result<Self> {
        Self::open_with_rate(path, None)
    }

    /// Opens `path`; an explicit `rate` overrides the header's rate (noted in the warnings).
    pub fn open_with_rate(path: &Path, rate: Option<f64>) -> Result<Self> {
        let file = File::open(path).map_err(|e| Error::io(path, e))?;
        let reader = hound::WavReader::new(BufReader::new(file)).map_err(|e| wav_error(path, e))?;
        let spec = reader.spec();
        check_channels(path, spec.channels)?;
        let values = u64::from(reader.len());
        let (file, data_bytes) = data_chunk(path, reader)?;
        if values == 0 {
            return Err(no_samples(path, 0, 4));
        }
        let container = (data_bytes / values) as u16;
        let (codec, datatype) = codec_for(path, spec, container)?;
        let (sample_rate, mut notes) = resolve_rate(f64::from(spec.sample_rate), rate, path)?;
        // What the file holds past the header, when it is shorter than the header says.
        let mut samples = values / 2;
        let held = file
            .metadata()
            .ok()
            .zip(
                file.try_clone()
                    .ok()
                    .and_then(|mut f| f.stream_position().ok()),
            )
            .map(|(m, start)| m.len().saturating_sub(start));
        let truncated = held.filter(|&h| h < data_bytes);
        if let Some(held) = truncated {
            let frame = u64::from(container) * 2;
            samples = held / frame.max(1);
            notes.push(format!(
                "the WAV header announces {data_bytes} data bytes ({} samples) but the file \
                 holds {held} ({samples} samples): it is truncated",
                values / 2
            ));
        }
        let mut frames = FrameReader::new(Box::new(file), path, codec, 1, 0, Some(data_bytes));
        if frames.is_empty()? {
            return Err(Error::file(
                path,
                format!(
                    "no samples: the WAV header announces {data_bytes} data bytes but the \
                     file ends before the first"
                ),
            ));
        }
        if let Some(held) = truncated {
            // Said once above; the reader warns again only if the file shrinks further.
            frames.expect_bytes(held);
        }
        let info = SourceInfo {
            path: path.to_path_buf(),
            datatype: datatype.to_string(),
            sample_rate,
            centre_frequency: None,
            total_samples: Some(samples),
            num_channels: 1,
            channel: 0,
        };
        Ok(WavIqSource {
            info,
            frames,
            notes,
        })
    }
}

impl WavIqSource {
    /// Reads a 2-channel IQ WAV from a stream (standard input): the header is parsed as it
    /// arrives, then the data is streamed. A data length of 0 or 0xFFFFFFFF (what a writer
    /// that cannot seek back leaves) means "to the end of the stream". `label` names the
    /// stream in messages; `rate` overrides the header's rate.
    pub fn from_stream(
        reader: Box<dyn Read + Send>,
        label: &Path,
        rate: Option<f64>,
    ) -> Result<Self> {
        let (header, rest) = header_with_open_length(reader, label)?;
        let joined: Box<dyn Read + Send> = Box::new(std::io::Cursor::new(header).chain(rest));
        let wav = hound::WavReader::new(joined).map_err(|e| wav_error(label, e))?;
        let spec = wav.spec();
        check_channels(label, spec.channels)?;
        let container = spec.bits_per_sample.div_ceil(8);
        let values = u64::from(wav.len());
        let data_bytes = values * u64::from(container);
        let (codec, datatype) = codec_for(label, spec, container)?;
        let (sample_rate, notes) = resolve_rate(f64::from(spec.sample_rate), rate, label)?;
        // hound takes 0xFFFFFFFF bytes as that many samples; both placeholders mean "unknown".
        let known = values > 0 && data_bytes < 0xFFFF_F000;
        let mut frames = FrameReader::new(
            Box::new(wav.into_inner()),
            label,
            codec,
            1,
            0,
            known.then_some(data_bytes),
        );
        if frames.is_empty()? {
            return Err(no_samples(label, 0, 2 * usize::from(container)));
        }
        let info = SourceInfo {
            path: label.to_path_buf(),
            datatype: datatype.to_string(),
            sample_rate,
            centre_frequency: None,
            total_samples: known.then_some(values / 2),
            num_channels: 1,
            channel: 0,
        };
        Ok(WavIqSource {
            info,
            frames,
            notes,
        })
    }
}

/// Chunks before the data larger than this are refused on a stream (a header is a few hundred
/// bytes; common practice, no source).
const MAX_HEADER_CHUNK: u32 = 1 << 24;

/// Reads a WAV stream's header up to and including the data chunk's length, which is set to 0
/// when it is a placeholder (0xFFFFFFFF, or not a whole number of frames) that hound refuses.
fn header_with_open_length(
    mut reader: Box<dyn Read + Send>,
    label: &Path,
) -> Result<(Vec<u8>, Box<dyn Read + Send>)> {
    let io = |e| Error::io(label, e);
    let mut header = vec![0u8; 12];
    reader.read_exact(&mut header).map_err(io)?;
    loop {
        let mut chunk = [0u8; 8];
        if let Err(e) = reader.read_exact(&mut chunk) {
            return Err(Error::file(
                label,
                format!("not a usable WAV stream: it ends before its data chunk ({e})"),
            ));
        }
        let len = u32::from_le_bytes([chunk[4], chunk[5], chunk[6], chunk[7]]);
        if &chunk[..4] == b"data" {
            let open = len == u32::MAX || len % 2 != 0;
            if open {
                chunk[4..].copy_from_slice(&[0; 4]);
            }
            header.extend_from_slice(&chunk);
            return Ok((header, reader));
        }
        if len > MAX_HEADER_CHUNK {
            return Err(Error::file(
                label,
                format!(
                    "not a usable WAV stream: a {len}-byte '{}' chunk before the data",
                    String::from_utf8_lossy(&chunk[..4])
                ),
            ));
        }
        header.extend_from_slice(&chunk);
        let padded = u64::from(len) + u64::from(len % 2);
        let before = header.len();
        (&mut reader)
            .take(padded)
            .read_to_end(&mut header)
            .map_err(io)?;
        if ((header.len() - before) as u64) < padded {
            return Err(Error::file(
                label,
                "not a usable WAV stream: it ends inside its header",
            ));
        }
    }
}

fn check_channels(path: &Path, channels: u16) -> Result<()> {
    if channels == 2 {
        return Ok(());
    }
    let word = if channels == 1 { "channel" } else { "channels" };
    Err(Error::file(
        path,
        format!("WAV has {channels} {word}; IQ needs 2 (I left, Q right)"),
    ))
}

/// Maps hound's errors: I/O stays I/O, the rest is a bad file.
pub(crate) fn wav_error(path: &Path, e: hound::Error) -> Error {
    match e {
        hound::Error::IoError(e) => Error::io(path, e),
        other => Error::file(path, format!("not a usable WAV file: {other}")),
    }
}

/// The file positioned at the first data byte, and the data chunk length in bytes.
fn data_chunk(path: &Path, reader: hound::WavReader<BufReader<File>>) -> Result<(File, u64)> {
    let io = |e| Error::io(path, e);
    let mut buffered = reader.into_inner();
    let start = buffered.stream_position().map_err(io)?;
    let mut file = buffered.into_inner();
    // The data chunk's length field is the 4 bytes just before its first byte (RIFF layout).
    let mut len = [0u8; 4];
    file.seek(SeekFrom::Start(start.saturating_sub(4)))
        .map_err(io)?;
    file.read_exact(&mut len).map_err(io)?;
    file.seek(SeekFrom::Start(start)).map_err(io)?;
    Ok((file, u64::from(u32::from_le_bytes(len))))
}

fn codec_for(path: &Path, spec: hound::WavSpec, container: u16) -> Result<(Codec, &'static str)> {
    use hound::SampleFormat::{Float, Int};
    match (spec.sample_format, spec.bits_per_sample, container) {
        (Int, 8, 1) => Ok((Codec::WavU8, "wav-u8")),
        (Int, 16, 2) => Ok((Codec::Sigmf(SampleFormat::Ci16Le), "wav-i16")),
        (Int, 24, 3) => Ok((Codec::WavI24, "wav-i24")),
        (Int, 32, 4) => Ok((Codec::Sigmf(SampleFormat::Ci32Le), "wav-i32")),
        (Float, 32, 4) => Ok((Codec::Sigmf(SampleFormat::Cf32Le), "wav-f32")),
        (format, bits, bytes) => {
            let kind = if format == Float { "float" } else { "integer" };
            Err(Error::file(
                path,
                format!(
                    "WAV {bits}-bit {kind} samples in {bytes}-byte containers are not supported"
                ),
            ))
        }
    }
}

/// The header's rate unless an explicit one is given; a differing override is noted.
fn resolve_rate(header: f64, explicit: Option<f64>, path: &Path) -> Result<(f64, Vec<String>)> {
    match explicit {
        Some(rate) => {
            check_rate_parameter(rate)?;
            let notes = if rate != header {
                vec![format!(
                    "the given rate {rate} Hz overrides the WAV header's {header} Hz"
                )]
            } else {
                Vec::new()
            };
            Ok((rate, notes))
        }
        None if header > 0.0 => Ok((header, Vec::new())),
        None => Err(Error::file(path, "WAV sample rate is 0; give --rate")),
    }
}

impl IqSource for WavIqSource {
    fn read(&mut self, buf: &mut [Complex32]) -> Result<usize> {
        self.frames.read(buf)
    }
    fn info(&self) -> &SourceInfo {
        &self.info
    }
    fn warnings(&self) -> Vec<String> {
        let mut warnings = self.notes.clone();
        warnings.extend(self.frames.warnings());
        warnings
    }
}

//! Opens any supported input by its name: SigMF, IQ WAV, raw file or standard input.

use super::adapt::{adapt_source, StreamOptions};
use super::sigmf::sigmf_base;
use super::{IqSource, RawSource, SampleFormat, SigmfSource, WavIqSource};
use crate::{Error, Result};
use std::io::Read;
use std::path::Path;

/// Options that complete or override what the file says.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct InputOptions {
    /// Raw format (required for raw files and `-`, unless the file name ends in a datatype:
    /// `.cu8`, `.ci16`, `.cf32_le`, ...; see [`format_from_suffix`]).
    pub format: Option<SampleFormat>,
    /// Sample rate in Hz (required for raw input; supplies a missing `core:sample_rate`).
    pub rate: Option<f64>,
    /// Channel to read from a multi-channel recording (0-based).
    pub channel: usize,
    /// Swap I and Q, start, duration and centre frequency: applied to every source alike.
    pub stream: StreamOptions,
}

/// Opens `path`: `NAME.sigmf-meta` or `NAME.sigmf-data` as SigMF, `*.wav` as 2-channel IQ WAV,
/// `-` or anything else with `options.format` as raw samples.
///
/// `NAME.sigmf-`, `NAME.` and bare `NAME` also open a SigMF pair when `NAME.sigmf-meta`
/// exists and `path` itself is not a file. For SigMF and WAV, `options.rate` overrides the
/// file's rate (noted in the warnings) and `options.format`, if given, must match the file.
/// A raw file named after its datatype (`capture.cu8`) needs no format; `options.format`
/// overrides the suffix. `options.stream` (swap, start, duration, centre) then applies to
/// whatever was opened ([`adapt_source`]).
pub fn open_input(path: &Path, options: &InputOptions) -> Result<Box<dyn IqSource>> {
    if path.to_str().is_some_and(|p| p.starts_with("sound:")) && !path.exists() {
        return Err(Error::file(
            path,
            "a sound-card input is read by `amrx demod` (built with --features sound)",
        ));
    }
    options.stream.validate()?;
    let source = open_unadapted(path, options)?;
    adapt_source(source, &options.stream)
}

/// The raw datatype a file name states by its suffix: a SigMF datatype name (`.cu8`,
/// `.ci16_le`, `.cf32_be`, ...), or one without its byte order, which then means little-endian
/// (`.ci16`, `.cf32`, `.cf64`, ...). `None` for any other name.
///
/// ```
/// use amrx::io::{open::format_from_suffix, SampleFormat};
/// use std::path::Path;
/// assert_eq!(format_from_suffix(Path::new("night.cu8")), Some(SampleFormat::Cu8));
/// assert_eq!(format_from_suffix(Path::new("band.CF32")), Some(SampleFormat::Cf32Le));
/// assert_eq!(format_from_suffix(Path::new("band.ci16_be")), Some(SampleFormat::Ci16Be));
/// assert_eq!(format_from_suffix(Path::new("band.bin")), None);
/// ```
pub fn format_from_suffix(path: &Path) -> Option<SampleFormat> {
    let ext = path.extension()?.to_str()?.to_ascii_lowercase();
    SampleFormat::parse(&ext).or_else(|| SampleFormat::parse(&format!("{ext}_le")))
}

fn open_unadapted(path: &Path, options: &InputOptions) -> Result<Box<dyn IqSource>> {
    if path != Path::new("-") {
        if sigmf_base(path).is_some() || has_extension(path, "sigmf") {
            let source = SigmfSource::open(path, options.rate, options.channel)?;
            check_format(options.format, source.info().datatype.as_str())?;
            return Ok(Box::new(source));
        }
        if has_extension(path, "wav") {
            return open_wav(path, options);
        }
        // A missing file is reported before a missing --format.
        std::fs::metadata(path).map_err(|e| Error::io(path, e))?;
    }
    if path == Path::new("-") {
        return open_stdin(path, options);
    }
    if options.channel != 0 {
        return Err(Error::parameter(
            "channel",
            options.channel,
            "raw input holds one channel (use 0)",
        ));
    }
    let Some(format) = options.format.or_else(|| format_from_suffix(path)) else {
        return Err(Error::file(
            path,
            "unknown input type; name the file after its datatype (.cu8, .ci16, .cf32) or give --format cu8|ci8|ci16_le|cf32_le, and --rate",
        ));
    };
    let Some(rate) = options.rate else {
        return Err(Error::file(
            path,
            "raw samples carry no sample rate; give --rate",
        ));
    };
    Ok(Box::new(RawSource::open(path, format, rate)?))
}

/// Standard input: a WAV stream when it starts with a RIFF header (and no `--format` says
/// otherwise), else raw samples.
fn open_stdin(path: &Path, options: &InputOptions) -> Result<Box<dyn IqSource>> {
    // Not `stdin().lock()`: the lock guard is not `Send`, and sources move between threads.
    open_stream(Box::new(std::io::stdin()), path, options)
}

/// [`open_stdin`] on any reader (tests feed it bytes).
pub(crate) fn open_stream(
    mut reader: Box<dyn Read + Send>,
    label: &Path,
    options: &InputOptions,
) -> Result<Box<dyn IqSource>> {
    let mut head = Vec::with_capacity(4);
    (&mut reader)
        .take(4)
        .read_to_end(&mut head)
        .map_err(|e| Error::io(label, e))?;
    let riff = head == b"RIFF";
    let rf64 = head == b"RF64";
    let whole: Box<dyn Read + Send> = Box::new(std::io::Cursor::new(head).chain(reader));
    if options.channel != 0 {
        return Err(Error::parameter(
            "channel",
            options.channel,
            "standard input holds one channel (use 0)",
        ));
    }
    match options.format {
        None if riff => {
            return Ok(Box::new(WavIqSource::from_stream(
                whole,
                label,
                options.rate,
            )?))
        }
        None if rf64 => {
            return Err(Error::file(
                label,
                "an RF64 WAV stream is not supported on standard input; give the file's name",
            ))
        }
        _ => {}
    }
    let Some(format) = options.format else {
        return Err(Error::file(
            label,
            "standard input is not a WAV stream (no RIFF header); for raw samples give --format cu8|ci8|ci16_le|cf32_le and --rate",
        ));
    };
    let Some(rate) = options.rate else {
        return Err(Error::file(
            label,
            "raw samples carry no sample rate; give --rate",
        ));
    };
    Ok(Box::new(RawSource::from_reader(
        whole, label, format, rate,
    )?))
}

fn open_wav(path: &Path, options: &InputOptions) -> Result<Box<dyn IqSource>> {
    if options.channel != 0 {
        return Err(Error::parameter(
            "channel",
            options.channel,
            "an IQ WAV file holds one complex channel (use 0)",
        ));
    }
    if let Some(format) = options.format {
        return Err(Error::parameter(
            "format",
            format.name(),
            "a WAV file states its own sample format",
        ));
    }
    Ok(Box::new(WavIqSource::open_with_rate(path, options.rate)?))
}

fn has_extension(path: &Path, ext: &str) -> bool {
    path.extension()
        .and_then(|e| e.to_str())
        .is_some_and(|e| e.eq_ignore_ascii_case(ext))
}

/// A `--format` given with a self-describing file must agree with it.
fn check_format(format: Option<SampleFormat>, datatype: &str) -> Result<()> {
    match format {
        Some(f) if f.name() != datatype => Err(Error::parameter(
            "format",
            f.name(),
            format!("the recording says core:datatype {datatype}"),
        )),
        _ => Ok(()),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::Complex32;
    use std::io::Cursor;

    /// A 2-channel float WAV of `n` samples k + j·(−k)/2, written by hound.
    fn iq_wav(n: usize) -> Vec<u8> {
        let spec = hound::WavSpec {
            channels: 2,
            sample_rate: 48_000,
            bits_per_sample: 32,
            sample_format: hound::SampleFormat::Float,
        };
        let mut bytes = Cursor::new(Vec::new());
        let mut w = hound::WavWriter::new(&mut bytes, spec).unwrap();
        for k in 0..n {
            w.write_sample(k as f32 / 1000.0).unwrap();
            w.write_sample(-(k as f32) / 2000.0).unwrap();
        }
        w.finalize().unwrap();
        bytes.into_inner()
    }

    fn read_all(source: &mut dyn IqSource) -> Vec<Complex32> {
        let mut all = Vec::new();
        let mut buf = vec![Complex32::default(); 100];
        loop {
            let n = source.read(&mut buf).unwrap();
            if n == 0 {
                return all;
            }
            all.extend_from_slice(&buf[..n]);
        }
    }

    fn stream(bytes: Vec<u8>, options: &InputOptions) -> Result<Box<dyn IqSource>> {
        open_stream(Box::new(Cursor::new(bytes)), Path::new("-"), options)
    }

    #[test]
    fn a_wav_stream_is_recognised_by_its_riff_header() {
        let mut s = stream(iq_wav(300), &InputOptions::default()).unwrap();
        assert_eq!(s.info().sample_rate, 48_000.0);
        assert_eq!(s.info().datatype, "wav-f32");
        assert_eq!(s.info().total_samples, Some(300));
        let got = read_all(s.as_mut());
        assert_eq!(got.len(), 300);
        assert_eq!(got[299], Complex32::new(0.299, -0.1495));
    }

    #[test]
    fn a_wav_stream_with_a_placeholder_length_is_read_to_its_end() {
        let mut bytes = iq_wav(300);
        // What a writer that cannot seek back leaves: RIFF and data lengths of 0xFFFFFFFF.
        bytes[4..8].copy_from_slice(&[0xFF; 4]);
        let data = bytes.windows(4).position(|w| w == b"data").unwrap();
        bytes[data + 4..data + 8].copy_from_slice(&[0xFF; 4]);
        let mut s = stream(bytes, &InputOptions::default()).unwrap();
        assert_eq!(s.info().total_samples, None);
        assert_eq!(read_all(s.as_mut()).len(), 300);
    }

    #[test]
    fn raw_streams_still_need_their_format_and_an_explicit_format_wins() {
        let raw = vec![128u8, 128, 255, 0];
        let err = stream(raw.clone(), &InputOptions::default()).err().unwrap();
        assert!(err.to_string().contains("no RIFF header"), "{err}");
        let options = InputOptions {
            format: Some(SampleFormat::Cu8),
            rate: Some(1e3),
            ..InputOptions::default()
        };
        let mut s = stream(raw, &options).unwrap();
        assert_eq!(read_all(s.as_mut()).len(), 2);
        // A raw stream that happens to start with "RIFF" is read raw when --format says so.
        let mut s = stream(b"RIFFabcd".to_vec(), &options).unwrap();
        assert_eq!(read_all(s.as_mut()).len(), 4);
        let err = stream(Vec::new(), &InputOptions::default()).err().unwrap();
        assert!(matches!(err, Error::InvalidFile { .. }), "{err}");
    }
}

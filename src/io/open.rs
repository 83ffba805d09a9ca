//! Opens any supported input by its name: SigMF, IQ WAV, raw file or standard input.

use super::sigmf::sigmf_base;
use super::{IqSource, RawSource, SampleFormat, SigmfSource, WavIqSource};
use crate::{Error, Result};
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
///
/// `NAME.sigmf-`, `NAME.` and bare `NAME` also open a SigMF pair when `NAME.sigmf-meta`
/// exists and `path` itself is not a file. For SigMF and WAV, `options.rate` overrides the
/// file's rate (noted in the warnings) and `options.format`, if given, must match the file.
pub fn open_input(path: &Path, options: &InputOptions) -> Result<Box<dyn IqSource>> {
    if path.to_str().is_some_and(|p| p.starts_with("sound:")) && !path.exists() {
        return Err(Error::file(
            path,
            "a sound-card input is read by `amrx demod` (built with --features sound)",
        ));
    }
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
    if options.channel != 0 {
        return Err(Error::parameter(
            "channel",
            options.channel,
            "raw input holds one channel (use 0)",
        ));
    }
    let Some(format) = options.format else {
        return Err(Error::file(
            path,
            "unknown input type; give --format cu8|ci8|ci16_le|cf32_le and --rate",
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

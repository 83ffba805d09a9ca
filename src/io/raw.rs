//! Raw interleaved samples from a file or standard input, streamed.

use super::frames::{check_rate_parameter, no_samples, Codec, FrameReader};
use super::{IqSource, SampleFormat, SourceInfo};
use crate::{Complex32, Error, Result};
use std::io::Read;
use std::path::Path;

/// Reads raw samples of a given format from any reader.
pub struct RawSource {
    info: SourceInfo,
    frames: FrameReader,
}

impl RawSource {
    /// Opens `path` (`-` is standard input) as raw `format` at `rate`.
    ///
    /// An empty input is an error ("no samples"); for standard input this waits for the first
    /// byte. `total_samples` is known for files, not for standard input.
    pub fn open(path: &Path, format: SampleFormat, rate: f64) -> Result<Self> {
        check_rate_parameter(rate)?;
        if path == Path::new("-") {
            // Not `stdin().lock()`: the lock guard is not `Send`, and sources move between
            // threads. Reads are large, so locking per read costs nothing measurable.
            return Self::from_reader(Box::new(std::io::stdin()), path, format, rate);
        }
        let file = std::fs::File::open(path).map_err(|e| Error::io(path, e))?;
        let len = file.metadata().map_err(|e| Error::io(path, e))?.len();
        let bytes = format.bytes_per_sample();
        if len < bytes as u64 {
            return Err(no_samples(path, len, bytes));
        }
        let mut source = Self::from_reader(Box::new(file), path, format, rate)?;
        source.info.total_samples = Some(len / bytes as u64);
        source.frames.expect_bytes(len);
        Ok(source)
    }

    /// Reads raw `format` at `rate` from any reader; `path_label` names it in messages and in
    /// [`SourceInfo::path`]. An empty reader is an error ("no samples").
    pub fn from_reader(
        reader: Box<dyn Read + Send>,
        path_label: &Path,
        format: SampleFormat,
        rate: f64,
    ) -> Result<Self> {
        check_rate_parameter(rate)?;
        let mut frames = FrameReader::new(reader, path_label, Codec::Sigmf(format), 1, 0, None);
        if frames.is_empty()? {
            return Err(no_samples(path_label, 0, format.bytes_per_sample()));
        }
        let info = SourceInfo {
            path: path_label.to_path_buf(),
            datatype: format.name().to_string(),
            sample_rate: rate,
            centre_frequency: None,
            total_samples: None,
            num_channels: 1,
            channel: 0,
        };
        Ok(RawSource { info, frames })
    }
}

impl IqSource for RawSource {
    fn read(&mut self, buf: &mut [Complex32]) -> Result<usize> {
        self.frames.read(buf)
    }
    fn info(&self) -> &SourceInfo {
        &self.info
    }
    fn warnings(&self) -> Vec<String> {
        self.frames.warnings()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::io::Cursor;

    #[test]
    fn reads_from_any_reader_and_counts_trailing_bytes() {
        let bytes = vec![0u8, 255, 255, 0, 9];
        let mut src = RawSource::from_reader(
            Box::new(Cursor::new(bytes)),
            Path::new("-"),
            SampleFormat::Cu8,
            1e6,
        )
        .unwrap();
        let mut buf = [Complex32::new(0.0, 0.0); 4];
        assert_eq!(src.read(&mut buf).unwrap(), 2);
        assert_eq!(
            buf[..2],
            [Complex32::new(-1.0, 1.0), Complex32::new(1.0, -1.0)]
        );
        assert_eq!(src.read(&mut buf).unwrap(), 0);
        assert_eq!(
            src.warnings(),
            ["1 trailing byte ignored (not a whole sample)"]
        );
        assert_eq!(src.info().total_samples, None);
    }

    #[test]
    fn empty_reader_and_bad_rate_are_errors() {
        let empty = || Box::new(Cursor::new(Vec::<u8>::new()));
        let err = RawSource::from_reader(empty(), Path::new("-"), SampleFormat::Cu8, 1e6);
        assert!(
            matches!(err, Err(Error::InvalidFile { ref problem, .. }) if problem.contains("no samples"))
        );
        for rate in [0.0, -1.0, f64::NAN, f64::INFINITY] {
            let err = RawSource::from_reader(empty(), Path::new("-"), SampleFormat::Cu8, rate);
            assert!(matches!(
                err,
                Err(Error::InvalidParameter {
                    name: "sample_rate",
                    ..
                })
            ));
        }
    }
}

//! The streaming core shared by every source: reads whole frames (one sample of every channel)
//! from a buffered reader into one reusable byte buffer, decodes the wanted channel, replaces
//! non-finite values and keeps the counts behind the warnings.

use super::SampleFormat;
use crate::{Complex32, Error, Result};
use std::io::{BufRead, BufReader, ErrorKind, Read};
use std::path::{Path, PathBuf};

/// Capacity of the `BufReader` in front of every input; reads at least this large bypass it.
pub(crate) const READER_CAPACITY: usize = 256 * 1024;

/// Reads of at least this many bytes skip the `BufReader` when it holds nothing.
const DIRECT_READ_BYTES: usize = 64 * 1024;

/// Samples the byte buffer holds before a larger read asks it to grow.
const INITIAL_SAMPLES: usize = 16 * 1024;

/// The byte buffer never grows beyond this (or one frame, if larger): a read then returns
/// fewer samples than asked, which the `IqSource` contract allows.
const MAX_BUFFER_BYTES: usize = 64 * 1024 * 1024;

/// How the bytes of one channel sample turn into a complex value.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Codec {
    /// A SigMF datatype.
    Sigmf(SampleFormat),
    /// WAV 8-bit PCM pair: unsigned, offset 128, `x = (b − 128) / 128` (RIFF WAVE convention).
    WavU8,
    /// WAV 24-bit little-endian signed PCM pair, `x = v / 2²³`.
    WavI24,
}

impl Codec {
    fn bytes_per_sample(self) -> usize {
        match self {
            Codec::Sigmf(f) => f.bytes_per_sample(),
            Codec::WavU8 => 2,
            Codec::WavI24 => 6,
        }
    }

    fn is_float(self) -> bool {
        matches!(self, Codec::Sigmf(f) if f.is_float())
    }

    fn decode_slice(self, bytes: &[u8], out: &mut [Complex32]) -> usize {
        match self {
            Codec::Sigmf(f) => f.decode_slice(bytes, out),
            Codec::WavU8 => {
                let n = out.len().min(bytes.len() / 2);
                for (o, b) in out[..n].iter_mut().zip(bytes.chunks_exact(2)) {
                    let x = |v: u8| (v as f32 - 128.0) / 128.0;
                    *o = Complex32::new(x(b[0]), x(b[1]));
                }
                n
            }
            Codec::WavI24 => {
                let n = out.len().min(bytes.len() / 6);
                for (o, b) in out[..n].iter_mut().zip(bytes.chunks_exact(6)) {
                    // Place the 3 bytes in the top of an i32 and shift back to sign-extend.
                    let x = |v: &[u8]| {
                        (i32::from_le_bytes([0, v[0], v[1], v[2]]) >> 8) as f32 / 8_388_608.0
                    };
                    *o = Complex32::new(x(&b[..3]), x(&b[3..]));
                }
                n
            }
        }
    }
}

/// Reads frames of `channels` interleaved samples and keeps channel `channel`.
pub(crate) struct FrameReader {
    reader: BufReader<Box<dyn Read + Send>>,
    path: PathBuf,
    codec: Codec,
    channels: usize,
    channel: usize,
    frame_bytes: usize,
    bytes: Vec<u8>,
    filled: usize,
    byte_limit: Option<u64>,
    expected_bytes: Option<u64>,
    at_end: bool,
    non_finite: u64,
    trailing_bytes: usize,
}

impl FrameReader {
    /// Wraps `reader`; `byte_limit` stops reading after that many bytes (e.g. a WAV data chunk).
    /// The caller has checked `channel < channels` and that `channels` is small enough.
    pub(crate) fn new(
        reader: Box<dyn Read + Send>,
        path: &Path,
        codec: Codec,
        channels: usize,
        channel: usize,
        byte_limit: Option<u64>,
    ) -> Self {
        let frame_bytes = codec.bytes_per_sample() * channels;
        FrameReader {
            reader: BufReader::with_capacity(READER_CAPACITY, reader),
            path: path.to_path_buf(),
            codec,
            channels,
            channel,
            frame_bytes,
            bytes: vec![0; (INITIAL_SAMPLES * frame_bytes).clamp(frame_bytes, MAX_BUFFER_BYTES)],
            filled: 0,
            byte_limit,
            expected_bytes: byte_limit,
            at_end: false,
            non_finite: 0,
            trailing_bytes: 0,
        }
    }

    /// Declares how many bytes the stream should hold (a raw file's size at opening): reading
    /// stops there, and a stream that ends earlier is reported as truncated.
    pub(crate) fn expect_bytes(&mut self, bytes: u64) {
        self.byte_limit = Some(bytes);
        self.expected_bytes = Some(bytes);
    }

    /// True when the stream has no byte at all (waits for the first byte on a pipe).
    pub(crate) fn is_empty(&mut self) -> Result<bool> {
        if self.byte_limit == Some(0) {
            return Ok(true);
        }
        loop {
            match self.reader.fill_buf() {
                Ok(b) => return Ok(b.is_empty()),
                Err(e) if e.kind() == ErrorKind::Interrupted => continue,
                Err(e) => return Err(Error::io(&self.path, e)),
            }
        }
    }

    /// Reads up to `buf.len()` samples of the chosen channel; 0 at the end.
    pub(crate) fn read(&mut self, buf: &mut [Complex32]) -> Result<usize> {
        if buf.is_empty() || self.at_end {
            return Ok(0);
        }
        let most = (MAX_BUFFER_BYTES / self.frame_bytes).max(1);
        let wanted = buf.len().min(most) * self.frame_bytes;
        if self.bytes.len() < wanted {
            self.bytes.resize(wanted, 0);
        }
        self.fill_at_least_one_frame(wanted)?;
        let frames = self.filled / self.frame_bytes;
        let whole = frames * self.frame_bytes;
        self.decode(frames, &mut buf[..frames]);
        self.bytes.copy_within(whole..self.filled, 0);
        self.filled -= whole;
        Ok(frames)
    }

    /// Reads until at least one whole frame is held (or the end), without waiting for more
    /// than one read once a frame is there, so that a live pipe is not delayed.
    fn fill_at_least_one_frame(&mut self, wanted: usize) -> Result<()> {
        while self.filled < self.frame_bytes {
            let mut end = wanted;
            if let Some(limit) = self.byte_limit {
                end = end.min(self.filled + usize::try_from(limit).unwrap_or(usize::MAX));
            }
            let dst = &mut self.bytes[self.filled..end];
            // A large read into an empty buffer goes straight to the input: through the
            // `BufReader` a cu8 chunk (128 KiB, under its capacity) was copied once more
            // (callgrind on the am command: 9.6 M instructions of memcpy in 2 s).
            let read = if self.reader.buffer().is_empty() && dst.len() >= DIRECT_READ_BYTES {
                self.reader.get_mut().read(dst)
            } else {
                self.reader.read(dst)
            };
            let n = match read {
                Ok(n) => n,
                Err(e) if e.kind() == ErrorKind::Interrupted => continue,
                Err(e) => return Err(Error::io(&self.path, e)),
            };
            if n == 0 {
                self.at_end = true;
                self.trailing_bytes = self.filled;
                self.filled = 0;
                return Ok(());
            }
            self.filled += n;
            if let Some(limit) = self.byte_limit.as_mut() {
                *limit -= n as u64;
            }
        }
        Ok(())
    }

    fn decode(&mut self, frames: usize, out: &mut [Complex32]) {
        let bytes = &self.bytes[..frames * self.frame_bytes];
        if self.channels == 1 {
            self.codec.decode_slice(bytes, out);
        } else {
            let width = self.codec.bytes_per_sample();
            let offset = self.channel * width;
            for (o, frame) in out.iter_mut().zip(bytes.chunks_exact(self.frame_bytes)) {
                self.codec
                    .decode_slice(&frame[offset..offset + width], std::slice::from_mut(o));
            }
        }
        if self.codec.is_float() {
            self.non_finite += super::format::replace_non_finite(out);
        }
    }

    /// "N non-finite samples replaced with zero", "N trailing bytes ignored (...)".
    pub(crate) fn warnings(&self) -> Vec<String> {
        let mut warnings = Vec::new();
        if self.non_finite > 0 {
            warnings.push(format!(
                "{} non-finite {} replaced with zero",
                self.non_finite,
                plural(self.non_finite, "sample", "samples")
            ));
        }
        if let (Some(expected), Some(left)) = (self.expected_bytes, self.byte_limit) {
            if self.at_end && left > 0 {
                let read = expected - left;
                let frame = self.frame_bytes as u64;
                warnings.push(format!(
                    "the data ended after {read} of {expected} bytes ({} of {} samples): the file \
                     is shorter than its header or metadata says, or shrank while being read",
                    read / frame,
                    expected / frame
                ));
            }
        }
        if self.trailing_bytes > 0 {
            warnings.push(format!(
                "{} trailing {} ignored (not a whole sample)",
                self.trailing_bytes,
                plural(self.trailing_bytes as u64, "byte", "bytes")
            ));
        }
        warnings
    }
}

fn plural(n: u64, one: &'static str, many: &'static str) -> &'static str {
    if n == 1 {
        one
    } else {
        many
    }
}

/// Checks a sample rate given on the command line.
pub(crate) fn check_rate_parameter(rate: f64) -> Result<f64> {
    // Bounds: 1 Hz to 1e12 Hz, those of SigMF's writer; common practice, no source.
    if (1.0..=1e12).contains(&rate) {
        Ok(rate)
    } else {
        Err(Error::parameter(
            "sample_rate",
            format!("{rate:e}"),
            "sample rate must be within 1 Hz to 1e12 Hz",
        ))
    }
}

/// "no samples" with the reason when the data is shorter than one sample.
pub(crate) fn no_samples(path: &Path, bytes: u64, frame_bytes: usize) -> Error {
    if bytes == 0 {
        Error::file(path, "no samples (empty)")
    } else {
        Error::file(
            path,
            format!(
                "no samples ({bytes} {}, less than one {frame_bytes}-byte sample)",
                plural(bytes, "byte", "bytes")
            ),
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{rngs::StdRng, RngExt, SeedableRng};

    /// A reader that hands out at most `step` bytes per call, like a slow pipe.
    struct Trickle {
        data: Vec<u8>,
        pos: usize,
        step: usize,
    }

    impl Read for Trickle {
        fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
            let n = buf.len().min(self.step).min(self.data.len() - self.pos);
            buf[..n].copy_from_slice(&self.data[self.pos..self.pos + n]);
            self.pos += n;
            Ok(n)
        }
    }

    fn reader(data: Vec<u8>, step: usize, codec: Codec, channels: usize, ch: usize) -> FrameReader {
        let src = Box::new(Trickle { data, pos: 0, step });
        FrameReader::new(src, Path::new("t"), codec, channels, ch, None)
    }

    fn read_all(r: &mut FrameReader, sizes: &mut impl FnMut() -> usize) -> Vec<Complex32> {
        let mut all = Vec::new();
        loop {
            let mut buf = vec![Complex32::new(9.0, 9.0); sizes()];
            let n = r.read(&mut buf).unwrap();
            if n == 0 && !buf.is_empty() {
                return all;
            }
            all.extend_from_slice(&buf[..n]);
        }
    }

    #[test]
    fn output_does_not_depend_on_read_sizes_or_pipe_pieces() {
        let mut rng = StdRng::seed_from_u64(11);
        let data: Vec<u8> = (0..3 * 4 * 500 + 5).map(|_| rng.random()).collect();
        let codec = Codec::Sigmf(SampleFormat::Ci16Le);
        let reference = read_all(
            &mut reader(data.clone(), usize::MAX, codec, 3, 1),
            &mut || 4096,
        );
        assert_eq!(reference.len(), 500);
        for step in [1, 3, 13, 4096] {
            for size in [1, 7, 1000] {
                let mut r = reader(data.clone(), step, codec, 3, 1);
                assert_eq!(read_all(&mut r, &mut || size), reference);
                assert_eq!(
                    r.warnings(),
                    ["5 trailing bytes ignored (not a whole sample)"]
                );
            }
            let mut sizes = || rng.random_range(0..300usize);
            let mut r = reader(data.clone(), step, codec, 3, 1);
            assert_eq!(read_all(&mut r, &mut sizes), reference);
        }
    }

    #[test]
    fn byte_limit_stops_before_what_follows() {
        let data = vec![255u8, 0, 255, 0, 7, 7, 7];
        let src = Box::new(std::io::Cursor::new(data));
        let codec = Codec::Sigmf(SampleFormat::Cu8);
        let mut r = FrameReader::new(src, Path::new("t"), codec, 1, 0, Some(4));
        let mut buf = [Complex32::new(0.0, 0.0); 8];
        assert_eq!(r.read(&mut buf).unwrap(), 2);
        assert_eq!(r.read(&mut buf).unwrap(), 0);
        assert!(r.warnings().is_empty());
    }

    #[test]
    fn buffer_stays_bounded_for_wide_frames_and_huge_reads() {
        // 65536 channels of cf64_le: 1 MiB frames.
        let codec = Codec::Sigmf(SampleFormat::Cf64Le);
        let frame = 65536 * 16;
        let mut r = reader(vec![0; 70 * frame], usize::MAX, codec, 65536, 5);
        assert!(r.bytes.len() <= MAX_BUFFER_BYTES);
        let mut buf = vec![Complex32::new(1.0, 1.0); 100];
        assert_eq!(r.read(&mut buf).unwrap(), MAX_BUFFER_BYTES / frame);
        assert_eq!(r.bytes.len(), MAX_BUFFER_BYTES);
    }

    #[test]
    fn wav_codecs_decode_known_codes() {
        let mut out = [Complex32::new(0.0, 0.0); 1];
        Codec::WavU8.decode_slice(&[0, 192], &mut out);
        assert_eq!(out[0], Complex32::new(-1.0, 0.5));
        Codec::WavI24.decode_slice(&[0, 0, 0x80, 0xFF, 0xFF, 0x3F], &mut out);
        assert_eq!(out[0], Complex32::new(-1.0, 0.5 - 1.0 / 8_388_608.0));
    }
}

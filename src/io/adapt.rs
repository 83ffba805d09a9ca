//! What the user asks of any input's stream, whatever its origin (file, standard input, or a
//! live source): swap I and Q, start some seconds in, stop after a duration, give the centre
//! frequency a raw capture does not carry.
//!
//! [`open_input`](super::open_input) applies these to every source it opens; a source opened
//! another way (a sound card, a network stream) gets the same treatment from [`adapt_source`].

use super::{IqSource, SourceInfo};
use crate::{Complex32, Error, Result};

/// Samples discarded per read while skipping to the start.
const SKIP_PIECE: usize = 1 << 14;

/// Stream options that apply to every source. `Default` changes nothing.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct StreamOptions {
    /// Exchange I and Q (some front ends deliver them swapped: the spectrum is mirrored).
    pub swap_iq: bool,
    /// Seconds of input to skip first (0 or more).
    pub start_s: f64,
    /// Seconds to deliver after the start (above 0); to the end of the input when `None`.
    pub duration_s: Option<f64>,
    /// Centre frequency of the recording in Hz, for inputs that do not carry one (raw
    /// captures); overrides a recorded one, with a warning.
    pub centre_hz: Option<f64>,
}

impl StreamOptions {
    /// Whether these options change anything.
    pub fn is_identity(&self) -> bool {
        *self == StreamOptions::default()
    }

    /// Checks the values without opening anything.
    pub fn validate(&self) -> Result<()> {
        if !(self.start_s.is_finite() && self.start_s >= 0.0) {
            return Err(Error::parameter(
                "start_s",
                self.start_s,
                "must be a time of 0 s or more",
            ));
        }
        if let Some(d) = self.duration_s {
            if !(d.is_finite() && d > 0.0) {
                return Err(Error::parameter(
                    "duration_s",
                    d,
                    "must be a time above 0 s",
                ));
            }
        }
        if let Some(c) = self.centre_hz {
            if !c.is_finite() {
                return Err(Error::parameter(
                    "centre_hz",
                    c,
                    "must be a finite frequency in Hz",
                ));
            }
        }
        Ok(())
    }
}

/// Wraps `source` so that it honours `options`; returns it unchanged when they change nothing.
///
/// A start beyond the end of an input of known length is refused here; for a stream it is
/// refused by the read that reaches the end while skipping. Skipping reads and discards (any
/// source can do that, a live one included).
///
/// ```
/// use amrx::io::{adapt_source, IqSource, RawSource, SampleFormat, StreamOptions};
/// # fn main() -> amrx::Result<()> {
/// // Four cu8 samples at 4 S/s: skip 0.5 s, keep 0.25 s, swap I and Q.
/// let bytes = vec![128u8, 128, 128, 128, 255, 128, 128, 128];
/// let raw = RawSource::from_reader(
///     Box::new(std::io::Cursor::new(bytes)),
///     std::path::Path::new("-"),
///     SampleFormat::Cu8,
///     4.0,
/// )?;
/// let options = StreamOptions { swap_iq: true, start_s: 0.5, duration_s: Some(0.25), centre_hz: None };
/// let mut source = adapt_source(Box::new(raw), &options)?;
/// let mut buf = [amrx::Complex32::default(); 4];
/// assert_eq!(source.read(&mut buf)?, 1);
/// assert!(buf[0].re.abs() < 0.01 && buf[0].im > 0.99);
/// assert_eq!(source.read(&mut buf)?, 0);
/// # Ok(())
/// # }
/// ```
pub fn adapt_source(
    source: Box<dyn IqSource>,
    options: &StreamOptions,
) -> Result<Box<dyn IqSource>> {
    options.validate()?;
    if options.is_identity() {
        return Ok(source);
    }
    let rate = source.info().sample_rate;
    let skip = (options.start_s * rate).round() as u64;
    let keep = options
        .duration_s
        .map(|d| (d * rate).round().max(1.0) as u64);
    let mut info = source.info().clone();
    let mut notes = Vec::new();
    if let Some(total) = info.total_samples {
        if options.start_s > 0.0 && skip >= total {
            return Err(beyond_end(options.start_s, total as f64 / rate));
        }
        let after = total.saturating_sub(skip);
        info.total_samples = Some(keep.map_or(after, |k| k.min(after)));
    }
    if let Some(centre) = options.centre_hz {
        if let Some(recorded) = info.centre_frequency {
            if recorded != centre {
                notes.push(format!(
                    "centre frequency {centre} Hz given; the recording says {recorded} Hz"
                ));
            }
        }
        info.centre_frequency = Some(centre);
    }
    Ok(Box::new(Adapted {
        inner: source,
        info,
        swap_iq: options.swap_iq,
        start_s: options.start_s,
        skip,
        skipped: 0,
        left: keep,
        notes,
    }))
}

fn beyond_end(start_s: f64, length_s: f64) -> Error {
    Error::parameter(
        "start_s",
        start_s,
        format!("lies beyond the end of the input ({length_s:.3} s)"),
    )
}

/// A source seen through [`StreamOptions`].
struct Adapted {
    inner: Box<dyn IqSource>,
    info: SourceInfo,
    swap_iq: bool,
    start_s: f64,
    /// Samples still to discard before the first delivered one.
    skip: u64,
    /// Samples discarded so far.
    skipped: u64,
    /// Samples still to deliver (`None`: to the end).
    left: Option<u64>,
    notes: Vec<String>,
}

impl Adapted {
    fn skip_to_start(&mut self, buf: &mut [Complex32]) -> Result<()> {
        while self.skip > 0 {
            let want = (self.skip.min(SKIP_PIECE as u64) as usize).min(buf.len());
            let n = self.inner.read(&mut buf[..want])?;
            if n == 0 {
                return Err(beyond_end(
                    self.start_s,
                    self.skipped as f64 / self.info.sample_rate,
                ));
            }
            self.skip -= n as u64;
            self.skipped += n as u64;
        }
        Ok(())
    }
}

impl IqSource for Adapted {
    fn read(&mut self, buf: &mut [Complex32]) -> Result<usize> {
        if buf.is_empty() {
            return Ok(0);
        }
        self.skip_to_start(buf)?;
        let want = self.left.map_or(buf.len(), |l| {
            buf.len().min(l.min(usize::MAX as u64) as usize)
        });
        if want == 0 {
            return Ok(0);
        }
        let n = self.inner.read(&mut buf[..want])?;
        if let Some(l) = self.left.as_mut() {
            *l -= n as u64;
        }
        if self.swap_iq {
            for s in &mut buf[..n] {
                *s = Complex32::new(s.im, s.re);
            }
        }
        Ok(n)
    }

    fn info(&self) -> &SourceInfo {
        &self.info
    }

    fn warnings(&self) -> Vec<String> {
        let mut all = self.inner.warnings();
        all.extend(self.notes.iter().cloned());
        all
    }

    fn annotations(&self) -> &[super::SigmfAnnotation] {
        self.inner.annotations()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::io::{RawSource, SampleFormat};
    use std::path::Path;

    /// A stream of cf32 samples `k + j·(-k)` for k = 0..n, of unknown length.
    fn ramp(n: usize, rate: f64) -> Box<dyn IqSource> {
        let mut bytes = Vec::new();
        for k in 0..n {
            bytes.extend_from_slice(&(k as f32).to_le_bytes());
            bytes.extend_from_slice(&(-(k as f32)).to_le_bytes());
        }
        Box::new(
            RawSource::from_reader(
                Box::new(std::io::Cursor::new(bytes)),
                Path::new("-"),
                SampleFormat::Cf32Le,
                rate,
            )
            .unwrap(),
        )
    }

    fn read_all(source: &mut dyn IqSource, chunk: usize) -> Result<Vec<Complex32>> {
        let mut all = Vec::new();
        let mut buf = vec![Complex32::default(); chunk];
        loop {
            let n = source.read(&mut buf)?;
            if n == 0 {
                return Ok(all);
            }
            all.extend_from_slice(&buf[..n]);
        }
    }

    #[test]
    fn start_and_duration_cut_the_stream_in_any_read_size() {
        let options = StreamOptions {
            start_s: 0.37,
            duration_s: Some(0.25),
            ..StreamOptions::default()
        };
        for chunk in [1, 7, 64, 1000] {
            let mut s = adapt_source(ramp(1000, 100.0), &options).unwrap();
            let got = read_all(s.as_mut(), chunk).unwrap();
            let want: Vec<Complex32> = (37..62)
                .map(|k| Complex32::new(k as f32, -(k as f32)))
                .collect();
            assert_eq!(got, want, "read size {chunk}");
        }
    }

    #[test]
    fn swap_exchanges_i_and_q_and_mirrors_a_tone() {
        let options = StreamOptions {
            swap_iq: true,
            ..StreamOptions::default()
        };
        let mut s = adapt_source(ramp(5, 1.0), &options).unwrap();
        let got = read_all(s.as_mut(), 3).unwrap();
        assert_eq!(got[3], Complex32::new(-3.0, 3.0));
        // (I, Q) → (Q, I) is j·conj(x): a tone e^{jωn} becomes j·e^{-jωn}, at −ω.
        let x = Complex32::from_polar(1.0, 0.7);
        let swapped = Complex32::new(x.im, x.re);
        let expected = Complex32::new(0.0, 1.0) * x.conj();
        assert!((swapped - expected).norm() < 1e-6);
    }

    #[test]
    fn a_start_past_the_end_names_the_length_for_streams_and_files() {
        let options = StreamOptions {
            start_s: 20.0,
            ..StreamOptions::default()
        };
        // A stream (length unknown): refused by the read that runs out.
        let mut s = adapt_source(ramp(1000, 100.0), &options).unwrap();
        let err = read_all(s.as_mut(), 64).unwrap_err();
        assert!(
            matches!(&err, Error::InvalidParameter { name: "start_s", problem, .. }
                if problem.contains("10.000 s")),
            "{err}"
        );
        // Known length: refused at once.
        let mut source = ramp(1000, 100.0);
        let mut info = source.info().clone();
        info.total_samples = Some(1000);
        source = Box::new(WithInfo(source, info));
        assert!(adapt_source(source, &options).is_err());
    }

    #[test]
    fn total_and_centre_follow_the_options() {
        let mut source = ramp(1000, 100.0);
        let mut info = source.info().clone();
        info.total_samples = Some(1000);
        info.centre_frequency = Some(7.0e6);
        source = Box::new(WithInfo(source, info));
        let options = StreamOptions {
            start_s: 9.5,
            duration_s: Some(3.0),
            centre_hz: Some(7.1e6),
            ..StreamOptions::default()
        };
        let s = adapt_source(source, &options).unwrap();
        assert_eq!(s.info().total_samples, Some(50));
        assert_eq!(s.info().centre_frequency, Some(7.1e6));
        assert!(s.warnings().iter().any(|w| w.contains("7000000 Hz")));
    }

    #[test]
    fn bad_values_are_refused_by_name() {
        for (options, name) in [
            (
                StreamOptions {
                    start_s: -1.0,
                    ..StreamOptions::default()
                },
                "start_s",
            ),
            (
                StreamOptions {
                    duration_s: Some(0.0),
                    ..StreamOptions::default()
                },
                "duration_s",
            ),
            (
                StreamOptions {
                    duration_s: Some(f64::NAN),
                    ..StreamOptions::default()
                },
                "duration_s",
            ),
            (
                StreamOptions {
                    centre_hz: Some(f64::INFINITY),
                    ..StreamOptions::default()
                },
                "centre_hz",
            ),
        ] {
            let err = adapt_source(ramp(10, 1.0), &options).err().unwrap();
            assert!(
                matches!(err, Error::InvalidParameter { name: n, .. } if n == name),
                "{err}"
            );
        }
    }

    /// A source with its info replaced (to give a stream a known length).
    struct WithInfo(Box<dyn IqSource>, SourceInfo);

    impl IqSource for WithInfo {
        fn read(&mut self, buf: &mut [Complex32]) -> Result<usize> {
            self.0.read(buf)
        }
        fn info(&self) -> &SourceInfo {
            &self.1
        }
        fn warnings(&self) -> Vec<String> {
            self.0.warnings()
        }
    }
}

//! One pass over a recording: the averaged spectrum, the spectrum of the squared signal and a
//! waterfall of shorter averages, all from the same Welch frames.
//!
//! The average is [`PowerSpectrum`] itself (so it is the spectrum `scipy.signal.welch` gives, see
//! `tests/measure_spectrum_welch.rs`); each waterfall row is the difference of the accumulated
//! sums at two frame counts, so the rows partition the frames of the average exactly.

use crate::measure::PowerSpectrum;
use crate::{Complex32, Result};
use num_complex::Complex64;

/// Time constant of the running mean taken off before squaring, s: long against any audio
/// period, short against a recording (common practice, no source).
pub const DC_TIME_CONSTANT_S: f64 = 0.05;

/// Finest analysis bin wanted, Hz: fine enough to split a carrier from speech sidebands 300 Hz
/// away and to see a 2.5 kHz SSB channel's shape (common practice, no source).
pub const TARGET_BIN_HZ: f64 = 60.0;
/// Shortest and longest transform.
const MIN_FFT: usize = 256;
const MAX_FFT: usize = 1 << 16;
/// Wanted duration of one waterfall row, s (common practice, no source).
pub const TARGET_ROW_S: f64 = 0.1;
/// Most waterfall values kept (f32): 64 MiB. Past it, neighbouring rows are merged in pairs,
/// so memory stays bounded on a recording of any length and the time resolution coarsens.
const MAX_ROW_VALUES: usize = 1 << 24;

/// The transform length for a sample rate: the shortest power of two giving bins of at most
/// [`TARGET_BIN_HZ`], within 256 ..= 65536.
pub fn scan_fft_len(sample_rate: f64) -> usize {
    let want = (sample_rate / TARGET_BIN_HZ).ceil();
    let want = if want.is_finite() && want > 0.0 {
        want.min(MAX_FFT as f64) as usize
    } else {
        MIN_FFT
    };
    want.next_power_of_two().clamp(MIN_FFT, MAX_FFT)
}

/// What one pass gathered. Spectra are in ascending frequency: index i is at
/// (i − N/2)·bin_hz, from −fs/2 up to fs/2 − bin_hz.
#[derive(Debug, Clone, PartialEq)]
pub struct BandRecord {
    /// Sample rate, Hz.
    pub sample_rate: f64,
    /// Transform length N.
    pub fft_len: usize,
    /// Samples pushed.
    pub samples: u64,
    /// Frames averaged.
    pub frames: usize,
    /// Welch average, power density (full scale² per Hz).
    pub average: Vec<f64>,
    /// Welch average of x² (the squared signal), same bins.
    pub squared: Vec<f64>,
    /// Waterfall rows, each `fft_len` densities, row after row.
    pub rows: Vec<f32>,
    /// Frames in each row.
    pub row_frames: Vec<usize>,
    /// Correlation of successive frames' windows (1/6 for Hann at 50 % overlap).
    pub overlap_correlation: f64,
}

impl BandRecord {
    /// Bin width, Hz.
    pub fn bin_hz(&self) -> f64 {
        self.sample_rate / self.fft_len as f64
    }

    /// Frequency of bin `i` (ascending order), Hz.
    pub fn frequency(&self, i: usize) -> f64 {
        (i as f64 - (self.fft_len / 2) as f64) * self.bin_hz()
    }

    /// The bin nearest `frequency_hz`, clamped into the spectrum.
    pub fn bin_of(&self, frequency_hz: f64) -> usize {
        let i = (frequency_hz / self.bin_hz()).round() + (self.fft_len / 2) as f64;
        if i.is_finite() {
            i.clamp(0.0, (self.fft_len - 1) as f64) as usize
        } else {
            0
        }
    }

    /// Frame hop, samples.
    pub fn hop(&self) -> usize {
        self.fft_len / 2
    }

    /// Number of waterfall rows.
    pub fn row_count(&self) -> usize {
        self.row_frames.len()
    }

    /// Row `r` (ascending frequency).
    pub fn row(&self, r: usize) -> &[f32] {
        &self.rows[r * self.fft_len..(r + 1) * self.fft_len]
    }

    /// Equivalent degrees of freedom of an average of `frames` overlapping frames of complex
    /// data: 2K/(1 + 2c²), c the overlap correlation (Welch 1967, eq. for the variance of the
    /// averaged periodogram with 50 % overlap).
    pub fn degrees_of_freedom(&self, frames: usize) -> f64 {
        let c = self.overlap_correlation;
        2.0 * frames.max(1) as f64 / (1.0 + 2.0 * c * c)
    }

    /// Time in seconds of the boundary before row `r` (row `row_count()` is the end): the
    /// point halfway through the overlap of the last frame of one row and the first of the next,
    /// clamped to the recording.
    pub fn row_boundary_s(&self, r: usize) -> f64 {
        let duration = self.samples as f64 / self.sample_rate;
        if r == 0 {
            return 0.0;
        }
        if r >= self.row_count() {
            return duration;
        }
        let frames: usize = self.row_frames[..r].iter().sum();
        let t = (frames * self.hop() + self.hop() / 2) as f64 / self.sample_rate;
        t.min(duration)
    }

    /// First sample of frame-based row `r` and the sample after its last frame ends.
    pub fn row_samples(&self, r: usize) -> (u64, u64) {
        let before: usize = self.row_frames[..r].iter().sum();
        let start = (before * self.hop()) as u64;
        let frames = self.row_frames.get(r).copied().unwrap_or(0);
        let end = if frames == 0 {
            start
        } else {
            ((before + frames - 1) * self.hop() + self.fft_len) as u64
        };
        (start.min(self.samples), end.min(self.samples))
    }
}

/// Gathers a [`BandRecord`] from samples pushed in pieces of any size (chunk-invariant: the
/// frames start every N/2 samples from the first sample, whatever the split).
pub struct BandRecorder {
    spectrum: PowerSpectrum,
    squared: PowerSpectrum,
    scratch: Vec<Complex32>,
    frames_per_row: usize,
    samples: u64,
    /// Accumulated density × frames at the last row boundary (FFT order).
    last_sum: Vec<f64>,
    last_frames: usize,
    now: Vec<f64>,
    rows: Vec<f32>,
    row_frames: Vec<usize>,
    max_rows: usize,
    dc: Complex64,
    dc_alpha: f64,
}

impl std::fmt::Debug for BandRecorder {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("BandRecorder")
            .field("fft_len", &self.spectrum.fft_len())
            .field("frames_per_row", &self.frames_per_row)
            .field("rows", &self.row_frames.len())
            .finish_non_exhaustive()
    }
}

impl BandRecorder {
    /// A recorder for `sample_rate` with the transform length of [`scan_fft_len`].
    ///
    /// ```
    /// use amrx::band::BandRecorder;
    /// use amrx::Complex32;
    /// let mut r = BandRecorder::new(48_000.0)?;
    /// r.push(&vec![Complex32::new(0.1, 0.0); 48_000]);
    /// let record = r.finish();
    /// assert_eq!(record.fft_len, 1024);
    /// assert!(record.row_count() >= 9);
    /// # Ok::<(), amrx::Error>(())
    /// ```
    pub fn new(sample_rate: f64) -> Result<Self> {
        Self::with_fft_len(sample_rate, scan_fft_len(sample_rate))
    }

    /// A recorder with a chosen transform length (a power of two ≥ 16).
    pub fn with_fft_len(sample_rate: f64, fft_len: usize) -> Result<Self> {
        let spectrum = PowerSpectrum::new(fft_len, sample_rate)?;
        let squared = PowerSpectrum::new(fft_len, sample_rate)?;
        let hop = (fft_len / 2) as f64;
        let frames_per_row = ((TARGET_ROW_S * sample_rate / hop).round() as usize).max(1);
        Ok(BandRecorder {
            spectrum,
            squared,
            scratch: vec![Complex32::default(); fft_len / 2],
            frames_per_row,
            samples: 0,
            last_sum: vec![0.0; fft_len],
            last_frames: 0,
            now: vec![0.0; fft_len],
            rows: Vec::new(),
            row_frames: Vec::new(),
            max_rows: (MAX_ROW_VALUES / fft_len).max(64),
            dc: Complex64::default(),
            dc_alpha: 1.0 / (DC_TIME_CONSTANT_S * sample_rate).max(1.0),
        })
    }

    /// Adds samples.
    pub fn push(&mut self, samples: &[Complex32]) {
        let hop = self.scratch.len();
        let mut rest = samples;
        while !rest.is_empty() {
            // Pieces end on multiples of the hop, so at most one frame completes per piece.
            let room = hop - (self.samples % hop as u64) as usize;
            let take = room.min(rest.len());
            let (piece, tail) = rest.split_at(take);
            self.spectrum.push(piece);
            // The squared path runs on the signal less its running mean, so that the receiver's
            // DC offset times each carrier puts no line at the carrier in x².
            let alpha = self.dc_alpha;
            for (s, x) in self.scratch.iter_mut().zip(piece) {
                let finite = x.re.is_finite() && x.im.is_finite();
                let z = if finite {
                    Complex64::new(f64::from(x.re), f64::from(x.im))
                } else {
                    Complex64::default()
                };
                self.dc += alpha * (z - self.dc);
                let y = z - self.dc;
                let sq = y * y;
                *s = Complex32::new(sq.re as f32, sq.im as f32);
            }
            self.squared.push(&self.scratch[..take]);
            self.samples += take as u64;
            rest = tail;
            if self.spectrum.frames() - self.last_frames >= self.frames_per_row {
                self.close_row();
            }
        }
    }

    fn close_row(&mut self) {
        let frames = self.spectrum.frames();
        let new = frames - self.last_frames;
        if new == 0 {
            return;
        }
        self.spectrum.density_into(&mut self.now);
        let n = self.now.len();
        let half = n / 2;
        let start = self.rows.len();
        self.rows.resize(start + n, 0.0);
        for k in 0..n {
            let sum = self.now[k] * frames as f64;
            let row = (sum - self.last_sum[k]) / new as f64;
            // FFT order → ascending frequency.
            self.rows[start + (k + half) % n] = row.max(0.0) as f32;
            self.last_sum[k] = sum;
        }
        self.last_frames = frames;
        self.row_frames.push(new);
        if self.row_frames.len() >= self.max_rows && self.row_frames.len() % 2 == 0 {
            self.merge_rows();
        }
    }

    /// Halves the row count: pairs of rows become their frame-weighted mean.
    fn merge_rows(&mut self) {
        let n = self.now.len();
        let pairs = self.row_frames.len() / 2;
        for p in 0..pairs {
            let (fa, fb) = (self.row_frames[2 * p], self.row_frames[2 * p + 1]);
            let total = (fa + fb) as f32;
            for k in 0..n {
                let a = self.rows[2 * p * n + k];
                let b = self.rows[(2 * p + 1) * n + k];
                self.rows[p * n + k] = (a * fa as f32 + b * fb as f32) / total;
            }
            self.row_frames[p] = fa + fb;
        }
        self.rows.truncate(pairs * n);
        self.row_frames.truncate(pairs);
        self.frames_per_row *= 2;
    }

    /// Ends the pass: the last partial row is kept, and the spectra are read out.
    pub fn finish(mut self) -> BandRecord {
        self.close_row();
        let n = self.spectrum.fft_len();
        let ascending = |fft_order: Vec<f64>| -> Vec<f64> {
            (0..n).map(|i| fft_order[(i + n / 2) % n]).collect()
        };
        BandRecord {
            sample_rate: self.spectrum.sample_rate(),
            fft_len: n,
            samples: self.samples,
            frames: self.spectrum.frames(),
            average: ascending(self.spectrum.density()),
            squared: ascending(self.squared.density()),
            rows: self.rows,
            row_frames: self.row_frames,
            overlap_correlation: self.spectrum.overlap_correlation(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{rngs::StdRng, RngExt, SeedableRng};

    // Seeded complex noise, each component uniform in [−1, 1).
    use crate::dsp::test_util::random_complex as noise;

    #[test]
    fn transform_length_follows_the_rate() {
        assert_eq!(scan_fft_len(960e3), 16384);
        assert_eq!(scan_fft_len(2.4e6), 65536);
        assert_eq!(scan_fft_len(48e3), 1024);
        assert_eq!(scan_fft_len(1e3), 256);
        assert_eq!(scan_fft_len(f64::NAN), 256);
    }

    #[test]
    fn rows_partition_the_average_and_chunking_does_not_matter() {
        let x = noise(40_000, 3);
        let mut whole = BandRecorder::with_fft_len(8e3, 256).unwrap();
        whole.push(&x);
        let whole = whole.finish();
        let mut pieces = BandRecorder::with_fft_len(8e3, 256).unwrap();
        let mut rng = StdRng::seed_from_u64(5);
        let mut at = 0;
        while at < x.len() {
            let n = rng.random_range(0..900usize).min(x.len() - at);
            pieces.push(&x[at..at + n]);
            at += n;
        }
        let pieces = pieces.finish();
        assert_eq!(whole, pieces);
        assert_eq!(whole.row_frames.iter().sum::<usize>(), whole.frames);
        // Frame-weighted mean of the rows is the average (to f32 rounding of the rows).
        for i in (0..256).step_by(17) {
            let mean: f64 = (0..whole.row_count())
                .map(|r| f64::from(whole.row(r)[i]) * whole.row_frames[r] as f64)
                .sum::<f64>()
                / whole.frames as f64;
            assert!((mean / whole.average[i] - 1.0).abs() < 1e-5, "bin {i}");
        }
    }

    #[test]
    fn a_tone_lands_in_its_bin_and_its_square_at_twice_the_frequency() {
        let fs = 8e3;
        let f = 1000.0;
        let x: Vec<Complex32> = (0..20_000)
            .map(|n| {
                let p = 2.0 * std::f64::consts::PI * f * n as f64 / fs;
                Complex32::new(p.cos() as f32, p.sin() as f32)
            })
            .collect();
        let mut r = BandRecorder::with_fft_len(fs, 256).unwrap();
        r.push(&x);
        let rec = r.finish();
        let peak = |v: &[f64]| (0..v.len()).max_by(|&a, &b| v[a].total_cmp(&v[b])).unwrap();
        assert_eq!(rec.frequency(peak(&rec.average)), f);
        assert_eq!(rec.frequency(peak(&rec.squared)), 2.0 * f);
        assert_eq!(rec.bin_of(f), peak(&rec.average));
    }

    #[test]
    fn rows_merge_to_keep_memory_bounded() {
        let mut r = BandRecorder::with_fft_len(1e3, 16).unwrap();
        r.max_rows = 8;
        r.push(&noise(4000, 1));
        let rec = r.finish();
        assert!(rec.row_count() <= 9, "{}", rec.row_count());
        assert_eq!(rec.row_frames.iter().sum::<usize>(), rec.frames);
        let (s, e) = rec.row_samples(rec.row_count() - 1);
        assert!(s < e && e <= 4000);
    }
}

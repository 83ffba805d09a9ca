//! Averaged power spectrum (Welch's method, Hann window, 50 % overlap) of a complex stream.
//!
//! Method: P. D. Welch, "The use of fast Fourier transform for the estimation of power spectra",
//! IEEE Trans. Audio Electroacoust. AU-15 (1967). Each frame of N samples is multiplied by a
//! periodic Hann window, transformed, and |X_k|² averaged over frames; the density is
//! |X_k|² / (fs·Σw²), the same normalisation as `scipy.signal.welch(scaling='density')`.
//! No detrending is applied (scipy's `detrend=False`).

use std::collections::BTreeMap;
use std::sync::{Arc, Mutex};

use num_complex::Complex64;
use rustfft::{Fft, FftPlanner};

use crate::{Complex32, Error, Result, Sample};

/// Plans a forward f64 FFT of `len` points: the one place the measure module plans transforms.
/// One planner serves the whole process, so a length planned once (every receiver's spectrum,
/// every lab trial's fit) is not planned again: callgrind on one point of a lab sweep counted
/// the plans' twiddle tables at 7 M of 410 M instructions.
pub(crate) fn plan_forward(len: usize) -> Arc<dyn Fft<f64>> {
    static PLANNER: Mutex<Option<FftPlanner<f64>>> = Mutex::new(None);
    let mut planner = PLANNER
        .lock()
        .unwrap_or_else(|poisoned| poisoned.into_inner());
    planner
        .get_or_insert_with(FftPlanner::new)
        .plan_fft_forward(len)
}

/// Periodic Hann window w[n] = 0.5 − 0.5·cos(2πn/N) (scipy's `get_window('hann', N)`), each
/// length computed once per process (callgrind on one point of a lab sweep: the windows'
/// cosines were 18 M of 410 M instructions).
pub(crate) fn periodic_hann(len: usize) -> Arc<[f64]> {
    static WINDOWS: Mutex<BTreeMap<usize, Arc<[f64]>>> = Mutex::new(BTreeMap::new());
    let mut windows = WINDOWS
        .lock()
        .unwrap_or_else(|poisoned| poisoned.into_inner());
    let window = windows.entry(len).or_insert_with(|| {
        (0..len)
            .map(|n| 0.5 - 0.5 * (2.0 * std::f64::consts::PI * n as f64 / len as f64).cos())
            .collect()
    });
    Arc::clone(window)
}

/// Accumulates the averaged periodogram of a complex stream pushed in pieces of any size.
///
/// Frames start every N/2 samples from the first sample pushed, so the frames (and the result)
/// are the same however the stream is split. Non-finite samples are counted as zero.
pub struct PowerSpectrum {
    fft_len: usize,
    sample_rate: f64,
    window: Arc<[f64]>,
    window_power: f64,
    pending: Vec<Complex32>,
    filled: usize,
    frame: Vec<Complex64>,
    fft_scratch: Vec<Complex64>,
    fft: Arc<dyn Fft<f64>>,
    accumulated: Vec<f64>,
    frames: usize,
}

impl std::fmt::Debug for PowerSpectrum {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("PowerSpectrum")
            .field("fft_len", &self.fft_len)
            .field("sample_rate", &self.sample_rate)
            .field("frames", &self.frames)
            .finish_non_exhaustive()
    }
}

impl PowerSpectrum {
    /// A spectrum of `fft_len` bins (a power of two ≥ 16) at `sample_rate`.
    pub fn new(fft_len: usize, sample_rate: f64) -> Result<Self> {
        if fft_len < 16 || !fft_len.is_power_of_two() {
            return Err(Error::parameter(
                "fft length",
                fft_len,
                "must be a power of two of at least 16",
            ));
        }
        if !(sample_rate.is_finite() && sample_rate > 0.0) {
            return Err(Error::parameter(
                "sample_rate",
                sample_rate,
                "must be positive and finite",
            ));
        }
        let window = periodic_hann(fft_len);
        let window_power = window.iter().map(|w| w * w).sum();
        let fft = plan_forward(fft_len);
        let fft_scratch = vec![Complex64::default(); fft.get_inplace_scratch_len()];
        Ok(PowerSpectrum {
            fft_len,
            sample_rate,
            window,
            window_power,
            pending: vec![Complex32::default(); fft_len],
            filled: 0,
            frame: vec![Complex64::default(); fft_len],
            fft_scratch,
            fft,
            accumulated: vec![0.0; fft_len],
            frames: 0,
        })
    }

    /// Adds samples; frames complete as they fill.
    pub fn push(&mut self, samples: &[Complex32]) {
        let mut rest = samples;
        while !rest.is_empty() {
            let take = (self.fft_len - self.filled).min(rest.len());
            self.pending[self.filled..self.filled + take].copy_from_slice(&rest[..take]);
            self.filled += take;
            rest = &rest[take..];
            if self.filled == self.fft_len {
                self.accumulate_frame();
                // 50 % overlap: the second half starts the next frame.
                let hop = self.fft_len / 2;
                self.pending.copy_within(hop.., 0);
                self.filled = self.fft_len - hop;
            }
        }
    }

    fn accumulate_frame(&mut self) {
        for ((out, s), w) in self
            .frame
            .iter_mut()
            .zip(&self.pending)
            .zip(self.window.iter())
        {
            // Tested without a branch, so the loop vectorises (was 12 instructions per sample).
            let finite = s.is_finite_sample();
            let (re, im) = (f64::from(s.re) * w, f64::from(s.im) * w);
            *out = if finite {
                Complex64::new(re, im)
            } else {
                Complex64::default()
            };
        }
        self.fft
            .process_with_scratch(&mut self.frame, &mut self.fft_scratch);
        for (acc, x) in self.accumulated.iter_mut().zip(&self.frame) {
            *acc += x.norm_sqr();
        }
        self.frames += 1;
    }

    /// Frames averaged so far.
    pub fn frames(&self) -> usize {
        self.frames
    }

    /// Power spectral density in units²/Hz, bins in FFT order (bin k at k·fs/N, wrapping to
    /// negative frequencies above N/2). Integrating over all bins gives the mean power.
    ///
    /// All zeros before the first frame completes.
    pub fn density(&self) -> Vec<f64> {
        let mut out = vec![0.0; self.fft_len];
        self.density_into(&mut out);
        out
    }

    /// [`density`](Self::density) written into `out` (its first `min(out.len(), N)` bins),
    /// without allocating.
    pub fn density_into(&self, out: &mut [f64]) {
        let scale = if self.frames == 0 {
            0.0
        } else {
            1.0 / (self.frames as f64 * self.sample_rate * self.window_power)
        };
        for (o, acc) in out.iter_mut().zip(&self.accumulated) {
            *o = acc * scale;
        }
    }

    /// Frequency in Hz of bin `k` (negative above N/2).
    ///
    /// Bin N/2 is reported as −fs/2, as `numpy.fft.fftfreq` does; `k` is taken modulo N.
    pub fn bin_frequency(&self, k: usize) -> f64 {
        // No division for the usual k < N (the carrier search asks once per bin per window).
        let k = if k < self.fft_len {
            k
        } else {
            k % self.fft_len
        };
        let signed = if k < self.fft_len / 2 {
            k as f64
        } else {
            k as f64 - self.fft_len as f64
        };
        signed * self.bin_width()
    }

    /// The bin nearest to `frequency_hz` (any real frequency, wrapped modulo fs).
    pub fn nearest_bin(&self, frequency_hz: f64) -> usize {
        let n = self.fft_len as f64;
        let k = (frequency_hz / self.bin_width()).round().rem_euclid(n);
        if k.is_finite() {
            (k as usize) % self.fft_len
        } else {
            0
        }
    }

    /// Bin width in Hz.
    pub fn bin_width(&self) -> f64 {
        self.sample_rate / self.fft_len as f64
    }

    /// Number of bins N.
    pub fn fft_len(&self) -> usize {
        self.fft_len
    }

    /// Sample rate in Hz.
    pub fn sample_rate(&self) -> f64 {
        self.sample_rate
    }

    /// Correlation ρ between successive overlapping frames' windows,
    /// Σ w\[n\]·w[n+N/2] / Σ w² (Welch 1967; 1/6 for Hann at 50 % overlap).
    pub fn overlap_correlation(&self) -> f64 {
        let hop = self.fft_len / 2;
        let cross: f64 = self.window[..hop]
            .iter()
            .zip(&self.window[hop..])
            .map(|(a, b)| a * b)
            .sum();
        cross / self.window_power
    }

    /// Forgets all frames and pending samples.
    pub fn reset(&mut self) {
        self.accumulated.iter_mut().for_each(|a| *a = 0.0);
        self.frames = 0;
        self.filled = 0;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{rngs::StdRng, RngExt, SeedableRng};

    // Seeded complex noise, each component uniform in [−1, 1).
    use crate::dsp::test_util::random_complex as noise;

    #[test]
    fn rejects_bad_parameters() {
        assert!(PowerSpectrum::new(100, 48e3).is_err());
        assert!(PowerSpectrum::new(8, 48e3).is_err());
        assert!(PowerSpectrum::new(64, 0.0).is_err());
        assert!(PowerSpectrum::new(64, f64::NAN).is_err());
    }

    #[test]
    fn frame_count_follows_half_overlap() {
        let mut s = PowerSpectrum::new(64, 1e3).unwrap();
        s.push(&noise(63, 1));
        assert_eq!(s.frames(), 0);
        s.push(&noise(1, 2));
        assert_eq!(s.frames(), 1);
        s.push(&noise(32 * 5, 3));
        assert_eq!(s.frames(), 6);
    }

    #[test]
    fn chunking_does_not_change_the_result() {
        // Same frames and same arithmetic whatever the split: bit-exact.
        let x = noise(5000, 7);
        let mut whole = PowerSpectrum::new(256, 48e3).unwrap();
        whole.push(&x);
        let mut pieces = PowerSpectrum::new(256, 48e3).unwrap();
        let mut rng = StdRng::seed_from_u64(11);
        let mut at = 0;
        while at < x.len() {
            let n = rng.random_range(0..700usize).min(x.len() - at);
            pieces.push(&x[at..at + n]);
            at += n;
        }
        assert_eq!(whole.frames(), pieces.frames());
        assert_eq!(whole.density(), pieces.density());
    }

    #[test]
    fn integral_of_density_is_mean_power() {
        // Uniform ±1 noise on I and Q: mean power 2/3. Window-weighted frame powers fluctuate
        // about the mean; with ~780 frames of 256 the integral is within 1 % (≈ 8σ).
        let x = noise(100_000, 3);
        let mean_power = x.iter().map(|z| z.norm_sqr() as f64).sum::<f64>() / x.len() as f64;
        let mut s = PowerSpectrum::new(256, 8e3).unwrap();
        s.push(&x);
        let integral: f64 = s.density().iter().sum::<f64>() * s.bin_width();
        assert!(
            (integral / mean_power - 1.0).abs() < 0.01,
            "{integral} {mean_power}"
        );
    }

    #[test]
    fn bin_frequencies_wrap_like_fftfreq() {
        let s = PowerSpectrum::new(16, 1600.0).unwrap();
        assert_eq!(s.bin_frequency(1), 100.0);
        assert_eq!(s.bin_frequency(8), -800.0);
        assert_eq!(s.bin_frequency(15), -100.0);
        assert_eq!(s.nearest_bin(-100.0), 15);
        assert_eq!(s.nearest_bin(240.0), 2);
        assert!((s.overlap_correlation() - 1.0 / 6.0).abs() < 1e-12);
    }

    #[test]
    fn non_finite_samples_do_not_poison_the_density() {
        let mut x = noise(512, 5);
        x[100] = Complex32::new(f32::NAN, f32::INFINITY);
        let mut s = PowerSpectrum::new(64, 1e3).unwrap();
        s.push(&x);
        assert!(s.density().iter().all(|d| d.is_finite()));
    }
}

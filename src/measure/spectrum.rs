//! Averaged power spectrum (Welch's method, Hann window, 50 % overlap) of a complex stream.

use crate::{Complex32, Result};

/// Accumulates the averaged periodogram of a complex stream pushed in pieces of any size.
pub struct PowerSpectrum {}

impl PowerSpectrum {
    /// A spectrum of `fft_len` bins (a power of two ≥ 16) at `sample_rate`.
    pub fn new(fft_len: usize, sample_rate: f64) -> Result<Self> {
        let _ = (fft_len, sample_rate);
        todo!()
    }
    /// Adds samples; frames complete as they fill.
    pub fn push(&mut self, samples: &[Complex32]) {
        let _ = samples;
        todo!()
    }
    /// Frames averaged so far.
    pub fn frames(&self) -> usize {
        todo!()
    }
    /// Power spectral density in units²/Hz, bins in FFT order (bin k at k·fs/N, wrapping to
    /// negative frequencies above N/2). Integrating over all bins gives the mean power.
    pub fn density(&self) -> Vec<f64> {
        todo!()
    }
    /// Frequency in Hz of bin `k` (negative above N/2).
    pub fn bin_frequency(&self, k: usize) -> f64 {
        let _ = k;
        todo!()
    }
    /// Bin width in Hz.
    pub fn bin_width(&self) -> f64 {
        todo!()
    }
}

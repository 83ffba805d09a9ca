//! The squelch reading of `amrx watch` for every channel at once, in every mode: per window of
//! the wideband input, an averaged power spectrum of the whole band, the band's noise floor,
//! and for each channel the power in the band its emission occupies against the noise in that
//! same band.
//!
//! Reading (our own definition, for carrier and suppressed-carrier modes alike): with P the
//! power in the channel's occupied band (±W for am, sam, dsb, isb; 0…W for usb; −W…0 for lsb;
//! −vestige…W for vsb) and N the noise floor's share of it, the reading is (P − N)/N in dB: the
//! emission's power (carrier and sidebands) over the noise in the band it occupies. For full
//! carrier AM with modulation index μ by a tone it is C·(1 + μ²/2)/(N0·2W), the carrier's CNR
//! in its two sidebands' band plus 10·log10(1 + μ²/2) (0.5 dB at μ = 0.5); for SSB it is
//! S/(N0·W), the channel SNR.
//!
//! Spectrum: Welch's averaged, Hann-windowed periodograms (P. D. Welch, "The use of fast Fourier
//! transform for the estimation of power spectra", IEEE Trans. Audio Electroacoustics 15, 1967),
//! [`FFTS_PER_WINDOW`] transforms spread evenly over each window. Noise floor: the median bin
//! over the central 90 % of the band, divided by the median of a χ² average of 2K degrees of
//! freedom over its mean (Wilson–Hilferty, [`crate::band::detect::chi2_factor`]), so it is the
//! mean noise per bin while fewer than half the bins hold emissions.

use crate::band::detect::chi2_factor;
use crate::{Complex32, Error, Result};
use rustfft::{Fft, FftPlanner};
use std::sync::Arc;

/// Transforms averaged per window: 16 degrees of freedom per bin (common practice, no source).
pub const FFTS_PER_WINDOW: usize = 8;
/// Bins left out at each edge of a channel's band: the Hann window's main lobe is ±2 bins
/// (common practice, no source).
const EDGE_GUARD_BINS: f64 = 2.0;
/// Spectrum bins per channel bandwidth at least (so a channel's band is read by ≥ 12 bins
/// inside its edge guards).
const BINS_PER_BANDWIDTH: f64 = 16.0;

/// Per-window readings of many channels from one wideband stream.
pub struct BandMeter {
    rate: f64,
    len: usize,
    fft: Arc<dyn Fft<f32>>,
    window: Vec<f32>,
    buf: Vec<Complex32>,
    scratch: Vec<Complex32>,
    /// Averaged power per bin, ascending frequency (index len/2 is 0 Hz).
    power: Vec<f64>,
    sorted: Vec<f64>,
    /// Each channel's bins, ascending-frequency indices, inclusive.
    bands: Vec<(usize, usize)>,
    readings: Vec<Option<f64>>,
    floor: f64,
}

impl std::fmt::Debug for BandMeter {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("BandMeter")
            .field("rate", &self.rate)
            .field("len", &self.len)
            .field("channels", &self.bands.len())
            .finish_non_exhaustive()
    }
}

impl BandMeter {
    /// A meter for a stream at `rate`, reading channels whose occupied bands are
    /// `[offset + lo, offset + hi]` Hz for each `(offset, lo, hi)` in `channels`, with spectrum
    /// bins of at most `bandwidth_hz` / 8.
    ///
    /// ```
    /// use amrx::channelize::band_meter::BandMeter;
    /// let meter = BandMeter::new(256_000.0, 3_000.0, &[(0.0, -3_000.0, 3_000.0)])?;
    /// assert_eq!(meter.fft_len(), 2048);
    /// # Ok::<(), amrx::Error>(())
    /// ```
    pub fn new(rate: f64, bandwidth_hz: f64, channels: &[(f64, f64, f64)]) -> Result<Self> {
        if !(rate.is_finite() && rate > 0.0) {
            return Err(Error::parameter(
                "input_rate",
                rate,
                "must be a positive number of Hz",
            ));
        }
        if !(bandwidth_hz.is_finite() && bandwidth_hz > 0.0) {
            return Err(Error::parameter(
                "bandwidth_hz",
                bandwidth_hz,
                "must be a positive number of Hz",
            ));
        }
        let len = ((rate * BINS_PER_BANDWIDTH / bandwidth_hz).ceil() as usize)
            .next_power_of_two()
            .clamp(256, 1 << 16);
        let spacing = rate / len as f64;
        let half = (len / 2) as f64;
        let bands = channels
            .iter()
            .map(|&(offset, lo, hi)| {
                // Two bins in from each edge, so a line just outside the band (the next
                // channel's carrier, the receiver's DC spike) leaks in only its window's side
                // lobes; at least the centre bin.
                let centre = ((offset + 0.5 * (lo + hi)) / spacing + half).round();
                let a = ((offset + lo) / spacing + half + EDGE_GUARD_BINS)
                    .ceil()
                    .min(centre);
                let b = ((offset + hi) / spacing + half - EDGE_GUARD_BINS)
                    .floor()
                    .max(centre);
                let a = a.clamp(0.0, len as f64 - 1.0);
                let b = b.clamp(a, len as f64 - 1.0);
                (a as usize, b as usize)
            })
            .collect();
        let fft = FftPlanner::<f32>::new().plan_fft_forward(len);
        let window = (0..len)
            .map(|n| {
                let a = std::f64::consts::TAU * n as f64 / len as f64;
                (0.5 - 0.5 * a.cos()) as f32
            })
            .collect();
        Ok(BandMeter {
            rate,
            len,
            scratch: vec![Complex32::default(); fft.get_inplace_scratch_len()],
            fft,
            window,
            buf: vec![Complex32::default(); len],
            power: vec![0.0; len],
            sorted: vec![0.0; len],
            readings: vec![None; channels.len()],
            bands,
            floor: 0.0,
        })
    }

    /// The transform length.
    pub fn fft_len(&self) -> usize {
        self.len
    }

    /// Reads one window of input: each channel's reading in dB, in the order given to
    /// [`BandMeter::new`] (`None` where nothing stands above the floor, or the window is shorter
    /// than one transform).
    pub fn window(&mut self, x: &[Complex32]) -> &[Option<f64>] {
        let k = FFTS_PER_WINDOW.min(x.len() / self.len);
        if k == 0 {
            self.readings.iter_mut().for_each(|r| *r = None);
            return &self.readings;
        }
        self.power.iter_mut().for_each(|p| *p = 0.0);
        let energy: f64 = self.window.iter().map(|&w| f64::from(w * w)).sum();
        let scale = 1.0 / (self.len as f64 * energy * k as f64);
        let half = self.len / 2;
        let step = if k > 1 {
            (x.len() - self.len) / (k - 1)
        } else {
            0
        };
        for j in 0..k {
            let piece = &x[j * step..j * step + self.len];
            for ((b, s), w) in self.buf.iter_mut().zip(piece).zip(&self.window) {
                // `&`, not `&&`: no branch, so the loop vectorises.
                let finite = s.re.is_finite() & s.im.is_finite();
                *b = if finite { s * w } else { Complex32::default() };
            }
            self.fft
                .process_with_scratch(&mut self.buf, &mut self.scratch);
            // FFT order to ascending frequency: bin q goes to (q + len/2) mod len.
            let (low, high) = self.buf.split_at(half);
            let (below, above) = self.power.split_at_mut(self.len - half);
            for (p, b) in above.iter_mut().zip(low).chain(below.iter_mut().zip(high)) {
                *p += f64::from(b.norm_sqr()) * scale;
            }
        }
        // The median over the central 90 % of the band, as a mean (see the module docs).
        let edge = self.len / 20;
        let central = &self.power[edge..self.len - edge];
        let sorted = &mut self.sorted[..central.len()];
        sorted.copy_from_slice(central);
        let mid = sorted.len() / 2;
        let (_, median, _) = sorted.select_nth_unstable_by(mid, f64::total_cmp);
        self.floor = *median / chi2_factor(0.5, 2.0 * k as f64).max(1e-6);
        for (r, &(a, b)) in self.readings.iter_mut().zip(&self.bands) {
            let p: f64 = self.power[a..=b].iter().sum();
            let n = self.floor * (b - a + 1) as f64;
            *r = (n > 0.0 && p > n).then(|| 10.0 * ((p - n) / n).log10());
        }
        &self.readings
    }

    /// The last window's noise floor as a density, full scale²/Hz.
    pub fn noise_density(&self) -> f64 {
        self.floor * self.len as f64 / self.rate
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{RngExt, SeedableRng};

    const RATE: f64 = 256_000.0;

    /// Complex white noise of density `n0` (full scale²/Hz) plus a carrier of amplitude `a` at
    /// `f` Hz, seeded.
    fn scene(n0: f64, a: f32, f: f64, len: usize, seed: u64) -> Vec<Complex32> {
        let mut rng = rand::rngs::StdRng::seed_from_u64(seed);
        let normal = rand_distr::Normal::new(0.0f64, (n0 * RATE / 2.0).sqrt()).unwrap();
        (0..len)
            .map(|n| {
                let ph = (std::f64::consts::TAU * f * n as f64 / RATE) as f32;
                Complex32::from_polar(a, ph)
                    + Complex32::new(rng.sample(normal) as f32, rng.sample(normal) as f32)
            })
            .collect()
    }

    #[test]
    fn the_floor_is_the_noise_density_and_a_carrier_reads_its_cnr() {
        // C/N = A²/(N0·B_occupied), the textbook CNR of a carrier in the band read:
        // 0.01² / (1e-9 · 6000) = 12.2 dB. Tolerance 0.7 dB: the floor and the band's noise
        // are averages of 16 degrees of freedom per bin over ~25 bins (about ±0.2 dB), the
        // carrier adds its power whole.
        let x = scene(1e-9, 0.01, 20_000.0, 25_600, 3);
        let mut m = BandMeter::new(
            RATE,
            3_000.0,
            &[
                (20_000.0, -3_000.0, 3_000.0),
                (-50_000.0, -3_000.0, 3_000.0),
            ],
        )
        .unwrap();
        let r = m.window(&x).to_vec();
        let floor = m.noise_density();
        assert!(
            (10.0 * (floor / 1e-9).log10()).abs() < 0.5,
            "floor {floor:e}"
        );
        let want = 10.0 * (0.01f64.powi(2) / (1e-9 * 6_000.0)).log10();
        let got = r[0].unwrap();
        assert!((got - want).abs() < 0.7, "{got} vs {want}");
        // The empty channel: nothing (or a reading far below any squelch) there.
        assert!(r[1].is_none_or(|v| v < 0.0), "{:?}", r[1]);
    }

    #[test]
    fn usb_reads_only_its_side() {
        // A line 1 kHz above the channel: inside usb's 0…3 kHz, outside lsb's −3…0 kHz.
        let x = scene(1e-9, 0.01, 1_000.0, 25_600, 4);
        let mut m =
            BandMeter::new(RATE, 3_000.0, &[(0.0, 0.0, 3_000.0), (0.0, -3_000.0, 0.0)]).unwrap();
        let r = m.window(&x).to_vec();
        assert!(r[0].unwrap() > 10.0, "{r:?}");
        assert!(r[1].is_none_or(|v| v < 0.0), "{r:?}");
    }

    #[test]
    fn a_short_window_reads_nothing() {
        let mut m = BandMeter::new(RATE, 3_000.0, &[(0.0, -3_000.0, 3_000.0)]).unwrap();
        assert_eq!(m.window(&vec![Complex32::new(1.0, 0.0); 100]), &[None]);
        assert!(BandMeter::new(f64::NAN, 3_000.0, &[]).is_err());
        assert!(BandMeter::new(RATE, 0.0, &[]).is_err());
    }
}

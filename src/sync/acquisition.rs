//! Coarse carrier acquisition: an FFT peak search over the first fraction of a second that
//! retunes a carrier loop once, so that a carrier hundreds of hertz from the expected frequency
//! (far outside the loop's pull-in reach in reasonable time) is still locked.
//!
//! The loop runs from the first sample. The first `window` samples are also accumulated into a
//! Welch spectrum (fine bins, about 6 Hz); right after sample `window` the strongest line
//! within ±search is taken as the carrier and the loop is retuned there, once. Because the
//! decision falls at a fixed sample count, the output does not depend on how the input is split.
//!
//! Suppressed carrier: x(t) = m(t)·e^{j(ω_c t + φ)} has no line at ω_c, but its square
//! m²(t)·e^{j(2ω_c t + 2φ)} has one at 2ω_c (m² has a mean); the line is searched in x² and its
//! frequency halved. This is the squaring loop that the Costas loop is equivalent to
//! (Proakis, Digital Communications, "carrier recovery for suppressed-carrier signals").

use super::{CarrierPll, CostasLoop};
use crate::block::Block;
use crate::measure::carrier::parabolic_offset;
use crate::measure::PowerSpectrum;
use crate::{Complex32, Error, Result};

/// Finest bin width asked of the search spectrum, in Hz (common practice, no source: fine
/// enough that the interpolated peak is within about 1 Hz, short enough to decide quickly).
const BIN_HZ: f64 = 6.0;
/// Welch frames averaged before the decision (50 % overlap, so the window is 2 FFT lengths).
const FRAMES: usize = 3;
/// A line must stand this far above the median of the searched bins to be taken as the carrier,
/// else the loop is left where it is (common practice, no source: the largest of a few hundred
/// three-frame-averaged noise bins stays within about 6 dB of their median).
const MIN_PEAK_OVER_MEDIAN_DB: f64 = 10.0;
/// Squared samples are formed in pieces of this size (scratch allocated once).
const SQUARE_PIECE: usize = 512;

/// What the acquisition looks for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum CarrierKind {
    /// A carrier line is present (full-carrier AM): search the signal itself.
    Line,
    /// The carrier is suppressed (DSB-SC): search the squared signal at twice the frequency.
    Suppressed,
}

/// A carrier loop the acquisition can drive: one sample at a time, retuned once.
pub trait CarrierLoop {
    /// De-rotates one sample by the loop's NCO and updates the loop.
    fn next_sample(&mut self, x: Complex32) -> Complex32;
    /// Moves the NCO to `frequency_hz` (relative to the tuned frequency).
    fn retune(&mut self, frequency_hz: f64);
    /// The tracked frequency in Hz.
    fn frequency_hz(&self) -> f64;
    /// The lock detector's verdict.
    fn is_locked(&self) -> bool;
    /// Back to the freshly built state.
    fn reset_loop(&mut self);
}

impl CarrierLoop for CarrierPll {
    #[inline]
    fn next_sample(&mut self, x: Complex32) -> Complex32 {
        CarrierPll::next_sample(self, x)
    }
    fn retune(&mut self, frequency_hz: f64) {
        CarrierPll::retune(self, frequency_hz);
    }
    fn frequency_hz(&self) -> f64 {
        CarrierPll::frequency_hz(self)
    }
    fn is_locked(&self) -> bool {
        CarrierPll::is_locked(self)
    }
    fn reset_loop(&mut self) {
        Block::reset(self);
    }
}

impl CarrierLoop for CostasLoop {
    #[inline]
    fn next_sample(&mut self, x: Complex32) -> Complex32 {
        CostasLoop::next_sample(self, x)
    }
    fn retune(&mut self, frequency_hz: f64) {
        CostasLoop::retune(self, frequency_hz);
    }
    fn frequency_hz(&self) -> f64 {
        CostasLoop::frequency_hz(self)
    }
    fn is_locked(&self) -> bool {
        CostasLoop::is_locked(self)
    }
    fn reset_loop(&mut self) {
        Block::reset(self);
    }
}

/// A carrier loop with coarse FFT acquisition in front: complex samples in, the same samples
/// de-rotated by the loop out (the carrier, once locked, on the positive real axis).
pub struct CarrierAcquisition<L: CarrierLoop> {
    carrier_loop: L,
    kind: CarrierKind,
    search_hz: f64,
    spectrum: PowerSpectrum,
    window: usize,
    seen: usize,
    found: Option<f64>,
    density: Vec<f64>,
    searched: Vec<f64>,
    squared: Vec<Complex32>,
}

impl<L: CarrierLoop> CarrierAcquisition<L> {
    /// Acquisition at `sample_rate` for a carrier of `kind` within ±`search_hz` of 0 Hz,
    /// driving `carrier_loop`.
    ///
    /// ```
    /// use amrx::sync::{CarrierAcquisition, CarrierKind, CarrierPll, PllConfig};
    /// let pll = CarrierPll::new(PllConfig::new(48_000.0, 30.0)).unwrap();
    /// let acq = CarrierAcquisition::new(pll, CarrierKind::Line, 1000.0, 48_000.0).unwrap();
    /// assert_eq!(acq.window(), 16_384); // 3 frames of 8192 points (5.9 Hz bins)
    /// ```
    pub fn new(
        carrier_loop: L,
        kind: CarrierKind,
        search_hz: f64,
        sample_rate: f64,
    ) -> Result<Self> {
        if !(sample_rate.is_finite() && sample_rate > 0.0) {
            return Err(Error::parameter(
                "acquisition sample rate",
                sample_rate,
                "must be positive",
            ));
        }
        if !(search_hz.is_finite() && search_hz > 0.0 && search_hz < 0.5 * sample_rate) {
            return Err(Error::parameter(
                "carrier search range",
                search_hz,
                format!(
                    "must be above 0 and below half the rate ({} Hz)",
                    0.5 * sample_rate
                ),
            ));
        }
        let fft_len = ((sample_rate / BIN_HZ).ceil() as usize)
            .next_power_of_two()
            .clamp(256, 1 << 16);
        Ok(CarrierAcquisition {
            carrier_loop,
            kind,
            search_hz,
            spectrum: PowerSpectrum::new(fft_len, sample_rate)?,
            window: fft_len / 2 * (FRAMES + 1),
            seen: 0,
            found: None,
            density: vec![0.0; fft_len],
            searched: vec![0.0; fft_len],
            squared: vec![Complex32::default(); SQUARE_PIECE],
        })
    }

    /// Samples accumulated before the decision.
    pub fn window(&self) -> usize {
        self.window
    }

    /// The coarse carrier frequency found, in Hz, once decided (`None` before, or when no line
    /// stood out and the loop was left alone).
    pub fn acquired_hz(&self) -> Option<f64> {
        self.found
    }

    /// True once the decision has been taken.
    pub fn decided(&self) -> bool {
        self.seen >= self.window
    }

    /// The loop.
    pub fn carrier_loop(&self) -> &L {
        &self.carrier_loop
    }

    /// Accumulates the search spectrum from the first samples of `input`, up to the window.
    fn observe(&mut self, input: &[Complex32]) {
        match self.kind {
            CarrierKind::Line => self.spectrum.push(input),
            CarrierKind::Suppressed => {
                for piece in input.chunks(SQUARE_PIECE) {
                    let squared = &mut self.squared[..piece.len()];
                    for (s, &x) in squared.iter_mut().zip(piece) {
                        *s = x * x;
                    }
                    self.spectrum.push(squared);
                }
            }
        }
    }

    /// The strongest line of the search spectrum within range, if it stands out.
    fn search(&mut self) -> Option<f64> {
        let (scale, range) = match self.kind {
            CarrierKind::Line => (1.0, self.search_hz),
            CarrierKind::Suppressed => (
                0.5,
                (2.0 * self.search_hz).min(0.49 * self.spectrum.sample_rate()),
            ),
        };
        self.spectrum.density_into(&mut self.density);
        let n = self.density.len();
        let mut count = 0;
        let mut peak: Option<usize> = None;
        for k in 0..n {
            if self.spectrum.bin_frequency(k).abs() <= range {
                self.searched[count] = self.density[k];
                count += 1;
                if peak.is_none_or(|p| self.density[k] > self.density[p]) {
                    peak = Some(k);
                }
            }
        }
        let peak = peak?;
        let median = {
            let bins = &mut self.searched[..count];
            let mid = count / 2;
            *bins.select_nth_unstable_by(mid, f64::total_cmp).1
        };
        let threshold = median * 10f64.powf(MIN_PEAK_OVER_MEDIAN_DB / 10.0);
        if !(self.density[peak] > threshold && self.density[peak].is_finite()) {
            return None;
        }
        let at = |d: isize| self.density[(peak as isize + d).rem_euclid(n as isize) as usize];
        let offset = parabolic_offset(at(-1), at(0), at(1));
        let frequency = self.spectrum.bin_frequency(peak) + offset * self.spectrum.bin_width();
        Some(scale * frequency)
    }

    /// A loop already locked near the found line is left alone: retuning it would clear its
    /// integrator and put a phase transient into the audio, which on a full carrier is a loud
    /// thump. "Near" is within two search bins (common practice, no source).
    fn retune_helps(&self, frequency_hz: f64) -> bool {
        let near = 2.0 * self.spectrum.bin_width();
        !(self.carrier_loop.is_locked()
            && (frequency_hz - self.carrier_loop.frequency_hz()).abs() < near)
    }

    fn run_loop(&mut self, input: &[Complex32], output: &mut [Complex32]) {
        for (y, &x) in output.iter_mut().zip(input) {
            *y = self.carrier_loop.next_sample(x);
        }
    }
}

impl<L: CarrierLoop> Block for CarrierAcquisition<L> {
    type Input = Complex32;
    type Output = Complex32;

    fn process(&mut self, input: &[Complex32], output: &mut [Complex32]) -> (usize, usize) {
        let n = input.len().min(output.len());
        let before = (self.window - self.seen.min(self.window)).min(n);
        if before > 0 {
            self.observe(&input[..before]);
            self.run_loop(&input[..before], &mut output[..before]);
            self.seen += before;
            if self.seen == self.window {
                self.found = self.search();
                if let Some(frequency) = self.found.filter(|&f| self.retune_helps(f)) {
                    self.carrier_loop.retune(frequency);
                }
            }
        }
        self.run_loop(&input[before..n], &mut output[before..n]);
        (n, n)
    }

    fn max_output_len(&self, input_len: usize) -> usize {
        input_len
    }

    fn rate_ratio(&self) -> f64 {
        1.0
    }

    fn delay(&self) -> f64 {
        0.0
    }

    fn reset(&mut self) {
        self.carrier_loop.reset_loop();
        self.spectrum.reset();
        self.seen = 0;
        self.found = None;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::check::{check_block, BlockCheck};
    use crate::block::process_to_vec;
    use crate::sync::PllConfig;
    use std::f64::consts::TAU;

    const FS: f64 = 48_000.0;

    fn line(freq: f64, len: usize) -> Vec<Complex32> {
        let mut noise = crate::dsp::ComplexNoise::new(1e-3, 3);
        let mut x: Vec<Complex32> = (0..len)
            .map(|n| Complex32::from_polar(0.3, (TAU * freq * n as f64 / FS) as f32))
            .collect();
        noise.add_to(&mut x);
        x
    }

    fn dsb(freq: f64, len: usize) -> Vec<Complex32> {
        (0..len)
            .map(|n| {
                let t = n as f64 / FS;
                let m = (TAU * 700.0 * t).cos() + 0.4 * (TAU * 1300.0 * t).sin();
                Complex32::from_polar(m as f32, (0.7 + TAU * freq * t) as f32)
            })
            .collect()
    }

    fn pll_acq() -> CarrierAcquisition<CarrierPll> {
        let pll = CarrierPll::new(PllConfig::new(FS, 30.0)).unwrap();
        CarrierAcquisition::new(pll, CarrierKind::Line, 1000.0, FS).unwrap()
    }

    fn costas_acq() -> CarrierAcquisition<CostasLoop> {
        let costas = CostasLoop::new(PllConfig::new(FS, 30.0)).unwrap();
        CarrierAcquisition::new(costas, CarrierKind::Suppressed, 1000.0, FS).unwrap()
    }

    #[test]
    fn finds_a_line_hundreds_of_hertz_away() {
        for freq in [-777.3, 200.0, 512.5] {
            let mut acq = pll_acq();
            process_to_vec(&mut acq, &line(freq, 30_000));
            let found = acq.acquired_hz().unwrap();
            eprintln!("line {freq} Hz: found {found:.3} Hz");
            // Interpolated Hann peak: within a fifth of a 5.9 Hz bin on a clean line.
            assert!((found - freq).abs() < 1.2, "{freq}: found {found}");
        }
    }

    #[test]
    fn finds_a_suppressed_carrier_by_squaring() {
        for freq in [-430.0, 35.0, 901.7] {
            let mut acq = costas_acq();
            process_to_vec(&mut acq, &dsb(freq, 30_000));
            let found = acq.acquired_hz().unwrap();
            eprintln!("suppressed {freq} Hz: found {found:.3} Hz");
            // Squared: bins are effectively half as wide after halving the frequency.
            assert!((found - freq).abs() < 0.6, "{freq}: found {found}");
        }
    }

    #[test]
    fn leaves_the_loop_alone_on_noise_and_outside_the_range() {
        let mut acq = pll_acq();
        let mut x = vec![Complex32::default(); 30_000];
        crate::dsp::ComplexNoise::new(1.0, 8).add_to(&mut x);
        process_to_vec(&mut acq, &x);
        assert!(acq.decided());
        assert_eq!(acq.acquired_hz(), None);
        let mut acq = pll_acq();
        process_to_vec(&mut acq, &line(1500.0, 30_000));
        assert_eq!(
            acq.acquired_hz(),
            None,
            "a line outside ±1 kHz is not taken"
        );
    }

    /// Bit-exact chunk invariance: the decision falls at a fixed sample count and every
    /// stage is per sample. No delay probe: the output is de-rotated by the loop (and retuned
    /// after the search); `delay()` is 0 because neither adds filter delay.
    #[test]
    fn meets_the_block_contract() {
        let x = line(300.0, 40_000);
        check_block(&BlockCheck::new(&pll_acq, &x));
        let y = dsb(-250.0, 40_000);
        check_block(&BlockCheck::new(&costas_acq, &y));
        // The decision was taken inside the run, so reset had to undo a retune.
        let mut acq = pll_acq();
        process_to_vec(&mut acq, &x);
        assert!(acq.acquired_hz().is_some());
    }

    #[test]
    fn bad_settings_are_errors() {
        let pll = CarrierPll::new(PllConfig::new(FS, 30.0)).unwrap();
        assert!(CarrierAcquisition::new(pll.clone(), CarrierKind::Line, 0.0, FS).is_err());
        assert!(CarrierAcquisition::new(pll.clone(), CarrierKind::Line, 30_000.0, FS).is_err());
        assert!(CarrierAcquisition::new(pll, CarrierKind::Line, 100.0, f64::NAN).is_err());
    }
}

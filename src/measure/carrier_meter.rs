//! Measurement over time: the one stage that follows a carrier receiver window by window and
//! that both `demod`'s report and `measure` read.
//!
//! Fed, per piece, by the front end's wide view (the channel at the detection rate before the
//! channel filter) and by the detector's carrier-referenced envelope (am: |x|; sam: the
//! in-phase component against the locked carrier) and loop state. Per window (0.1 s by
//! default) it gives:
//!
//! - **carrier level** (dBFS, 0 dBFS = a carrier of amplitude 1) and **CNR** = C/(N0·2B), the
//!   same definition `synth` uses (S. Haykin, *Communication Systems*, ch. 2: carrier over the
//!   noise in the transmission bandwidth 2W), read from a Welch spectrum of the window: C is the
//!   carrier line (Hann main lobe, noise in it subtracted), N0 the median floor outside the
//!   sidebands ([`crate::measure::carrier`]). The bandwidth 2B is stated with every figure.
//! - **carrier present**, with hysteresis: on at CNR ≥ 10 dB, off below 6 dB (our choice, no
//!   source: above the envelope detector's ~6.6 dB threshold, 4 dB apart so that a carrier
//!   near the limit does not flicker).
//! - **positive and negative peak modulation** against a carrier reference that follows the
//!   carrier: r(t) is the envelope through two cascaded 25 ms moving averages, centred (a
//!   triangle of 50 ms; response sinc²(f·25 ms): nulls at multiples of 40 Hz, ≤ 1.6 % above
//!   100 Hz, so programme leaks little into it while a 20 dB fade over a second is followed to
//!   3·10⁻⁴). Over the window r is scaled so that its mean equals the spectral carrier
//!   amplitude √C: an overmodulated envelope |1 + μ m| has a mean above the carrier, the
//!   carrier line does not. Peaks are the 1 % tails of e/r over the window (a peak must last
//!   1 ms in 0.1 s to count; modulation monitors also ignore shorter peaks, common practice,
//!   no source), then corrected for noise (see [`noise_corrected_peak`]).
//!
//! A window gives depth only when the carrier is present, steady (starts, stops and deep fast
//! fades are left out), the loop (if any) was locked throughout it and the window before and the whole window was past the filters' settling. Steady is
//! the reference within 2 dB (min/max ≥ 0.8) over the window, our choice, no source: a 20 dB
//! fade over 2 s passes (1 dB per window), the edge of a start or a stop does not.

use super::carrier::{estimate_noise_density_in, find_carrier_in, MAIN_LOBE_HALF_WIDTH_BINS};
use super::PowerSpectrum;
use crate::dsp::store_finite;
use crate::{Complex32, Error, Result};
use serde::Serialize;

/// CNR (dB, in 2B) at or above which a carrier is taken to be present.
pub const CARRIER_ON_CNR_DB: f64 = 10.0;
/// CNR (dB, in 2B) below which a present carrier is taken to be gone.
pub const CARRIER_OFF_CNR_DB: f64 = 6.0;
/// Negative peak modulation that counts as overmodulation: the envelope pinches off.
pub const OVERMODULATION: f64 = 0.99;
/// Fraction of a window allowed beyond a reported peak.
pub const PEAK_TAIL: f64 = 0.01;
/// A 1 % trough below this fraction of the carrier counts as reaching zero (our choice, no
/// source). Noise-free, the 1 % trough of |1 + μ cos| is 5·10⁻⁴ at μ = 1, 0.005 at μ = 1.05
/// and 0.027 at μ = 2 (the V where the envelope folds); a sine of μ = 0.8 at 20 dB CNR reads
/// about 0.06 there.
const PINCH: f64 = 0.035;
/// Length of each of the two moving averages forming the carrier reference, in seconds.
const REFERENCE_SPAN_S: f64 = 0.025;
/// The reference may vary by this ratio (min/max) over a window with depth still read.
const STEADY_RATIO: f64 = 0.8;
/// Window length the meter uses when none is given, in seconds.
pub const DEFAULT_WINDOW_S: f64 = 0.1;
/// Samples the meter takes in at a time.
const METER_BLOCK: usize = 4096;
/// Room in the meter's lines past the reference's span: the last span is moved back to the
/// start once per this many samples.
const LINE_ROOM: usize = 8 * METER_BLOCK;

/// What the meter needs to know about the receiver feeding it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MeterSettings {
    /// Detection rate in Hz.
    pub sample_rate: f64,
    /// Window length in seconds.
    pub window_s: f64,
    /// Message bandwidth B in Hz (CNR is quoted in 2B).
    pub bandwidth_hz: f64,
    /// The carrier is searched for within ±this of the tuned frequency.
    pub search_hz: f64,
    /// Half-width of the band the wide view is flat over (noise is read there).
    pub flat_band_hz: f64,
    /// Two-sided noise bandwidth of the channel filter ahead of the envelope, in Hz.
    pub channel_noise_bandwidth_hz: f64,
    /// Samples at the start that the meter leaves out of the depth (filter settling).
    pub settling_samples: usize,
    /// Seconds to subtract from sample times (the front end's delay), so times match the input.
    pub time_offset_s: f64,
}

/// One window's readings. Carrier level, CNR and peaks are `None` without a carrier; the
/// peaks also when the window is not steady enough to read them (see the module docs).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct WindowReading {
    /// Start of the window in the input, in seconds.
    pub start_s: f64,
    /// Length of the window in seconds.
    pub duration_s: f64,
    /// Whether a carrier was present (CNR with hysteresis).
    pub carrier_present: bool,
    /// Carrier level in dBFS.
    pub carrier_dbfs: Option<f64>,
    /// Carrier-to-noise ratio in dB, noise in 2 × the message bandwidth.
    pub cnr_db: Option<f64>,
    /// Positive peak modulation as a fraction (1.0 = 100 %), noise-corrected.
    pub positive: Option<f64>,
    /// Negative peak modulation as a fraction, noise-corrected.
    pub negative: Option<f64>,
    /// Whether the carrier loop was locked for the whole window (`None` without a loop).
    #[serde(skip)]
    pub locked: Option<bool>,
}

/// Figures over the whole run, from the carrier-present windows only.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Default)]
pub struct MeterSummary {
    /// Seconds metered.
    pub measured_s: f64,
    /// Seconds with a carrier present.
    pub carrier_present_s: f64,
    /// Mean carrier power over carrier-present time, in dBFS.
    pub carrier_dbfs: Option<f64>,
    /// Mean carrier power over mean noise power in `cnr_bandwidth_hz`, carrier-present time.
    pub cnr_db: Option<f64>,
    /// The bandwidth CNR is quoted in (2 × the message bandwidth), Hz.
    pub cnr_bandwidth_hz: f64,
    /// Highest positive peak of any window with depth.
    pub positive_peak: Option<f64>,
    /// Highest negative peak of any window with depth.
    pub negative_peak: Option<f64>,
    /// Windows with depth read.
    pub depth_windows: usize,
    /// Windows with depth whose negative peak reached [`OVERMODULATION`].
    pub overmodulated_windows: usize,
    /// Fraction of carrier-present windows with the loop locked throughout (`None` without a
    /// loop or without a carrier).
    pub lock_fraction: Option<f64>,
}

/// Two cascaded moving averages of length L (a triangle of 2L − 1 taps), as running sums.
#[derive(Debug, Clone)]
struct Triangle {
    first: Vec<f64>,
    second: Vec<f64>,
    sums: [f64; 2],
    at: usize,
}

impl Triangle {
    fn new(len: usize) -> Self {
        Triangle {
            first: vec![0.0; len],
            second: vec![0.0; len],
            sums: [0.0; 2],
            at: 0,
        }
    }

    /// One sample: the plain form of [`Triangle::fill`], which the tests hold it to.
    #[cfg(test)]
    fn next(&mut self, x: f64) -> f64 {
        let len = self.first.len() as f64;
        self.sums[0] += x - self.first[self.at];
        self.first[self.at] = x;
        let mean = self.sums[0] / len;
        self.sums[1] += mean - self.second[self.at];
        self.second[self.at] = mean;
        self.at += 1;
        if self.at == self.first.len() {
            self.at = 0;
        }
        self.sums[1] / len
    }

    /// [`Triangle::next`] of each of `xs` into `out` (same length), the same arithmetic in
    /// the same order: runs up to the ring's end with the sums in locals (callgrind on the am
    /// command: 21 instructions per sample through `next`).
    fn fill(&mut self, xs: &[f32], out: &mut [f64]) {
        let len = self.first.len();
        let lenf = len as f64;
        let [mut s0, mut s1] = self.sums;
        let mut done = 0;
        while done < xs.len() {
            let run = (len - self.at).min(xs.len() - done);
            let ring = self.at..self.at + run;
            for (((&x, o), first), second) in xs[done..done + run]
                .iter()
                .zip(&mut out[done..done + run])
                .zip(&mut self.first[ring.clone()])
                .zip(&mut self.second[ring])
            {
                let x = f64::from(x);
                s0 += x - *first;
                *first = x;
                let mean = s0 / lenf;
                s1 += mean - *second;
                *second = mean;
                *o = s1 / lenf;
            }
            done += run;
            self.at += run;
            if self.at == len {
                self.at = 0;
            }
        }
        self.sums = [s0, s1];
    }
}

/// The windowed carrier meter. Allocates in its constructor only (unless asked to record
/// windows); chunk-invariant: readings depend on the samples, not on how they are split.
#[derive(Debug)]
pub struct CarrierMeter {
    settings: MeterSettings,
    window_len: usize,
    /// Centring delay of the reference, in samples.
    lag: usize,
    reference: Triangle,
    /// The samples pushed (non-finite ones as zero), kept linear: the `lag` before `at` and
    /// whatever came earlier since the last shift, so the delayed samples a block meters are
    /// one slice.
    envelope_line: Vec<f32>,
    wide_line: Vec<Complex32>,
    /// The reference computed at each sample of the lines.
    references: Vec<f64>,
    /// Where the next sample goes in the lines.
    at: usize,
    spectrum: PowerSpectrum,
    /// The spectrum's density at a window's end, and room for its floor's bins.
    density: Vec<f64>,
    floor: Vec<f64>,
    /// The window's envelope-to-reference ratios, as [`order_key`]s.
    ratios: Vec<i32>,
    /// Samples pushed so far (undelayed).
    pushed: u64,
    /// Delayed samples metered so far.
    metered: u64,
    window_start: u64,
    in_window: usize,
    reference_sum: f64,
    reference_min: f64,
    reference_max: f64,
    lock_all: Option<bool>,
    /// Whether the loop was locked throughout the previous window.
    locked_before: bool,
    present: bool,
    finished: bool,
    summary: Accumulated,
    recorded: Option<Vec<WindowReading>>,
}

#[derive(Debug, Clone, Copy, Default)]
struct Accumulated {
    measured_s: f64,
    present_s: f64,
    carrier_energy: f64,
    noise_energy: f64,
    positive: Option<f64>,
    negative: Option<f64>,
    depth_windows: usize,
    overmodulated: usize,
    present_windows: usize,
    locked_windows: usize,
    any_lock: bool,
}

fn max_opt(a: Option<f64>, b: Option<f64>) -> Option<f64> {
    match (a, b) {
        (Some(x), Some(y)) => Some(x.max(y)),
        (x, None) => x,
        (None, y) => y,
    }
}

impl CarrierMeter {
    /// A meter; the window must hold at least 64 samples and the rates and bandwidths must be
    /// positive.
    ///
    /// ```
    /// use amrx::measure::carrier_meter::{CarrierMeter, MeterSettings};
    /// let meter = CarrierMeter::new(MeterSettings {
    ///     sample_rate: 48_000.0, window_s: 0.1, bandwidth_hz: 5_000.0, search_hz: 1_000.0,
    ///     flat_band_hz: 10_000.0, channel_noise_bandwidth_hz: 11_000.0,
    ///     settling_samples: 0, time_offset_s: 0.0,
    /// }).unwrap();
    /// assert!(meter.summary().carrier_present_s == 0.0);
    /// ```
    pub fn new(settings: MeterSettings) -> Result<Self> {
        let s = &settings;
        for (name, v) in [
            ("sample_rate", s.sample_rate),
            ("bandwidth_hz", s.bandwidth_hz),
            ("search_hz", s.search_hz),
            ("flat_band_hz", s.flat_band_hz),
            ("channel_noise_bandwidth_hz", s.channel_noise_bandwidth_hz),
        ] {
            if !(v.is_finite() && v > 0.0) {
                return Err(Error::parameter(name, v, "must be positive and finite"));
            }
        }
        let window = s.window_s * s.sample_rate;
        if !(s.window_s.is_finite() && window >= 64.0 && s.window_s <= 3600.0) {
            return Err(Error::parameter(
                "window_s",
                s.window_s,
                format!(
                    "must hold at least 64 samples at {} Hz and be at most an hour",
                    s.sample_rate
                ),
            ));
        }
        let window_len = window.round() as usize;
        let span = ((REFERENCE_SPAN_S * s.sample_rate).round() as usize).max(1);
        // The largest power of two that fits four times in a window (eight Welch frames at
        // 50 % overlap), between 16 and 4096 points.
        let mut fft_len = 16;
        while fft_len * 2 <= window_len / 4 && fft_len < 4096 {
            fft_len *= 2;
        }
        let spectrum = PowerSpectrum::new(fft_len, s.sample_rate)?;
        Ok(CarrierMeter {
            window_len,
            lag: span - 1,
            reference: Triangle::new(span),
            envelope_line: vec![0.0; span - 1 + LINE_ROOM],
            wide_line: vec![Complex32::default(); span - 1 + LINE_ROOM],
            references: vec![0.0; span - 1 + LINE_ROOM],
            at: span - 1,
            density: vec![0.0; fft_len],
            floor: Vec::with_capacity(fft_len),
            spectrum,
            ratios: Vec::with_capacity(window_len),
            pushed: 0,
            metered: 0,
            window_start: 0,
            in_window: 0,
            reference_sum: 0.0,
            reference_min: f64::INFINITY,
            reference_max: 0.0,
            lock_all: None,
            locked_before: false,
            present: false,
            finished: false,
            summary: Accumulated::default(),
            recorded: None,
            settings,
        })
    }

    /// The settings.
    pub fn settings(&self) -> &MeterSettings {
        &self.settings
    }

    /// Keeps every window's reading for [`CarrierMeter::take_windows`] (allocates as it grows).
    pub fn record_windows(&mut self, on: bool) {
        self.recorded = on.then(Vec::new);
    }

    /// Whether windows are being recorded.
    pub fn is_recording(&self) -> bool {
        self.recorded.is_some()
    }

    /// The recorded windows so far (empty unless recording), leaving none behind.
    pub fn take_windows(&mut self) -> Vec<WindowReading> {
        self.recorded
            .as_mut()
            .map(std::mem::take)
            .unwrap_or_default()
    }

    /// Adds a piece: the wide view, the carrier-referenced envelope (same length, or `None`
    /// for a detector without one) and whether the loop is locked now (`None` without a loop).
    /// Non-finite samples count as zero. Ignored after [`CarrierMeter::finish`].
    pub fn push(&mut self, wide: &[Complex32], envelope: Option<&[f32]>, locked: Option<bool>) {
        if self.finished {
            return;
        }
        if let Some(l) = locked {
            self.lock_all = Some(self.lock_all.unwrap_or(true) && l);
        }
        for (k, block) in wide.chunks(METER_BLOCK).enumerate() {
            let envelope = envelope.map(|e| e.get(k * METER_BLOCK..).unwrap_or(&[]));
            self.push_block(block, envelope);
        }
    }

    /// At most [`METER_BLOCK`] samples: the lines and references first (the reference is a
    /// running filter, sample by sample), then the delayed samples they complete, a window's
    /// stretch at a time (callgrind on the am command: sample by sample through a ring, the
    /// meter cost 150 instructions per sample).
    fn push_block(&mut self, wide: &[Complex32], envelope: Option<&[f32]>) {
        let n = wide.len();
        let has_envelope = envelope.is_some();
        let lag = self.lag;
        if self.at + n > self.wide_line.len() {
            // Keep only the last `lag` samples (references are read at or after `at`).
            let from = self.at - lag;
            self.envelope_line.copy_within(from..self.at, 0);
            self.wide_line.copy_within(from..self.at, 0);
            self.at = lag;
        }
        let at = self.at;
        // Three passes over the block: the envelope and the wide view stored (non-finite as
        // zero, loops that vectorise), then the running reference, sample by sample.
        let envelope = envelope.unwrap_or(&[]);
        let given = envelope.len().min(n);
        let line = &mut self.envelope_line[at..at + n];
        for (e, &v) in line.iter_mut().zip(&envelope[..given]) {
            *e = if v.is_finite() { v } else { 0.0 };
        }
        line[given..].fill(0.0);
        store_finite(&mut self.wide_line[at..at + n], wide);
        self.reference.fill(
            &self.envelope_line[at..at + n],
            &mut self.references[at..at + n],
        );
        // The reference at input `pushed + i` is centred on the sample `lag` pushes older, at
        // `at + i − lag` in the lines; the first `lag` inputs of the run complete none.
        let first = (lag as u64).saturating_sub(self.pushed).min(n as u64) as usize;
        self.pushed += n as u64;
        self.at += n;
        let mut i = first;
        while i < n {
            let take = (self.window_len - self.in_window).min(n - i);
            self.meter_run(at + i - lag, at + i - lag + take, has_envelope);
            i += take;
        }
    }

    /// Meters the delayed samples at `a..b` of the lines (inside one window); their
    /// references are `lag` samples later.
    fn meter_run(&mut self, a: usize, b: usize, has_envelope: bool) {
        let k = self.metered;
        self.metered += (b - a) as u64;
        self.spectrum.push(&self.wide_line[a..b]);
        if has_envelope {
            let settling = (self.settings.settling_samples + self.lag) as u64;
            let settled = a + settling.saturating_sub(k).min((b - a) as u64) as usize;
            let lag = self.lag;
            // Running figures in locals, so they stay in registers beside the pushes.
            let (mut sum, mut low, mut high) =
                (self.reference_sum, self.reference_min, self.reference_max);
            let ratios = &mut self.ratios;
            for (&e, &reference) in self.envelope_line[settled..b]
                .iter()
                .zip(&self.references[settled + lag..b + lag])
            {
                if reference > 0.0 {
                    ratios.push(order_key((f64::from(e) / reference) as f32));
                    sum += reference;
                    low = low.min(reference);
                    high = high.max(reference);
                }
            }
            (self.reference_sum, self.reference_min, self.reference_max) = (sum, low, high);
        }
        self.in_window += b - a;
        if self.in_window == self.window_len {
            self.close_window();
        }
    }

    /// Ends the run: the partial window (if any) is closed. Later pushes are ignored; the last
    /// 25 ms (the reference's look-ahead) are not metered.
    pub fn finish(&mut self) {
        if !self.finished && self.in_window > 0 {
            self.close_window();
        }
        self.finished = true;
    }

    /// Returns the meter to its freshly built state (recording stays as it was).
    pub fn reset(&mut self) {
        let recording = self.recorded.is_some();
        let settings = self.settings;
        if let Ok(fresh) = CarrierMeter::new(settings) {
            *self = fresh;
            self.record_windows(recording);
        }
    }

    fn close_window(&mut self) {
        let fs = self.settings.sample_rate;
        let duration_s = self.in_window as f64 / fs;
        let start_s = self.window_start as f64 / fs - self.settings.time_offset_s;
        let reading = self.read_window(start_s, duration_s);
        self.account(&reading);
        if let Some(recorded) = self.recorded.as_mut() {
            recorded.push(reading);
        }
        self.window_start += self.in_window as u64;
        self.in_window = 0;
        self.spectrum.reset();
        self.ratios.clear();
        self.reference_sum = 0.0;
        self.reference_min = f64::INFINITY;
        self.reference_max = 0.0;
        self.locked_before = self.lock_all == Some(true);
        self.lock_all = None;
    }

    /// Carrier power and noise density of the window, if the spectrum could be read.
    fn carrier_and_noise(&mut self) -> Option<(f64, f64)> {
        let s = &self.settings;
        let (spectrum, density) = (&self.spectrum, &self.density);
        let peak = find_carrier_in(spectrum, density, 0.0, s.search_hz)?;
        let n0 = estimate_noise_density_in(
            spectrum,
            density,
            &peak,
            s.bandwidth_hz,
            s.flat_band_hz,
            &mut self.floor,
        )?;
        let lobe = (2 * MAIN_LOBE_HALF_WIDTH_BINS + 1) as f64 * self.spectrum.bin_width();
        let carrier = (peak.power - n0 * lobe).max(0.0);
        Some((carrier, n0))
    }

    fn read_window(&mut self, start_s: f64, duration_s: f64) -> WindowReading {
        let s = self.settings;
        self.spectrum.density_into(&mut self.density);
        let measured = self.carrier_and_noise();
        let cnr_db = measured.map(|(c, n0)| {
            if n0 > 0.0 {
                10.0 * (c / (n0 * 2.0 * s.bandwidth_hz)).log10()
            } else {
                f64::INFINITY
            }
        });
        let cnr_ok = cnr_db.filter(|c| !c.is_nan());
        self.present = match cnr_ok {
            Some(c) if self.present => c >= CARRIER_OFF_CNR_DB,
            Some(c) => c >= CARRIER_ON_CNR_DB,
            None => false,
        };
        let mut reading = WindowReading {
            start_s: start_s.max(0.0),
            duration_s: duration_s - (start_s.min(0.0)).abs(),
            carrier_present: self.present,
            carrier_dbfs: None,
            cnr_db: None,
            positive: None,
            negative: None,
            locked: self.lock_all,
        };
        let Some((carrier, n0)) = measured.filter(|_| self.present) else {
            return reading;
        };
        reading.carrier_dbfs = (carrier > 0.0).then(|| 10.0 * carrier.log10());
        reading.cnr_db = cnr_ok.filter(|c| c.is_finite()).or(Some(f64::MAX.log10()));
        let steady = self.reference_min >= STEADY_RATIO * self.reference_max;
        // Every metered sample of the window must have its ratio: the scale below compares the
        // reference's mean with the spectrum's carrier, and the spectrum spans the whole window.
        // A window partly inside the filters' settling (the capture's first) whose level moves
        // would otherwise scale by a different stretch (measured under Rayleigh fading: +0.029
        // on the positive peak at 50 dB CNR).
        let enough =
            self.ratios.len() * 2 >= self.window_len && self.ratios.len() == self.in_window;
        // A loop must have held lock for a whole window first: a loop that has just locked
        // is still settling its phase (measured: the first locked window read 0.525 for 0.5).
        let lock_ok = match self.lock_all {
            None => true,
            Some(all) => all && self.locked_before,
        };
        if !(steady && enough && carrier > 0.0 && lock_ok) {
            return reading;
        }
        let mean_reference = self.reference_sum / self.ratios.len() as f64;
        let scale = mean_reference / carrier.sqrt();
        let n = self.ratios.len();
        let hi_at = (((1.0 - PEAK_TAIL) * (n - 1) as f64).round() as usize).min(n - 1);
        let lo_at = ((PEAK_TAIL * (n - 1) as f64).round() as usize).min(n - 1);
        let (lo, hi) = tail_ranks(&mut self.ratios, lo_at, hi_at);
        let (lo, hi) = (f64::from(lo), f64::from(hi));
        let sigma = (n0 * s.channel_noise_bandwidth_hz / 2.0 / carrier).sqrt();
        reading.positive = noise_corrected_peak(hi * scale - 1.0, sigma, PEAK_TAIL);
        let trough = lo * scale;
        reading.negative = if trough < PINCH {
            // The trough is zero within the noise: the envelope pinches off. The Gaussian
            // noise model does not hold there (the envelope of noise alone is Rayleigh), so
            // the reading is 100 %, the modulation monitor's overmodulation.
            Some(1.0)
        } else {
            noise_corrected_peak(1.0 - trough, sigma, PEAK_TAIL)
        };
        reading
    }

    fn account(&mut self, r: &WindowReading) {
        let a = &mut self.summary;
        a.measured_s += r.duration_s;
        if r.locked.is_some() {
            a.any_lock = true;
        }
        if !r.carrier_present {
            return;
        }
        a.present_s += r.duration_s;
        a.present_windows += 1;
        if r.locked == Some(true) {
            a.locked_windows += 1;
        }
        if let (Some(dbfs), Some(cnr)) = (r.carrier_dbfs, r.cnr_db) {
            let c = 10f64.powf(dbfs / 10.0);
            a.carrier_energy += c * r.duration_s;
            a.noise_energy += c / 10f64.powf(cnr / 10.0) * r.duration_s;
        }
        if r.positive.is_some() || r.negative.is_some() {
            a.depth_windows += 1;
            a.positive = max_opt(a.positive, r.positive);
            a.negative = max_opt(a.negative, r.negative);
            if r.negative.is_some_and(|n| n >= OVERMODULATION) {
                a.overmodulated += 1;
            }
        }
    }

    /// Figures over the windows closed so far.
    pub fn summary(&self) -> MeterSummary {
        let a = &self.summary;
        let present = a.present_s > 0.0 && a.carrier_energy > 0.0;
        MeterSummary {
            measured_s: a.measured_s,
            carrier_present_s: a.present_s,
            carrier_dbfs: present.then(|| 10.0 * (a.carrier_energy / a.present_s).log10()),
            cnr_db: (present && a.noise_energy > 0.0)
                .then(|| 10.0 * (a.carrier_energy / a.noise_energy).log10()),
            cnr_bandwidth_hz: 2.0 * self.settings.bandwidth_hz,
            positive_peak: a.positive,
            negative_peak: a.negative,
            depth_windows: a.depth_windows,
            overmodulated_windows: a.overmodulated,
            lock_fraction: (a.any_lock && a.present_windows > 0)
                .then(|| a.locked_windows as f64 / a.present_windows as f64),
        }
    }
}

/// erfc by the Chebyshev fit of W. H. Press et al., *Numerical Recipes in C*, 2nd ed., §6.2
/// (`erfcc`, fractional error below 1.2·10⁻⁷ everywhere).
pub fn erfc(x: f64) -> f64 {
    let z = x.abs();
    let t = 1.0 / (1.0 + 0.5 * z);
    let r = t * erfc_exponent(z, t).exp();
    if x >= 0.0 {
        r
    } else {
        2.0 - r
    }
}

/// The f32 as an i32 whose order is `f32::total_cmp`'s (the same transform it makes): sign
/// and magnitude bits flipped for negative values, so integer comparisons order the values.
#[inline(always)]
fn order_key(v: f32) -> i32 {
    let bits = v.to_bits() as i32;
    bits ^ (((bits >> 31) as u32) >> 1) as i32
}

/// The f32 of an [`order_key`] (the transform is its own inverse).
fn from_order_key(key: i32) -> f32 {
    f32::from_bits((key ^ (((key >> 31) as u32) >> 1) as i32) as u32)
}

/// Most values [`tail_ranks`] keeps per tail; deeper tails go to a selection.
const TAIL_MAX: usize = 64;

/// The values at ranks `lo_at` and `hi_at` (0-based, ascending; `lo_at` ≤ `hi_at` < len) of
/// `keys` ([`order_key`]s, so the order is `f32::total_cmp`'s): what `select_nth_unstable`
/// would place there. For the meter's 1 % tails of a window the `lo_at + 1` smallest and the
/// `len − hi_at` largest keys are kept in two small sorted arrays, one comparison per value for
/// most values (callgrind on the am command: two selections over each window cost 5.3 M
/// instructions in 2 s; the same on f32 through `total_cmp`, 5 M); deeper tails are selected.
fn tail_ranks(keys: &mut [i32], lo_at: usize, hi_at: usize) -> (f32, f32) {
    let (low_len, high_len) = (lo_at + 1, keys.len() - hi_at);
    if low_len > TAIL_MAX || high_len > TAIL_MAX {
        let hi = *keys.select_nth_unstable(hi_at).1;
        let lo = *keys.select_nth_unstable(lo_at).1;
        return (from_order_key(lo), from_order_key(hi));
    }
    // low: the smallest so far, ascending; high: the largest so far, ascending.
    let (mut low, mut high) = ([0i32; TAIL_MAX], [0i32; TAIL_MAX]);
    let (mut lows, mut highs) = (0, 0);
    for &v in keys.iter() {
        if lows < low_len || v < low[lows - 1] {
            // Insert in order; when full, the largest falls off the end.
            let mut at = lows.min(low_len - 1);
            while at > 0 && v < low[at - 1] {
                low[at] = low[at - 1];
                at -= 1;
            }
            low[at] = v;
            lows = (lows + 1).min(low_len);
        }
        if highs < high_len || v > high[0] {
            // Insert in order; when full, the smallest falls off the start.
            let mut at = if highs < high_len {
                // Make room at the end.
                highs
            } else {
                0
            };
            if highs < high_len {
                while at > 0 && v < high[at - 1] {
                    high[at] = high[at - 1];
                    at -= 1;
                }
            } else {
                while at + 1 < high_len && v > high[at + 1] {
                    high[at] = high[at + 1];
                    at += 1;
                }
            }
            high[at] = v;
            highs = (highs + 1).min(high_len);
        }
    }
    (from_order_key(low[low_len - 1]), from_order_key(high[0]))
}

/// Points over half a modulation cycle in the noise model.
const MODEL_POINTS: usize = 1024;

/// cos θ at the model's points θ = (i + ½)·π/`MODEL_POINTS`, computed once per process
/// (callgrind on the am command: computing them per reading cost 2.8 M instructions in 2 s).
fn model_cosines() -> &'static [f64; MODEL_POINTS] {
    static COSINES: std::sync::OnceLock<[f64; MODEL_POINTS]> = std::sync::OnceLock::new();
    COSINES.get_or_init(|| {
        let step = std::f64::consts::PI / MODEL_POINTS as f64;
        std::array::from_fn(|i| ((i as f64 + 0.5) * step).cos())
    })
}

/// Beyond ±this argument erfc is 0 or 2 to within erfc(10) ≈ 2·10⁻⁴⁵, far below the 10⁻¹⁴
/// the root finder resolves, so [`exceedance`] counts such points instead of evaluating them.
const ERFC_SATURATED: f64 = 10.0;

/// P(μ·cos θ + σ·z > d) for θ uniform on [0, π) and z standard normal; `cosines` from
/// [`model_cosines`]. For μ ≥ 0 the erfc argument (d − μ·cos θ)/(σ√2) rises with the point
/// index (the cosines fall), so the points below −[`ERFC_SATURATED`] (each adds 2) and above
/// +[`ERFC_SATURATED`] (each adds 0) are found by bisection and only the points between are
/// evaluated: at the am command's 49 dB CNR a sixth of them (callgrind: the model went from 28 M
/// instructions to MEASURED). The terms are summed in four lanes with [`erfc_lanes`], a loop
/// that vectorises (AVX2 where the CPU has it, without FMA: the same operations, so the same
/// value on every x86-64).
fn exceedance(cosines: &[f64; MODEL_POINTS], mu: f64, d: f64, sigma: f64) -> f64 {
    let scale = 1.0 / (sigma * std::f64::consts::SQRT_2);
    let argument = |c: f64| (d - mu * c) * scale;
    let (saturated, evaluated) = if mu >= 0.0 {
        // Whole chunks of four, so the lanes stay aligned with the points.
        let low = cosines.partition_point(|&c| argument(c) < -ERFC_SATURATED) / 4 * 4;
        let high = cosines.partition_point(|&c| argument(c) <= ERFC_SATURATED);
        let high = high.next_multiple_of(4).min(MODEL_POINTS).max(low);
        (low, &cosines[low..high])
    } else {
        (0, &cosines[..])
    };
    let sum = 2.0 * saturated as f64 + erfc_sum(evaluated, mu, d, scale);
    0.5 * sum / MODEL_POINTS as f64
}

/// Σ erfc((d − μ·c)·`scale`) over `cosines` (a multiple of four), in four lanes.
fn erfc_sum(cosines: &[f64], mu: f64, d: f64, scale: f64) -> f64 {
    #[inline(always)]
    fn kernel(cosines: &[f64], mu: f64, d: f64, scale: f64) -> f64 {
        let mut acc = [0.0f64; 4];
        for c in cosines.chunks_exact(4) {
            let x: [f64; 4] = std::array::from_fn(|l| (d - mu * c[l]) * scale);
            let e = erfc_lanes(x);
            for l in 0..4 {
                acc[l] += e[l];
            }
        }
        (acc[0] + acc[2]) + (acc[1] + acc[3])
    }
    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    unsafe fn kernel_avx2(cosines: &[f64], mu: f64, d: f64, scale: f64) -> f64 {
        kernel(cosines, mu, d, scale)
    }
    #[cfg(target_arch = "x86_64")]
    if std::arch::is_x86_feature_detected!("avx2") {
        // SAFETY: the CPU has AVX2 (checked just above).
        return unsafe { kernel_avx2(cosines, mu, d, scale) };
    }
    kernel(cosines, mu, d, scale)
}

/// The exponent of the fit in [`erfc`]: erfc(z) = t·e^(this), t = 1/(1 + z/2), z ≥ 0.
#[inline(always)]
fn erfc_exponent(z: f64, t: f64) -> f64 {
    -z * z - 1.265_512_23
        + t * (1.000_023_68
            + t * (0.374_091_96
                + t * (0.096_784_18
                    + t * (-0.186_288_06
                        + t * (0.278_868_07
                            + t * (-1.135_203_98
                                + t * (1.488_515_87 + t * (-0.822_152_23 + t * 0.170_872_77))))))))
}

/// [`erfc`] of four values with [`exp_poly`] in place of the library's `exp` (a difference of
/// a few units in the last place).
#[inline(always)]
fn erfc_lanes(x: [f64; 4]) -> [f64; 4] {
    let z: [f64; 4] = std::array::from_fn(|l| x[l].abs());
    let t: [f64; 4] = std::array::from_fn(|l| 1.0 / (1.0 + 0.5 * z[l]));
    let poly: [f64; 4] = std::array::from_fn(|l| erfc_exponent(z[l], t[l]));
    std::array::from_fn(|l| {
        let r = t[l] * exp_poly(poly[l]);
        if x[l] >= 0.0 {
            r
        } else {
            2.0 - r
        }
    })
}

/// e^x without a call, for a loop that vectorises: x = k·ln 2 + r with k = round(x/ln 2) and
/// |r| ≤ ½ ln 2 (Cody and Waite's reduction, ln 2 split in two so k·ln 2 is exact to f64;
/// from memory), e^r by its Taylor series to r¹² (truncation below 0.347¹³/13! ≈ 1.7·10⁻¹⁶),
/// 2^k put into the exponent field. Arguments under −708 give e^−708 ≈ 3·10⁻³⁰⁸ (0 for the
/// model's sums); over 709, e^709. The test compares with `f64::exp` over [−708, 709].
#[inline(always)]
fn exp_poly(x: f64) -> f64 {
    const LN2_HI: f64 = 0.693_147_180_369_123_8; // ln 2 to 32 bits
    const LN2_LO: f64 = 1.908_214_929_270_587_7e-10; // ln 2 − LN2_HI
    let x = x.clamp(-708.0, 709.0);
    // Round to nearest by the 1.5·2⁵² trick (no packed f64 → i64 conversion on plain x86-64).
    const SHIFT: f64 = 6_755_399_441_055_744.0;
    let kf = (x * std::f64::consts::LOG2_E + SHIFT) - SHIFT;
    let r = (x - kf * LN2_HI) - kf * LN2_LO;
    let mut p = 1.0 / 479_001_600.0; // 1/12!
    for d in [
        39_916_800.0,
        3_628_800.0,
        362_880.0,
        40_320.0,
        5_040.0,
        720.0,
        120.0,
        24.0,
        6.0,
        2.0,
        1.0,
        1.0,
    ] {
        p = p * r + 1.0 / d;
    }
    // 2^k: k + 1023 in the exponent field, k from the shifted value's low bits.
    let k_bits = ((kf + SHIFT).to_bits() as i64).wrapping_sub(SHIFT.to_bits() as i64);
    p * f64::from_bits(((k_bits + 1023) as u64) << 52)
}

/// The peak modulation μ whose reading, with noise, would be `reading`.
///
/// Derivation. Near a peak the envelope of carrier A plus complex Gaussian noise of power N is
/// A(1 + μ·m) + n_I, n_I the in-phase noise (variance N/2), as long as A(1 ± μ) ≫ √N (Haykin,
/// *Communication Systems*, ch. 2, envelope of a signal plus narrowband noise; for the coherent
/// detector it holds exactly). Relative to the carrier the noise is σ = √(N/2)/A with
/// N = N0 × the channel's noise bandwidth. A reading is the (1 − `tail`) quantile of
/// m + n_I/A over the window. Modelling the modulation near its peaks as a sine (m = μ cos θ,
/// θ uniform: the arcsine law) the quantile d satisfies P(μ cos θ + σ z > d) = `tail`; that
/// probability rises with μ, so μ is found by bisection. Without noise it gives d/cos(π·tail),
/// the sampled sine's own correction. For programme material the sine model is an
/// approximation; the correction is then about the noise's quantile offset, which is what
/// inflates the reading (0.80 read as 0.89 at 25.8 dB CNR). `None` for non-finite input.
pub fn noise_corrected_peak(reading: f64, sigma: f64, tail: f64) -> Option<f64> {
    if !(reading.is_finite() && sigma.is_finite() && tail > 0.0 && tail < 0.5) {
        return None;
    }
    if sigma < 1e-5 {
        return Some(reading.max(0.0) / (std::f64::consts::PI * tail).cos());
    }
    let cosines = model_cosines();
    let exceedance = |mu: f64, d: f64, sigma: f64| exceedance(cosines, mu, d, sigma);
    let g_zero = exceedance(0.0, reading, sigma) - tail;
    if g_zero >= 0.0 {
        return Some(0.0);
    }
    let mut low = 0.0;
    let mut high = reading.max(0.0) / (std::f64::consts::PI * tail).cos() + sigma;
    let mut grow = 0;
    let mut g_high = exceedance(high, reading, sigma) - tail;
    while g_high < 0.0 && grow < 40 {
        high = 2.0 * high + sigma;
        g_high = exceedance(high, reading, sigma) - tail;
        grow += 1;
    }
    // The root of g(μ) = P(μ) − tail inside [low, high] (g rises with μ) by the Illinois
    // variant of regula falsi (Dowell & Jarratt, BIT 11, 1971; from memory): about 10
    // evaluations of the 1024-point model instead of bisection's 36 for the same bracket
    // below 10⁻¹⁰ (callgrind: the meter was a fifth of the whole am command).
    let mut g_low = g_zero;
    let mut last_side = 0;
    for _ in 0..80 {
        if high - low < 1e-10 || g_high <= g_low {
            break;
        }
        let mut mid = (low * g_high - high * g_low) / (g_high - g_low);
        if !(mid > low && mid < high) {
            mid = 0.5 * (low + high);
        }
        let g = exceedance(mid, reading, sigma) - tail;
        if g.abs() < 1e-14 {
            return Some(mid);
        }
        if g < 0.0 {
            low = mid;
            g_low = g;
            if last_side < 0 {
                g_high *= 0.5;
            }
            last_side = -1;
        } else {
            high = mid;
            g_high = g;
            if last_side > 0 {
                g_low *= 0.5;
            }
            last_side = 1;
        }
    }
    Some(0.5 * (low + high))
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{rngs::StdRng, SeedableRng};
    use rand_distr::{Distribution, Normal};

    #[test]
    fn triangle_runs_match_the_sample_by_sample_form_bit_for_bit() {
        use rand::RngExt;
        let mut rng = StdRng::seed_from_u64(3);
        let xs: Vec<f32> = (0..5000).map(|_| rng.random_range(0.0..2.0)).collect();
        let mut plain = Triangle::new(37);
        let expected: Vec<f64> = xs.iter().map(|&x| plain.next(f64::from(x))).collect();
        // Pieces that end inside, at and across the ring's end.
        for piece in [1, 5, 36, 37, 38, 100, 5000] {
            let mut runs = Triangle::new(37);
            let mut got = vec![0.0; xs.len()];
            for (x, o) in xs.chunks(piece).zip(got.chunks_mut(piece)) {
                runs.fill(x, o);
            }
            let same = got
                .iter()
                .zip(&expected)
                .all(|(a, b)| a.to_bits() == b.to_bits());
            assert!(same, "pieces of {piece}");
        }
    }

    /// The root finder against plain bisection (60 halvings of [0, 4]) on the same model.
    #[test]
    fn regula_falsi_agrees_with_bisection() {
        let cosines = model_cosines();
        for (reading, sigma) in [
            (0.45, 0.05),
            (0.9, 0.036),
            (0.2, 0.07),
            (1.3, 0.2),
            (0.05, 0.1),
        ] {
            let (mut low, mut high) = (0.0, 4.0);
            for _ in 0..60 {
                let mid = 0.5 * (low + high);
                if exceedance(cosines, mid, reading, sigma) < PEAK_TAIL {
                    low = mid;
                } else {
                    high = mid;
                }
            }
            let got = noise_corrected_peak(reading, sigma, PEAK_TAIL).unwrap();
            // Both stop within 1e-10 of the same root; 1e-9 leaves room for the slope.
            assert!(
                (got - low).abs() < 1e-9,
                "{reading} {sigma}: {got} vs {low}"
            );
        }
    }

    /// The tails kept in small arrays give the ranks a selection gives, on random values with
    /// ties, rising and falling runs, tails of one value and tails too deep for the arrays.
    #[test]
    fn tail_ranks_are_the_selected_ranks() {
        let mut rng = StdRng::seed_from_u64(5);
        let normal = Normal::new(1.0f32, 0.3).unwrap();
        let random: Vec<f32> = (0..4800).map(|_| normal.sample(&mut rng)).collect();
        let ties: Vec<f32> = random.iter().map(|v| (v * 8.0).round() / 8.0).collect();
        let rising: Vec<f32> = (0..4800).map(|i| i as f32 * 1e-3).collect();
        let falling: Vec<f32> = rising.iter().rev().copied().collect();
        // Signed zeros, infinities and both signs: the order must be total_cmp's.
        let signs: Vec<f32> = random
            .iter()
            .enumerate()
            .map(|(i, &v)| match i % 97 {
                0 => -0.0,
                1 => 0.0,
                2 => f32::INFINITY,
                3 => f32::NEG_INFINITY,
                _ => v - 1.0,
            })
            .collect();
        for values in [random, ties, rising, falling, signs] {
            for (lo_at, hi_at) in [(48, 4751), (0, 4799), (0, 0), (63, 4736), (200, 4500)] {
                let mut sorted = values.clone();
                sorted.sort_by(f32::total_cmp);
                let mut keys: Vec<i32> = values.iter().map(|&v| order_key(v)).collect();
                let (lo, hi) = tail_ranks(&mut keys, lo_at, hi_at);
                let (want_lo, want_hi) = (sorted[lo_at], sorted[hi_at]);
                assert_eq!(
                    (lo.to_bits(), hi.to_bits()),
                    (want_lo.to_bits(), want_hi.to_bits())
                );
            }
        }
    }

    /// Counting the saturated points gives the full 1024-point sum: every term evaluated,
    /// in f64 with the library's erfc fit, on readings from no noise to heavy noise.
    #[test]
    fn counting_saturated_points_keeps_the_full_sum() {
        let cosines = model_cosines();
        for (mu, d, sigma) in [
            (0.5, 0.5, 0.0024),
            (0.5, 0.49, 0.01),
            (0.0, 0.3, 0.01),
            (0.0, -0.3, 0.01),
            (1.2, 0.9, 0.2),
            (0.7, 1.5, 0.001),
            (0.7, -0.8, 0.001),
            (-0.4, 0.1, 0.05),
        ] {
            let scale = 1.0 / (sigma * std::f64::consts::SQRT_2);
            let full: f64 = cosines
                .iter()
                .map(|&c| erfc((d - mu * c) * scale))
                .sum::<f64>()
                / (2.0 * MODEL_POINTS as f64);
            let got = exceedance(cosines, mu, d, sigma);
            // Rounding of 1024 terms in a different order: 1e-14 of the sum's scale.
            assert!(
                (got - full).abs() < 1e-14,
                "{mu} {d} {sigma}: {got} vs {full}"
            );
        }
    }

    /// The call-free exp against the library's over its whole range (relative error; the
    /// series and the reduction leave a few units in the last place, 1e-15 allows ~5 ulp), and
    /// the vectorised erfc against the scalar one (the same fit, so only exp's difference).
    #[test]
    fn exp_poly_and_erfc_lanes_match_the_library() {
        let mut worst: f64 = 0.0;
        for i in 0..=200_000 {
            let x = -708.0 + 1417.0 * i as f64 / 200_000.0;
            worst = worst.max((exp_poly(x) / x.exp() - 1.0).abs());
        }
        for x in [
            0.0,
            1e-300,
            -1e-300,
            0.5 * std::f64::consts::LN_2,
            -0.34657359,
        ] {
            worst = worst.max((exp_poly(x) / x.exp() - 1.0).abs());
        }
        assert!(worst < 1e-15, "worst relative error {worst}");
        assert!(exp_poly(-1e6) == exp_poly(-708.0) && exp_poly(-1e6) < 1e-307);
        assert!(exp_poly(f64::NAN).is_nan() || exp_poly(f64::NAN).is_finite());
        for i in 0..2_000 {
            let x = -30.0 + 60.0 * i as f64 / 2_000.0;
            let got = erfc_lanes([x, -x, 0.5 * x, 2.0 * x]);
            for (g, v) in got.iter().zip([x, -x, 0.5 * x, 2.0 * x]) {
                assert!(
                    (g - erfc(v)).abs() <= 1e-15 * erfc(v).max(1e-300) + 1e-300,
                    "{v}"
                );
            }
        }
    }

    #[test]
    fn erfc_matches_known_values() {
        // erfc(0) = 1, erfc(1) = 0.157299207050285, erfc(2) = 0.004677734981047266,
        // erfc(-1) = 1.842700792949715 (Abramowitz & Stegun, table 7.1; scipy.special.erfc).
        for (x, want) in [
            (0.0, 1.0),
            (1.0, 0.157_299_207_050_285),
            (2.0, 0.004_677_734_981_047_266),
            (-1.0, 1.842_700_792_949_715),
        ] {
            assert!((erfc(x) / want - 1.0).abs() < 2e-7, "{x}");
        }
    }

    /// Monte Carlo of the estimator alone: quantiles of μ cos θ + σ z over sampled sines.
    #[test]
    fn noise_correction_inverts_the_quantile_of_a_noisy_sine() {
        let mut rng = StdRng::seed_from_u64(3);
        for (mu, sigma) in [(0.5, 0.05), (0.8, 0.036), (0.3, 0.07), (0.9, 0.0)] {
            let normal = Normal::new(0.0, 1.0).unwrap();
            let n = 400_000;
            let mut x: Vec<f64> = (0..n)
                .map(|i| {
                    let theta = std::f64::consts::TAU * 997.0 * i as f64 / 48_000.0 + 0.1;
                    mu * theta.cos() + sigma * normal.sample(&mut rng)
                })
                .collect();
            let at = ((1.0 - PEAK_TAIL) * (n - 1) as f64).round() as usize;
            let d = *x.select_nth_unstable_by(at, f64::total_cmp).1;
            let corrected = noise_corrected_peak(d, sigma, PEAK_TAIL).unwrap();
            eprintln!("μ {mu} σ {sigma}: read {d:.4}, corrected {corrected:.4}");
            // 4·10⁵ samples: the quantile's own scatter is below 10⁻³ of full scale.
            assert!((corrected - mu).abs() < 0.004, "{mu} {sigma}: {corrected}");
        }
    }

    fn settings() -> MeterSettings {
        MeterSettings {
            sample_rate: 48_000.0,
            window_s: 0.1,
            bandwidth_hz: 5_000.0,
            search_hz: 1_000.0,
            flat_band_hz: 10_000.0,
            channel_noise_bandwidth_hz: 10_000.0,
            settling_samples: 0,
            time_offset_s: 0.0,
        }
    }

    #[test]
    fn chunking_does_not_change_the_readings() {
        let fs = 48_000.0;
        let mut rng = StdRng::seed_from_u64(5);
        let normal = Normal::new(0.0, 0.01).unwrap();
        let (wide, env): (Vec<Complex32>, Vec<f32>) = (0..30_000)
            .map(|i| {
                let t = i as f64 / fs;
                let a = 0.3 * (1.0 + 0.5 * (std::f64::consts::TAU * 700.0 * t).cos());
                let z = Complex32::new(
                    (a + normal.sample(&mut rng)) as f32,
                    normal.sample(&mut rng) as f32,
                );
                (z, z.norm())
            })
            .unzip();
        // The envelope here is of the unfiltered signal: its noise bandwidth is the whole rate.
        let mut unfiltered = settings();
        unfiltered.channel_noise_bandwidth_hz = fs;
        let run = |cuts: &[usize]| {
            let mut m = CarrierMeter::new(unfiltered).unwrap();
            m.record_windows(true);
            let mut at = 0;
            for &c in cuts.iter().chain(std::iter::once(&wide.len())) {
                m.push(&wide[at..c], Some(&env[at..c]), None);
                at = c;
            }
            m.finish();
            (m.take_windows(), m.summary())
        };
        let whole = run(&[]);
        assert_eq!(whole, run(&[1, 777, 4800, 4801, 20_000]));
        assert_eq!(whole.0.len(), 7);
        assert!(whole.0[1].carrier_present);
        let p = whole.0[2].positive.unwrap();
        assert!((p - 0.5).abs() < 0.02, "{p}");
    }

    #[test]
    fn silence_is_no_carrier_and_bad_settings_are_refused() {
        let mut m = CarrierMeter::new(settings()).unwrap();
        m.record_windows(true);
        let zeros = vec![Complex32::default(); 9600];
        m.push(&zeros, Some(&vec![0.0; 9600]), None);
        m.finish();
        let w = m.take_windows();
        assert!(w.iter().all(|w| !w.carrier_present && w.cnr_db.is_none()));
        assert_eq!(m.summary().carrier_present_s, 0.0);
        let mut bad = settings();
        bad.window_s = 0.0001;
        assert!(CarrierMeter::new(bad).is_err());
        bad.window_s = f64::NAN;
        assert!(CarrierMeter::new(bad).is_err());
    }
}

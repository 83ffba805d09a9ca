//! Counters shared between the device callbacks and the rest of the run, and the clock-rate
//! meter.

use std::sync::atomic::{AtomicU64, Ordering};

/// Counts and measured figures of a live run, shared (in an `Arc`) between the device
/// callbacks, the sink and source, and the job that writes the report. Only atomics: the
/// callbacks update it without locking.
#[derive(Debug)]
pub struct LiveStats {
    underruns: AtomicU64,
    overruns: AtomicU64,
    stream_errors: AtomicU64,
    output_ppm: AtomicU64,
    input_ppm: AtomicU64,
    latency_s: AtomicU64,
    correction_ppm: AtomicU64,
}

impl Default for LiveStats {
    fn default() -> Self {
        let nan = f64::NAN.to_bits();
        LiveStats {
            underruns: AtomicU64::new(0),
            overruns: AtomicU64::new(0),
            stream_errors: AtomicU64::new(0),
            output_ppm: AtomicU64::new(nan),
            input_ppm: AtomicU64::new(nan),
            latency_s: AtomicU64::new(nan),
            correction_ppm: AtomicU64::new(nan),
        }
    }
}

/// A snapshot of [`LiveStats`] for the report.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct LiveFigures {
    /// Times the output callback found the ring empty while audio was due.
    pub underruns: u64,
    /// Times a ring was full and samples were dropped (capture side).
    pub overruns: u64,
    /// Errors the sound system reported through the stream's error callback (the ALSA
    /// PulseAudio plugin reports spurious ones while the audio stays clean).
    pub stream_errors: u64,
    /// Sound-card clock error in ppm: the output device against the capture device when both
    /// are live, else the one live device against the system's monotonic clock; positive when
    /// the device runs fast. `None` until enough callbacks were timed.
    pub clock_ppm: Option<f64>,
    /// Output latency in seconds: the ring's target fill plus one device buffer.
    pub latency_s: Option<f64>,
    /// The resampling correction applied to follow a live source's clock, ppm (positive:
    /// more samples out than in); `None` when the output is paced by the card instead.
    pub correction_ppm: Option<f64>,
}

fn load_f64(a: &AtomicU64) -> Option<f64> {
    let v = f64::from_bits(a.load(Ordering::Relaxed));
    v.is_finite().then_some(v)
}

impl LiveStats {
    /// Counts one underrun.
    pub fn add_underrun(&self) {
        self.underruns.fetch_add(1, Ordering::Relaxed);
    }
    /// Counts one overrun.
    pub fn add_overrun(&self) {
        self.overruns.fetch_add(1, Ordering::Relaxed);
    }
    /// Counts one stream error.
    pub fn add_stream_error(&self) {
        self.stream_errors.fetch_add(1, Ordering::Relaxed);
    }
    /// Publishes the output device's clock error (ppm against the system clock).
    pub fn set_output_ppm(&self, ppm: f64) {
        self.output_ppm.store(ppm.to_bits(), Ordering::Relaxed);
    }
    /// Publishes the capture device's clock error (ppm against the system clock).
    pub fn set_input_ppm(&self, ppm: f64) {
        self.input_ppm.store(ppm.to_bits(), Ordering::Relaxed);
    }
    /// Publishes the output latency in seconds.
    pub fn set_latency_s(&self, seconds: f64) {
        self.latency_s.store(seconds.to_bits(), Ordering::Relaxed);
    }
    /// Publishes the drift corrector's ratio, ppm.
    pub fn set_correction_ppm(&self, ppm: f64) {
        self.correction_ppm.store(ppm.to_bits(), Ordering::Relaxed);
    }
    /// The output device's clock error against the system clock, ppm.
    pub fn output_ppm(&self) -> Option<f64> {
        load_f64(&self.output_ppm)
    }
    /// The capture device's clock error against the system clock, ppm.
    pub fn input_ppm(&self) -> Option<f64> {
        load_f64(&self.input_ppm)
    }

    /// The figures so far.
    pub fn figures(&self) -> LiveFigures {
        let clock_ppm = match (self.output_ppm(), self.input_ppm()) {
            // Output against input: the ratio of the two rates, each against the system clock.
            (Some(out), Some(inp)) => Some(((1.0 + out * 1e-6) / (1.0 + inp * 1e-6) - 1.0) * 1e6),
            (Some(one), None) | (None, Some(one)) => Some(one),
            (None, None) => None,
        };
        LiveFigures {
            underruns: self.underruns.load(Ordering::Relaxed),
            overruns: self.overruns.load(Ordering::Relaxed),
            stream_errors: self.stream_errors.load(Ordering::Relaxed),
            clock_ppm,
            latency_s: load_f64(&self.latency_s),
            correction_ppm: load_f64(&self.correction_ppm),
        }
    }
}

/// Least-squares slope of frames counted against time: a device's real frame rate.
///
/// Each callback adds (t, frames so far) with t in seconds on the system's monotonic clock;
/// the slope of the regression line is the device's rate, free of the callbacks' timing
/// jitter (which only spreads the points). Welford's running covariance update (Welford,
/// "Note on a method for calculating corrected sums of squares and products",
/// Technometrics 4(3), 1962) keeps it numerically sound over hours, with no storage.
#[derive(Debug, Clone, Copy, Default)]
pub struct RateMeter {
    n: f64,
    mean_t: f64,
    mean_f: f64,
    m2_t: f64,
    c_tf: f64,
}

impl RateMeter {
    /// Adds one observation: `frames` counted by time `t_s`.
    #[inline]
    pub fn add(&mut self, t_s: f64, frames: f64) {
        self.n += 1.0;
        let dt = t_s - self.mean_t;
        self.mean_t += dt / self.n;
        self.mean_f += (frames - self.mean_f) / self.n;
        self.m2_t += dt * (t_s - self.mean_t);
        self.c_tf += dt * (frames - self.mean_f);
    }

    /// Observations so far.
    pub fn count(&self) -> u64 {
        self.n as u64
    }

    /// Time spanned so far (√(12·var t) for evenly spread points), seconds.
    pub fn span_s(&self) -> f64 {
        if self.n < 2.0 {
            0.0
        } else {
            (12.0 * self.m2_t / self.n).sqrt()
        }
    }

    /// Frames per second, once two distinct times were seen.
    pub fn rate(&self) -> Option<f64> {
        (self.n >= 2.0 && self.m2_t > 0.0).then(|| self.c_tf / self.m2_t)
    }

    /// Clock error in ppm against `nominal_rate` once at least `min_span_s` seconds were seen.
    pub fn ppm(&self, nominal_rate: f64, min_span_s: f64) -> Option<f64> {
        if self.span_s() < min_span_s {
            return None;
        }
        self.rate().map(|r| (r / nominal_rate - 1.0) * 1e6)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{RngExt, SeedableRng};

    /// A device 150 ppm fast at 48 kHz, callbacks every 10 ms with ±3 ms of uniform jitter
    /// (seed 5): 30 s of callbacks read the rate within 2 ppm. The regression slope's standard
    /// error is σ_t·rate/√(Σ(t−t̄)²) ≈ 1.7e-3·48e3/√(3000·75) ≈ 0.17 frames/s = 3.6 ppm at
    /// worst-case σ; the seeded draw gives less.
    #[test]
    fn finds_a_clock_error_through_jitter() {
        let mut rng = rand::rngs::StdRng::seed_from_u64(5);
        let rate = 48_000.0 * (1.0 + 150e-6);
        let mut meter = RateMeter::default();
        for k in 0..3000 {
            let t_true = k as f64 * 0.01;
            let frames = (t_true * rate).floor();
            let jitter = rng.random_range(-0.003..0.003);
            meter.add(t_true + jitter, frames);
        }
        let ppm = meter.ppm(48_000.0, 10.0).unwrap();
        assert!((ppm - 150.0).abs() < 4.0, "ppm {ppm}");
        assert!((meter.span_s() - 30.0).abs() < 0.1);
        assert_eq!(RateMeter::default().ppm(48_000.0, 0.0), None);
    }

    #[test]
    fn figures_combine_output_and_input() {
        let stats = LiveStats::default();
        assert_eq!(stats.figures().clock_ppm, None);
        stats.set_output_ppm(100.0);
        assert_eq!(stats.figures().clock_ppm, Some(100.0));
        stats.set_input_ppm(-50.0);
        let ppm = stats.figures().clock_ppm.unwrap();
        // (1 + 100e-6)/(1 − 50e-6) − 1 = 150.0075e-6.
        assert!((ppm - 150.0075).abs() < 1e-3, "{ppm}");
        stats.add_underrun();
        stats.add_overrun();
        stats.add_overrun();
        let f = stats.figures();
        assert_eq!((f.underruns, f.overruns), (1, 2));
    }
}

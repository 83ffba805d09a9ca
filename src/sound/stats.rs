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
    /// Dropouts found by each side's clock meter, and their seconds (f64 bits).
    output_dropouts: AtomicU64,
    input_dropouts: AtomicU64,
    output_lost_s: AtomicU64,
    input_lost_s: AtomicU64,
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
            output_dropouts: AtomicU64::new(0),
            input_dropouts: AtomicU64::new(0),
            output_lost_s: AtomicU64::new(0f64.to_bits()),
            input_lost_s: AtomicU64::new(0f64.to_bits()),
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
    /// Times a device went on without the stream's samples while the ring did not run dry
    /// (the sound server starved, or a buffer discarded on recovery), found by the clock
    /// meters ([`RateMeter`]); output and input summed.
    pub dropouts: u64,
    /// Seconds of audio lost or inserted in those dropouts.
    pub dropout_s: f64,
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
    /// Publishes what the output device's clock meter found: dropouts and their seconds.
    pub fn set_output_dropouts(&self, count: u64, seconds: f64) {
        self.output_dropouts.store(count, Ordering::Relaxed);
        self.output_lost_s
            .store(seconds.to_bits(), Ordering::Relaxed);
    }
    /// Publishes what the capture device's clock meter found: dropouts and their seconds.
    pub fn set_input_dropouts(&self, count: u64, seconds: f64) {
        self.input_dropouts.store(count, Ordering::Relaxed);
        self.input_lost_s
            .store(seconds.to_bits(), Ordering::Relaxed);
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
            dropouts: self.output_dropouts.load(Ordering::Relaxed)
                + self.input_dropouts.load(Ordering::Relaxed),
            dropout_s: load_f64(&self.output_lost_s).unwrap_or(0.0)
                + load_f64(&self.input_lost_s).unwrap_or(0.0),
        }
    }
}

/// A device's real frame rate from its callbacks, robust to how callbacks are late, and the
/// places where the device went on without the stream (dropouts).
///
/// Each callback adds (t, frames so far) with t in seconds on the system's monotonic clock.
/// Callbacks are never early but often late (scheduling, a sound server's bursts, a start
/// that primes the device with several buffers at once), so a plain regression of frames
/// on time is biased by the delays: 2 s runs on a null sink read several hundred ppm. The
/// meter therefore works on the lateness ℓ = t − frames / nominal rate: it skips the first
/// [`RateMeter::SETTLE_S`] (priming), keeps the least lateness of each window of
/// [`RateMeter::WINDOW_S`] (the callback closest to the device's own clock), and fits a line
/// to those minima; its slope is 1 − rate / nominal. Fitting the lower envelope of one-sided
/// delays follows Moon, Skelly and Towsley, "Estimation and removal of clock skew from
/// network delay measurements", IEEE INFOCOM 1999 (they use a linear program; the minimum per
/// window is a simpler stand-in).
///
/// **Dropouts.** A clock within ±[`RateMeter::PLAUSIBLE_PPM`] moves the envelope by well
/// under a millisecond per window. A step of more than [`RateMeter::JUMP_S`] that persists
/// is the device going on without the stream's samples: up when it played or captured time
/// that the stream's frames do not account for (a sound server starved, silence inserted),
/// down when frames were taken without their time (a buffer discarded on recovery). Each
/// step counts as one dropout and its size as lost time; a step that the next window undoes
/// is a stall the device caught up on, not a dropout. The line is fitted per segment between
/// dropouts with one slope and an intercept per segment (a pooled within-segment
/// regression), so a dropout does not read as a clock error. Welford's running update
/// (Welford, "Note on a method for calculating corrected sums of squares and products",
/// Technometrics 4(3), 1962) keeps each segment's sums sound over hours with no storage:
/// nothing allocates, so the meter can run inside a device callback.
#[derive(Debug, Clone, Copy, Default)]
pub struct RateMeter {
    nominal: f64,
    first_t: Option<f64>,
    window_end: f64,
    window_min: Option<(f64, f64)>,
    /// The last fitted window's (t, ℓ), and a window that stepped away from it, held until
    /// the next window tells a dropout from a stall.
    last: Option<(f64, f64)>,
    held: Option<(f64, f64)>,
    segment: Segment,
    /// Sums of the closed segments: Σ m2_t, Σ c_tl, windows, seconds covered.
    closed_m2_t: f64,
    closed_c_tl: f64,
    closed_n: f64,
    closed_span: f64,
    longest_closed: f64,
    dropouts: u64,
    lost_s: f64,
}

/// One segment's running sums (Welford).
#[derive(Debug, Clone, Copy, Default)]
struct Segment {
    n: f64,
    first_t: f64,
    last_t: f64,
    mean_t: f64,
    mean_l: f64,
    m2_t: f64,
    c_tl: f64,
}

impl Segment {
    fn add(&mut self, t: f64, lateness: f64) {
        if self.n == 0.0 {
            self.first_t = t;
        }
        self.last_t = t;
        self.n += 1.0;
        let dt = t - self.mean_t;
        self.mean_t += dt / self.n;
        self.mean_l += (lateness - self.mean_l) / self.n;
        self.m2_t += dt * (t - self.mean_t);
        self.c_tl += dt * (lateness - self.mean_l);
    }

    fn span(&self) -> f64 {
        self.last_t - self.first_t
    }
}

impl RateMeter {
    /// Seconds skipped at the start, while the device primes its buffers.
    pub const SETTLE_S: f64 = 2.0;
    /// Seconds per window whose least lateness is kept.
    pub const WINDOW_S: f64 = 0.5;
    /// Seconds after a stream starts before its callbacks count at all: the sound server
    /// moves its buffers in a burst at the start ([`RateMeter::add_callback`]).
    pub const STREAM_WARM_UP_S: f64 = 1.0;
    /// Seconds of fitted windows before the clock error is published: over shorter spans the
    /// callbacks' bursty timing dominates (2 s runs read several hundred ppm on a null sink).
    pub const MIN_SPAN_S: f64 = 10.0;
    /// A step of the envelope between windows larger than this is a dropout: 3 ms is three
    /// times the spread of window minima measured on a loaded machine (about ±0.5 ms) and
    /// six times what a 1000 ppm clock moves in a window; a sound server drops audio in
    /// blocks of several milliseconds (common practice, no source).
    pub const JUMP_S: f64 = 0.003;
    /// Readings beyond this are not a crystal's error but a stream that never ran steadily
    /// (ten times the resampler's ±1000 ppm range); they are not published.
    pub const PLAUSIBLE_PPM: f64 = 10_000.0;

    /// A meter for a device running at `nominal_rate` frames per second.
    pub fn new(nominal_rate: f64) -> Self {
        RateMeter {
            nominal: nominal_rate,
            ..RateMeter::default()
        }
    }

    /// Adds one observation: `frames` counted by time `t_s`.
    #[inline]
    pub fn add(&mut self, t_s: f64, frames: f64) {
        if self.nominal.partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater) {
            return;
        }
        let first = *self.first_t.get_or_insert(t_s);
        if t_s < first + Self::SETTLE_S {
            self.window_end = first + Self::SETTLE_S + Self::WINDOW_S;
            return;
        }
        if t_s >= self.window_end {
            if let Some((t, lateness)) = self.window_min.take() {
                self.take_window(t, lateness);
            }
            while self.window_end <= t_s {
                self.window_end += Self::WINDOW_S;
            }
        }
        let lateness = t_s - frames / self.nominal;
        if self.window_min.is_none_or(|(_, least)| lateness < least) {
            self.window_min = Some((t_s, lateness));
        }
    }

    /// Adds a device callback at `now_s` seconds after its stream started, with `frames`
    /// moved so far; callbacks of the first [`RateMeter::STREAM_WARM_UP_S`] are left out.
    #[inline]
    pub fn add_callback(&mut self, now_s: f64, frames: u64) {
        if now_s >= Self::STREAM_WARM_UP_S {
            self.add(now_s, frames as f64);
        }
    }

    /// Takes one window's least lateness: into the segment, or held as a possible dropout.
    fn take_window(&mut self, t: f64, lateness: f64) {
        let steps = |from: Option<(f64, f64)>| {
            from.is_some_and(|(_, l): (f64, f64)| (lateness - l).abs() > Self::JUMP_S)
        };
        if let Some(held) = self.held.take() {
            if !steps(self.last) {
                // Back on the old line: the held window was a stall caught up on.
                self.segment.add(t, lateness);
                self.last = Some((t, lateness));
                return;
            }
            self.commit_dropout(held);
        }
        if steps(self.last) {
            self.held = Some((t, lateness));
        } else {
            self.segment.add(t, lateness);
            self.last = Some((t, lateness));
        }
    }

    /// The envelope stepped to `held` and stayed: count the dropout, close the segment and
    /// start the next one there.
    fn commit_dropout(&mut self, held: (f64, f64)) {
        if let Some((_, before)) = self.last {
            self.dropouts += 1;
            self.lost_s += (held.1 - before).abs();
        }
        self.closed_m2_t += self.segment.m2_t;
        self.closed_c_tl += self.segment.c_tl;
        self.closed_n += self.segment.n;
        self.closed_span += self.segment.span();
        self.longest_closed = self.longest_closed.max(self.segment.span());
        self.segment = Segment::default();
        self.segment.add(held.0, held.1);
        self.last = Some(held);
    }

    /// Windows fitted so far.
    pub fn count(&self) -> u64 {
        (self.closed_n + self.segment.n) as u64
    }

    /// Seconds covered by the fitted windows, summed over the segments between dropouts.
    pub fn span_s(&self) -> f64 {
        self.closed_span + self.segment.span()
    }

    /// Dropouts found so far (see the type's documentation).
    pub fn dropouts(&self) -> u64 {
        self.dropouts
    }

    /// Seconds lost in the dropouts found so far.
    pub fn lost_s(&self) -> f64 {
        self.lost_s
    }

    /// Frames per second, once two windows of one segment were fitted.
    pub fn rate(&self) -> Option<f64> {
        let m2 = self.closed_m2_t + self.segment.m2_t;
        let c = self.closed_c_tl + self.segment.c_tl;
        (m2 > 0.0).then(|| self.nominal * (1.0 - c / m2))
    }

    /// The longest segment between dropouts, seconds.
    pub fn longest_span_s(&self) -> f64 {
        self.longest_closed.max(self.segment.span())
    }

    /// Clock error in ppm against the nominal rate once one steady segment (no dropout)
    /// spans at least `min_span_s` seconds, and when plausible for a crystal
    /// ([`RateMeter::PLAUSIBLE_PPM`]). All segments then count in the fit. A run broken up
    /// by dropouts more often than that reads no clock: between them, steps too small to
    /// count as dropouts bias the slope (on a starved sound server, 372 ppm against the
    /// sink's 125).
    pub fn ppm(&self, min_span_s: f64) -> Option<f64> {
        if self.longest_span_s() < min_span_s {
            return None;
        }
        self.rate()
            .map(|r| (r / self.nominal - 1.0) * 1e6)
            .filter(|ppm| ppm.abs() <= Self::PLAUSIBLE_PPM)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{RngExt, SeedableRng};

    /// A device 150 ppm fast at 48 kHz, callbacks every 10 ms with ±3 ms of uniform jitter
    /// (seed 5): 30 s of callbacks read the rate within 4 ppm. Each window's least lateness
    /// sits within the lowest 1/50 of the 6 ms spread (50 callbacks per window), about
    /// 0.12 ms, which over the 28 s fitted is 4 ppm at worst; the seeded draw gives less.
    #[test]
    fn finds_a_clock_error_through_jitter() {
        let mut rng = rand::rngs::StdRng::seed_from_u64(5);
        let rate = 48_000.0 * (1.0 + 150e-6);
        let mut meter = RateMeter::new(48_000.0);
        for k in 0..3000 {
            let t_true = k as f64 * 0.01;
            let frames = (t_true * rate).floor();
            let jitter = rng.random_range(-0.003..0.003);
            meter.add(t_true + jitter, frames);
        }
        let ppm = meter.ppm(10.0).unwrap();
        assert!((ppm - 150.0).abs() < 4.0, "ppm {ppm}");
        // The first 2 s are skipped; the window minima span the rest.
        assert!((meter.span_s() - 27.5).abs() < 0.6, "{}", meter.span_s());
        assert_eq!(RateMeter::new(48_000.0).ppm(0.0), None);
    }

    /// Callbacks as a sound server delivers them: a priming burst (10 buffers at once at the
    /// start), lateness that is never negative (exponential, mean 4 ms), and a 300 ms stall
    /// every 5 s followed by a catch-up burst. The device is exact (0 ppm). A plain
    /// regression of frames on time reads the delays as a clock error; the lower envelope
    /// reads within 3 ppm (seed 9). Tolerance: the exponential delays' least value in a window
    /// of 50 callbacks is about 4 ms / 50 = 0.08 ms, and its spread over 28 s is ~3 ppm.
    #[test]
    fn late_callbacks_and_bursts_do_not_read_as_a_clock_error() {
        let mut rng = rand::rngs::StdRng::seed_from_u64(9);
        let (rate, buffer) = (48_000.0, 480.0);
        let mut meter = RateMeter::new(rate);
        let mut plain = (0.0, 0.0, 0.0, 0.0, 0.0); // n, mean t, mean f, m2 t, c tf
        let mut add_plain = |t: f64, f: f64| {
            plain.0 += 1.0;
            let dt = t - plain.1;
            plain.1 += dt / plain.0;
            plain.2 += (f - plain.2) / plain.0;
            plain.3 += dt * (t - plain.1);
            plain.4 += dt * (f - plain.2);
        };
        let mut frames = 10.0 * buffer;
        meter.add(0.0, frames);
        add_plain(0.0, frames);
        for k in 1..3000 {
            let due = k as f64 * 0.01;
            let stalled = (due % 5.0) < 0.3 && due > 1.0;
            let late: f64 = -0.004 * (1.0 - rng.random_range(0.0..1.0f64)).ln();
            let t = if stalled {
                due - due % 5.0 + 0.3 + late.min(0.001)
            } else {
                due + late
            };
            frames += buffer;
            meter.add(t, frames);
            add_plain(t, frames);
        }
        let ppm = meter.ppm(10.0).unwrap();
        assert!(ppm.abs() < 3.0, "lower envelope: {ppm} ppm");
        let plain_ppm = (plain.4 / plain.3 / rate - 1.0) * 1e6;
        // The plain regression is fooled by the stalls and the priming burst (it reads
        // about −14 ppm here), several times the envelope's error.
        assert!(
            plain_ppm.abs() > 10.0 && plain_ppm.abs() > 4.0 * ppm.abs(),
            "plain fit {plain_ppm} ppm, envelope {ppm} ppm"
        );
    }

    /// Callbacks every 10 ms with ±1 ms of jitter (seed 11) from a device 150 ppm fast
    /// whose `steps` (time, seconds) shift the lateness for good: returns the meter.
    fn stepped(steps: &[(f64, f64)], seconds: f64) -> RateMeter {
        let mut rng = rand::rngs::StdRng::seed_from_u64(11);
        let rate = 48_000.0 * (1.0 + 150e-6);
        let mut meter = RateMeter::new(48_000.0);
        for k in 0..(seconds * 100.0) as usize {
            let t = k as f64 * 0.01;
            let shift: f64 = steps.iter().filter(|s| t >= s.0).map(|s| s.1).sum();
            let frames = ((t - shift) * rate).floor();
            meter.add(t + rng.random_range(0.0..0.002), frames);
        }
        meter
    }

    /// A sound server that starves for 20 ms at 8 s (silence played, the stream's frames
    /// late for good) and discards 10 ms at 14 s: two dropouts, 30 ms lost, and the clock
    /// still reads within 6 ppm (the pooled fit gives each segment its own intercept; one
    /// line through all three would read the 20 ms over 28 s as about −400 ppm). Tolerance:
    /// a window's least lateness scatters by about 0.04 ms (the least of 50 delays uniform
    /// over 2 ms), which over segments of 5–16 s is 2–8 ppm each, less when pooled.
    #[test]
    fn dropouts_are_counted_and_do_not_read_as_a_clock_error() {
        let meter = stepped(&[(8.0, 0.020), (14.0, -0.010)], 30.0);
        assert_eq!(meter.dropouts(), 2);
        assert!((meter.lost_s() - 0.030).abs() < 0.002, "{}", meter.lost_s());
        let ppm = meter.ppm(10.0).unwrap();
        assert!((ppm - 150.0).abs() < 6.0, "ppm {ppm}");
    }

    /// A 0.7 s stall that the device then catches up on lifts one window's least lateness
    /// by about 0.2 s and the next is back on the line: no dropout, the same clock reading.
    #[test]
    fn a_stall_caught_up_on_is_not_a_dropout() {
        let mut rng = rand::rngs::StdRng::seed_from_u64(12);
        let rate = 48_000.0 * (1.0 + 150e-6);
        let mut meter = RateMeter::new(48_000.0);
        for k in 0..3000 {
            let due = k as f64 * 0.01;
            // Callbacks due in 10.3..11.0 s all arrive at 11.0 s, frames in step.
            let t = if (10.3..11.0).contains(&due) {
                11.0
            } else {
                due
            };
            meter.add(t + rng.random_range(0.0..0.002), (due * rate).floor());
        }
        assert_eq!(meter.dropouts(), 0);
        let ppm = meter.ppm(10.0).unwrap();
        assert!((ppm - 150.0).abs() < 4.0, "ppm {ppm}");
    }

    /// A stream that never runs steadily (the device takes 20 % less than real time in
    /// 100 ms pieces, as a starved sound server under load was measured to do) is all
    /// dropouts and no clock reading. Of the 5.6 s stepped, the first step (before the
    /// first window) and the last (still held when the run ends) are not counted.
    #[test]
    fn a_collapsing_stream_reads_no_clock() {
        let steps: Vec<(f64, f64)> = (0..56).map(|k| (2.0 + 0.5 * k as f64, 0.1)).collect();
        let meter = stepped(&steps, 30.0);
        assert!(meter.dropouts() >= 50, "{}", meter.dropouts());
        assert!((5.2..=5.45).contains(&meter.lost_s()), "{}", meter.lost_s());
        assert_eq!(meter.ppm(10.0), None);
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
        stats.set_output_dropouts(2, 0.25);
        stats.set_input_dropouts(1, 0.5);
        let f = stats.figures();
        assert_eq!((f.underruns, f.overruns), (1, 2));
        assert_eq!((f.dropouts, f.dropout_s), (3, 0.75));
    }
}

//! Carrier lock for SSB with a pilot or full carrier (R3E, H3E) and for VSB: a wide loop
//! acquires the carrier, a narrow one tracks it, and while locked the signal is de-rotated.

use super::LoopSettings;
use super::{CarrierPll, PllConfig};
use crate::{Complex32, Result};
use num_complex::Complex64;

/// Default tracking-loop noise bandwidth for carrier lock, in Hz (common practice, no source).
pub const DEFAULT_LOCK_BANDWIDTH_HZ: f64 = 10.0;
/// Acquisition-loop bandwidth: wide enough to pull in a dial error of tens of Hz within
/// milliseconds, then the narrow loop takes over (gear shifting; common practice, no source).
const ACQUISITION_BANDWIDTH_HZ: f64 = 100.0;
/// Corner of each of the three one-pole low-passes that isolate a pilot from the sideband
/// before the loop (−30 dB at 300 Hz, −60 dB at 1 kHz; common practice, no source).
const PILOT_CORNER_HZ: f64 = 100.0;
/// Largest dial error carrier lock corrects, in Hz: the pilot low-pass's corner. A loop that
/// strays beyond it is following leaked modulation and restarts at 0 Hz (common practice,
/// no source).
pub const MAX_DIAL_ERROR_HZ: f64 = PILOT_CORNER_HZ;
/// A loop counts as locked to a carrier only while the carrier carries at least this share of
/// the power the loop sees: the PLL's own lock detector guards against noise, not against a
/// loop dragged along by leaking modulation (common practice, no source).
const CARRIER_POWER_SHARE: f64 = 0.8;
/// Carrier lock: a wide loop acquires the carrier, then a narrow loop tracks it and, while
/// locked, its NCO de-rotates the signal, so the carrier sits at 0 Hz (and, without the pilot
/// filter, on the positive real axis). Unlocked, the signal passes unchanged; a tracking loop
/// unlocked for one arm time constant (8/B_L) goes back to acquisition.
#[derive(Debug, Clone)]
pub(crate) struct CarrierLock {
    acquire_config: PllConfig,
    track_config: PllConfig,
    acquire: CarrierPll,
    track: CarrierPll,
    tracking: bool,
    /// Per-pole coefficient of the pilot low-pass; `None` feeds the loop the signal itself.
    pilot_alpha: Option<f32>,
    pilot: [Complex32; 3],
    /// One-pole average of the loop input's power, at the acquisition loop's arm time constant.
    power_alpha: f64,
    power: f64,
    /// Loop inputs seen; acquisition waits until the power average has settled.
    seen: u64,
    /// Average of p[n]·conj(p[n−1]): its angle is the dominant frequency near 0 Hz, which
    /// tells a carrier from leaked modulation the loop may be dragged along by.
    lag_product: Complex64,
    previous: Complex32,
    rate: f64,
    /// Samples the tracking loop has been unlocked in a row, and the most allowed.
    unlocked_for: u64,
    max_unlocked: u64,
}

impl CarrierLock {
    /// Loops at `rate` with `settings` (tracking bandwidth default `default_bandwidth_hz`);
    /// `pilot_filter` isolates a carrier near 0 Hz from the modulation first (it delays the
    /// carrier's phase by a constant for a constant offset: harmless for SSB only).
    pub(crate) fn new(
        rate: f64,
        settings: &LoopSettings,
        default_bandwidth_hz: f64,
        pilot_filter: bool,
    ) -> Result<Self> {
        let mut track_config =
            PllConfig::new(rate, settings.bandwidth_hz.unwrap_or(default_bandwidth_hz));
        if let Some(damping) = settings.damping {
            track_config.damping = damping;
        }
        let track = CarrierPll::new(track_config)?;
        let acquire_config = PllConfig {
            loop_bandwidth_hz: track_config
                .loop_bandwidth_hz
                .max(ACQUISITION_BANDWIDTH_HZ.min(0.1 * rate)),
            ..track_config
        };
        let acquire = CarrierPll::new(acquire_config)?;
        let alpha = 1.0 - (-std::f64::consts::TAU * PILOT_CORNER_HZ / rate).exp();
        Ok(CarrierLock {
            acquire_config,
            track_config,
            acquire,
            track,
            tracking: false,
            pilot_alpha: pilot_filter.then_some(alpha as f32),
            pilot: [Complex32::default(); 3],
            power_alpha: (acquire_config.loop_bandwidth_hz / (8.0 * rate)).min(1.0),
            power: 0.0,
            seen: 0,
            lag_product: Complex64::default(),
            previous: Complex32::default(),
            rate,
            unlocked_for: 0,
            max_unlocked: (8.0 * rate / track_config.loop_bandwidth_hz).ceil() as u64,
        })
    }

    #[inline]
    fn pilot(&mut self, x: Complex32) -> Complex32 {
        let Some(a) = self.pilot_alpha else {
            return x;
        };
        let mut y = x;
        for state in self.pilot.iter_mut() {
            *state += (y - *state) * a;
            y = *state;
        }
        y
    }

    #[inline]
    fn next_sample(&mut self, x: Complex32) -> Complex32 {
        let x = if x.re.is_finite() && x.im.is_finite() {
            x
        } else {
            Complex32::default()
        };
        let p = self.pilot(x);
        self.power += self.power_alpha * (f64::from(p.norm_sqr()) - self.power);
        let lag = p * self.previous.conj();
        self.previous = p;
        let lag = Complex64::new(f64::from(lag.re), f64::from(lag.im));
        self.lag_product += (lag - self.lag_product) * self.power_alpha;
        if !self.tracking {
            self.acquire.next_sample(p);
            let frequency = self.acquire.frequency_hz();
            if frequency.abs() > MAX_DIAL_ERROR_HZ {
                self.restart_acquisition();
                return x;
            }

            // Three time constants: the power average within 5 % of its final value.
            self.seen += 1;
            let settled = self.seen as f64 * self.power_alpha >= 3.0;
            if settled
                && !self.dominant_strays()
                && self.acquire.is_locked()
                && self.carrier_dominates(self.acquire.carrier_amplitude())
            {
                let config = PllConfig {
                    initial_frequency_hz: self.acquire.frequency_hz(),
                    ..self.track_config
                };
                if let Ok(track) = CarrierPll::new(config) {
                    self.track = track;
                    self.tracking = true;
                    self.unlocked_for = 0;
                }
            }
            return x;
        }
        let (sin, cos) = self.track.phase().sin_cos();
        self.track.next_sample(p);
        if self.is_locked() {
            self.unlocked_for = 0;
        } else {
            self.unlocked_for += 1;
        }
        let strayed = self.track.frequency_hz().abs() > MAX_DIAL_ERROR_HZ || self.dominant_strays();
        if strayed || self.unlocked_for > self.max_unlocked {
            // Lost, or following modulation: start acquiring again.
            self.restart_acquisition();
            return x;
        }
        if self.unlocked_for > 0 {
            return x;
        }
        x * Complex32::new(cos as f32, -(sin as f32))
    }

    /// A fresh acquisition loop at 0 Hz (its arm averages restart too, so a stale lock verdict
    /// cannot carry over), waiting for the averages to settle again.
    fn restart_acquisition(&mut self) {
        if let Ok(acquire) = CarrierPll::new(self.acquire_config) {
            self.acquire = acquire;
        }
        self.tracking = false;
        self.seen = 0;
    }

    /// The dominant frequency of the loop's input, in Hz (the angle of the averaged lag-one
    /// product: the one-lag autocorrelation of a line at f has angle 2πf/fs).
    fn dominant_hz(&self) -> f64 {
        self.lag_product.arg() * self.rate / std::f64::consts::TAU
    }

    /// True when a carrier of `amplitude` holds [`CARRIER_POWER_SHARE`] of the loop's input.
    /// Only checked on a pilot (filtered input): a full carrier's share depends on the
    /// modulation, and the loop is then trusted to its own lock detector.
    fn carrier_dominates(&self, amplitude: f64) -> bool {
        self.pilot_alpha.is_none()
            || amplitude * amplitude.abs() >= CARRIER_POWER_SHARE * self.power
    }

    /// True when the loop input's dominant frequency lies beyond the dial-error range (checked
    /// on a pilot only: unfiltered, the modulation pulls the estimate away from the carrier).
    fn dominant_strays(&self) -> bool {
        self.pilot_alpha.is_some() && self.dominant_hz().abs() > MAX_DIAL_ERROR_HZ
    }

    /// De-rotates `buffer` in place.
    pub(crate) fn process_in_place(&mut self, buffer: &mut [Complex32]) {
        for x in buffer.iter_mut() {
            *x = self.next_sample(*x);
        }
    }

    /// True once the narrow loop tracks, its lock detector agrees and the carrier dominates.
    pub(crate) fn is_locked(&self) -> bool {
        self.tracking
            && self.track.is_locked()
            && self.carrier_dominates(self.track.carrier_amplitude())
    }

    /// The tracked carrier frequency (relative to the tuning) once tracking, in Hz.
    pub(crate) fn frequency_hz(&self) -> Option<f64> {
        self.tracking.then(|| self.track.frequency_hz())
    }

    pub(crate) fn reset(&mut self) {
        if let (Ok(acquire), Ok(track)) = (
            CarrierPll::new(self.acquire_config),
            CarrierPll::new(self.track_config),
        ) {
            self.acquire = acquire;
            self.track = track;
        }
        self.tracking = false;
        self.pilot = [Complex32::default(); 3];
        self.power = 0.0;
        self.seen = 0;
        self.lag_product = Complex64::default();
        self.previous = Complex32::default();
    }
}

//! Vestigial sideband (C3F): the upper sideband to W, a vestige of width f_v below the
//! carrier, and the carrier, by coherent detection through a Nyquist-slope filter.
//!
//! Chain: [`ChannelFrontEnd`](super::ChannelFrontEnd) (channel ±W) → carrier lock (a PLL de-rotates the signal so the
//! carrier sits on the positive real axis) → Nyquist-slope detector → [`Agc`](crate::dsp::Agc) →
//! [`AudioStage`](super::AudioStage) (the DC blocker removes the carrier).
//!
//! The receiver filter is H(f) = ½·(1 + S(f)) with S odd: S(f) = f/f_v for |f| < f_v and
//! sgn(f) beyond, so H(0) = ½ and H(f) + H(−f) = 1 across the vestige, the Nyquist-slope
//! condition for distortion-free VSB detection (S. Haykin, *Communication Systems*, ch. 2,
//! vestigial sideband modulation). Audio = 2·Re(H∗x) = I(t−D) − (a∗Q)(t), where a is the real
//! antisymmetric FIR whose amplitude (see [`antisymmetric_amplitude`](crate::dsp::hilbert::antisymmetric_amplitude))
//! is S: the phasing structure with a slow Hilbert transformer. The arrangement tested is the
//! classic one: the transmitter passes the vestige flat and the receiver provides the slope.

use super::assembly::Assembly;
use super::config::{ModeSettings, Sideband};
use super::detector::{Detector, DetectorContext, ModeDetector};
use super::front_end::FrontEnd;
use super::receiver::Measurements;
use super::ssb::{carrier_lock, lock_measurements};
use super::PhasingDetector;
use crate::block::Block;
use crate::dsp::hilbert::windowed_antisymmetric;
use crate::dsp::{kaiser_beta, kaiser_num_taps};
use crate::sync::carrier_lock::CarrierLock;
use crate::{Complex32, Error, Result};
use std::f64::consts::PI;

/// Window attenuation of the slope filter design (common practice, no source).
const SLOPE_ATTENUATION_DB: f64 = 60.0;
/// Default vestige width, 750 Hz (common practice, no source).
pub const DEFAULT_VESTIGE_HZ: f64 = 750.0;

/// Taps of the real antisymmetric FIR a whose amplitude is the odd slope S(f) = f/f_v for
/// |f| < f_v, sgn(f) beyond. Ideal response: `a[m] = 2∫₀^½ S(f)·sin(2πfm) df
/// = 2·sin(kv)/(v·k²) − 2·cos(πm)/k` with k = 2πm, v = f_v/fs (`a[0] = 0`), Kaiser-windowed;
/// the window's main lobe is sized to f_v/2 so it rounds only the slope's corners.
pub fn nyquist_slope_taps(vestige_hz: f64, sample_rate: f64) -> Result<Vec<f32>> {
    if !(vestige_hz.is_finite() && vestige_hz > 0.0 && vestige_hz < 0.25 * sample_rate) {
        return Err(Error::parameter(
            "vestige_hz",
            vestige_hz,
            format!("must lie in (0, {} Hz)", 0.25 * sample_rate),
        ));
    }
    let v = vestige_hz / sample_rate;
    let n = kaiser_num_taps(SLOPE_ATTENUATION_DB, 0.5 * v) | 1;
    let ideal = |m: i64| {
        if m == 0 {
            return 0.0;
        }
        let k = 2.0 * PI * m as f64;
        2.0 * (k * v).sin() / (v * k * k) - 2.0 * (PI * m as f64).cos() / k
    };
    Ok(windowed_antisymmetric(
        n,
        kaiser_beta(SLOPE_ATTENUATION_DB),
        ideal,
    ))
}

/// Vestigial-sideband receiver.
pub type VsbReceiver = Assembly<VsbDetector>;

/// Carrier lock, then the Nyquist-slope phasing detector.
pub struct VsbDetector {
    lock: CarrierLock,
    detector: PhasingDetector,
    bandwidth_hz: f64,
}

impl ModeDetector for VsbDetector {
    fn build(settings: &ModeSettings, context: &DetectorContext) -> Result<Self> {
        let vestige = settings.vestige_hz.unwrap_or(DEFAULT_VESTIGE_HZ);
        if !(vestige.is_finite() && vestige > 0.0 && vestige < settings.bandwidth_hz) {
            return Err(Error::parameter(
                "vestige_hz",
                vestige,
                "must be positive and below the bandwidth",
            ));
        }
        let rate = context.detection_rate;
        let taps = nyquist_slope_taps(vestige, rate)?;
        Ok(VsbDetector {
            lock: carrier_lock(settings, rate, false)?,
            // 2·Re(½(x + j·a∗x)) = I − a∗Q: the upper-sideband sign, scale 1.
            detector: PhasingDetector::from_taps(&taps, Sideband::Upper, 1.0)?,
            bandwidth_hz: settings.bandwidth_hz,
        })
    }
}

impl Detector for VsbDetector {
    fn detect(&mut self, channel: &mut [Complex32], audio: &mut [Vec<f32>]) {
        let n = channel.len();
        self.lock.process_in_place(channel);
        self.detector.process(channel, &mut audio[0][..n]);
    }

    fn delay(&self) -> f64 {
        self.detector.delay()
    }

    fn reset(&mut self) {
        self.lock.reset();
        self.detector.reset();
    }

    fn retuned(&mut self, _step_hz: f64) {
        self.lock.reset();
    }

    /// The lock verdict; once locked, the tracked carrier frequency and its CNR.
    fn measure(&self, front: &dyn FrontEnd, m: &mut Measurements) {
        if !lock_measurements(&self.lock, front, self.bandwidth_hz, m) {
            m.warnings
                .push("no carrier locked: VSB needs its carrier for coherent detection".into());
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::dsp::hilbert::antisymmetric_amplitude;

    /// The designed slope follows S(f) = f/f_v inside the vestige and 1 beyond, within 0.01
    /// away from the rounded corners (±f_v/4 around f_v); H(f) + H(−f) = 1 holds exactly by
    /// the odd symmetry of S.
    #[test]
    fn slope_follows_its_ideal() {
        let (fv, fs) = (750.0, 48_000.0);
        let taps = nyquist_slope_taps(fv, fs).unwrap();
        for f in [50.0, 300.0, 500.0, 1000.0, 2000.0, 4000.0] {
            let s = antisymmetric_amplitude(&taps, f / fs);
            let ideal = (f / fv).min(1.0);
            assert!((s - ideal).abs() < 0.01, "{f} Hz: {s} vs {ideal}");
        }
        assert!(nyquist_slope_taps(0.0, fs).is_err());
    }
}

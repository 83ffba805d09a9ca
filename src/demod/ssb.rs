//! Single sideband (J3E suppressed, R3E reduced and H3E full carrier), upper or lower, from IQ
//! at any rate to audio.
//!
//! Chain: [`ChannelFrontEnd`](super::ChannelFrontEnd) (tuned to the carrier, i.e. the dial frequency; channel filter
//! ±W, symmetric: the detector rejects the other side) → optional carrier lock (PLL on a
//! pilot or full carrier, de-rotating the channel so that a mistuned dial is corrected) → SSB
//! detector ([`PhasingDetector`] or [`WeaverDetector`]) → [`Agc`](crate::dsp::Agc) at the detection rate →
//! [`AudioStage`](super::AudioStage) (the DC blocker removes a carrier, now a DC term; audio low-pass to W).
//!
//! Conventions: after the front end the (suppressed) carrier is at 0 Hz, the upper sideband
//! in (0, W] and the lower in [−W, 0). The audio passband is [100 Hz, W] (the detectors'
//! design band; common practice, no source).

use super::assembly::Assembly;
use super::config::{ModeSettings, Sideband, SsbMethod};
use super::detector::{Detector, DetectorContext, ModeDetector};
use super::front_end::FrontEnd;
use super::receiver::Measurements;
use super::{Mode, PhasingDetector, WeaverDetector};
use crate::block::Block;
use crate::sync::carrier_lock::CarrierLock;
pub use crate::sync::carrier_lock::{DEFAULT_LOCK_BANDWIDTH_HZ, MAX_DIAL_ERROR_HZ};
use crate::sync::LoopSettings;
use crate::{Complex32, Error, Result};

/// Bottom of the SSB audio passband, in Hz (common practice, no source).
pub const SSB_LOW_EDGE_HZ: f64 = 100.0;
/// Half-width of the spectrum search around the loop's frequency for the CNR, in Hz.
const PILOT_SEARCH_HZ: f64 = 20.0;

/// A detector block for one sideband: complex channel in, real audio out, one for one.
pub type SidebandDetector = Box<dyn Block<Input = Complex32, Output = f32> + Send>;

/// The SSB detector for `method`, passing [`SSB_LOW_EDGE_HZ`, `bandwidth_hz`] of `sideband`.
pub fn ssb_detector(
    method: SsbMethod,
    sideband: Sideband,
    bandwidth_hz: f64,
    sample_rate: f64,
) -> Result<SidebandDetector> {
    if !(bandwidth_hz.is_finite() && bandwidth_hz > 2.0 * SSB_LOW_EDGE_HZ) {
        return Err(Error::parameter(
            "bandwidth_hz",
            bandwidth_hz,
            format!("SSB needs more than {} Hz", 2.0 * SSB_LOW_EDGE_HZ),
        ));
    }
    Ok(match method {
        SsbMethod::Phasing => Box::new(PhasingDetector::new(
            sideband,
            SSB_LOW_EDGE_HZ,
            sample_rate,
        )?),
        SsbMethod::Weaver => Box::new(WeaverDetector::new(
            sideband,
            SSB_LOW_EDGE_HZ,
            bandwidth_hz,
            sample_rate,
        )?),
    })
}

/// Upper- or lower-sideband receiver.
pub type SsbReceiver = Assembly<SsbDetector>;

/// One sideband, optionally locked to a pilot or full carrier.
pub struct SsbDetector {
    lock: Option<CarrierLock>,
    detector: SidebandDetector,
    bandwidth_hz: f64,
}

impl ModeDetector for SsbDetector {
    fn build(settings: &ModeSettings, context: &DetectorContext) -> Result<Self> {
        let rate = context.detection_rate;
        let sideband = match settings.mode {
            Mode::Lsb => Sideband::Lower,
            _ => Sideband::Upper,
        };
        let lock = if settings.carrier_lock {
            Some(carrier_lock(settings, rate, true)?)
        } else {
            None
        };
        Ok(SsbDetector {
            detector: ssb_detector(settings.ssb_method, sideband, settings.bandwidth_hz, rate)?,
            bandwidth_hz: settings.bandwidth_hz,
            lock,
        })
    }
}

/// The carrier lock with the mode's loop settings (SSB with a pilot, VSB).
pub(crate) fn carrier_lock(settings: &ModeSettings, rate: f64, pilot: bool) -> Result<CarrierLock> {
    let loop_settings = LoopSettings {
        bandwidth_hz: settings.loop_bandwidth_hz,
        damping: Some(settings.loop_damping),
    };
    CarrierLock::new(rate, &loop_settings, DEFAULT_LOCK_BANDWIDTH_HZ, pilot)
}

/// With a lock: the verdict; once locked, the tracked carrier frequency and the CNR of its
/// line. Returns whether the lock holds a carrier.
pub(crate) fn lock_measurements(
    lock: &CarrierLock,
    front: &dyn FrontEnd,
    bandwidth_hz: f64,
    m: &mut Measurements,
) -> bool {
    m.locked = Some(lock.is_locked());
    let Some(frequency) = lock.frequency_hz().filter(|_| lock.is_locked()) else {
        return false;
    };
    m.carrier_offset_hz = Some(front.offset_hz() + frequency);
    if let Some(peak) = front.find_carrier_near(frequency, PILOT_SEARCH_HZ) {
        m.cnr_db = front.cnr_db(&peak, bandwidth_hz);
    }
    true
}

impl Detector for SsbDetector {
    fn detect(&mut self, channel: &mut [Complex32], audio: &mut [Vec<f32>]) {
        let n = channel.len();
        if let Some(lock) = self.lock.as_mut() {
            lock.process_in_place(channel);
        }
        self.detector.process(channel, &mut audio[0][..n]);
    }

    fn delay(&self) -> f64 {
        self.detector.delay()
    }

    fn reset(&mut self) {
        if let Some(lock) = self.lock.as_mut() {
            lock.reset();
        }
        self.detector.reset();
    }

    fn retuned(&mut self, _step_hz: f64) {
        if let Some(lock) = self.lock.as_mut() {
            lock.reset();
        }
    }

    /// With carrier lock: the lock verdict, the tracked carrier frequency and the CNR of the
    /// carrier line in the spectrum. Without: nothing is claimed about a carrier (`None`).
    fn measure(&self, front: &dyn FrontEnd, m: &mut Measurements) {
        let Some(lock) = self.lock.as_ref() else {
            return;
        };
        if lock_measurements(lock, front, self.bandwidth_hz, m) {
            return;
        }
        m.warnings.push(if lock.frequency_hz().is_none() {
            "carrier lock: no pilot or carrier acquired; the dial is not corrected".into()
        } else {
            "carrier lock: the tracking loop lost lock".into()
        });
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::check::{check_block, BlockCheck};
    use crate::demod::ReceiverConfig;
    use rand::{rngs::StdRng, RngExt, SeedableRng};
    use std::f64::consts::TAU;

    const FS: f64 = 96_000.0;

    /// A pilot-carrier USB signal: pilot 10 dB below the 1040 Hz tone, light noise.
    fn signal(len: usize) -> Vec<Complex32> {
        let mut rng = StdRng::seed_from_u64(3);
        (0..len)
            .map(|n| {
                let t = n as f64 / FS;
                Complex32::from_polar(0.2, (TAU * 10_040.0 * t) as f32)
                    + Complex32::from_polar(0.5, (TAU * 11_040.0 * t) as f32)
                    + Complex32::new(rng.random_range(-0.01..0.01), rng.random_range(-0.01..0.01))
            })
            .collect()
    }

    fn config(method: SsbMethod) -> ReceiverConfig {
        let mut c = ReceiverConfig::new(FS, 10_000.0);
        c.options.ssb_method = method;
        c.options.carrier_lock = true;
        c
    }

    /// Bit-exact: every stage works sample by sample or on whole windows in a fixed order.
    #[test]
    fn both_methods_with_lock_keep_the_block_contract() {
        let x = signal(60_000);
        for method in [SsbMethod::Phasing, SsbMethod::Weaver] {
            let make = || SsbReceiver::new(Mode::Usb, &config(method)).unwrap();
            check_block(&BlockCheck::new(&make, &x));
        }
    }

    #[test]
    fn bad_settings_are_errors_naming_the_parameter() {
        let mut c = config(SsbMethod::Weaver);
        c.options.bandwidth_hz = Some(150.0);
        assert!(SsbReceiver::new(Mode::Lsb, &c).is_err());
        let mut c = config(SsbMethod::Weaver);
        c.options.loop_settings.bandwidth_hz = Some(0.0);
        let err = SsbReceiver::new(Mode::Lsb, &c).err().unwrap();
        assert!(err.to_string().contains("loop_bandwidth_hz"), "{err}");
        c.options.loop_settings = LoopSettings {
            bandwidth_hz: None,
            damping: Some(-1.0),
        };
        let err = SsbReceiver::new(Mode::Lsb, &c).err().unwrap();
        assert!(err.to_string().contains("damping"), "{err}");
    }
}

//! Single sideband (J3E suppressed, R3E reduced and H3E full carrier), upper or lower, from IQ
//! at any rate to audio.
//!
//! Chain: [`ChannelFrontEnd`] (tuned to the carrier, i.e. the dial frequency; channel filter
//! ±W, symmetric: the detector rejects the other side) → optional carrier lock (PLL on a
//! pilot or full carrier, de-rotating the channel so that a mistuned dial is corrected) → SSB
//! detector ([`PhasingDetector`] or [`WeaverDetector`]) → [`Agc`] at the detection rate →
//! [`AudioStage`] (the DC blocker removes a carrier, now a DC term; audio low-pass to W).
//!
//! Conventions: after the front end the (suppressed) carrier is at 0 Hz, the upper sideband
//! in (0, W] and the lower in [−W, 0). The audio passband is [100 Hz, W] (the detectors'
//! design band; common practice, no source).

use super::audio_stage::{validate_audio, AudioStage};
use super::config::{LoopSettings, Sideband, SsbMethod};
use super::front_end::{validate_tuning, ChannelFrontEnd, FrontEndConfig, CHUNK};
use super::pieces::Pieces;
use super::receiver::{Measurements, Receiver};
use super::{PhasingDetector, WeaverDetector};
use crate::block::Block;
use crate::dsp::{Agc, AgcSettings};
use crate::measure::find_carrier;
use crate::sync::carrier_lock::CarrierLock;
pub use crate::sync::carrier_lock::{DEFAULT_LOCK_BANDWIDTH_HZ, MAX_DIAL_ERROR_HZ};
use crate::{Complex32, Error, Result};

/// Bottom of the SSB audio passband, in Hz (common practice, no source).
pub const SSB_LOW_EDGE_HZ: f64 = 100.0;
/// Half-width of the spectrum search around the loop's frequency for the CNR, in Hz.
const PILOT_SEARCH_HZ: f64 = 20.0;

/// A detector block for one sideband.
pub type SsbDetector = Box<dyn Block<Input = Complex32, Output = f32> + Send>;

/// The SSB detector for `method`, passing [`SSB_LOW_EDGE_HZ`, `bandwidth_hz`] of `sideband`.
pub fn ssb_detector(
    method: SsbMethod,
    sideband: Sideband,
    bandwidth_hz: f64,
    sample_rate: f64,
) -> Result<SsbDetector> {
    if !(bandwidth_hz.is_finite() && bandwidth_hz > 2.0 * SSB_LOW_EDGE_HZ) {
        return Err(Error::parameter(
            "--bandwidth",
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

/// Settings of an SSB receiver.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SsbConfig {
    /// IQ sample rate in Hz.
    pub input_rate: f64,
    /// Carrier (dial) frequency relative to the recording centre, in Hz.
    pub offset_hz: f64,
    /// Which sideband.
    pub sideband: Sideband,
    /// Audio bandwidth W in Hz.
    pub bandwidth_hz: f64,
    /// Output audio rate in Hz.
    pub audio_rate: f64,
    /// Phasing or Weaver.
    pub method: SsbMethod,
    /// Gain control at the detection rate.
    pub agc: AgcSettings,
    /// Lock to a pilot or full carrier and correct the dial error.
    pub carrier_lock: bool,
    /// Tracking-loop overrides (with `carrier_lock`).
    pub loop_settings: LoopSettings,
}

impl SsbConfig {
    /// Default SSB audio bandwidth, 2.7 kHz (common practice, no source).
    pub const DEFAULT_BANDWIDTH_HZ: f64 = 2700.0;

    /// Settings with the defaults: 2.7 kHz, 48 kHz audio, the default method, speech AGC,
    /// no carrier lock.
    pub fn new(input_rate: f64, offset_hz: f64, sideband: Sideband) -> Self {
        SsbConfig {
            input_rate,
            offset_hz,
            sideband,
            bandwidth_hz: Self::DEFAULT_BANDWIDTH_HZ,
            audio_rate: 48_000.0,
            method: SsbMethod::default(),
            agc: AgcSettings::SPEECH,
            carrier_lock: false,
            loop_settings: LoopSettings::default(),
        }
    }

    /// Checks that the settings can be honoured, naming the offending option.
    pub fn validate(&self) -> Result<()> {
        validate_tuning(self.input_rate, self.offset_hz, self.bandwidth_hz)?;
        validate_audio(self.audio_rate, self.bandwidth_hz)
    }

    /// The shared front end's settings: the channel filter passes ±W.
    pub fn front_end(&self) -> FrontEndConfig {
        FrontEndConfig {
            input_rate: self.input_rate,
            offset_hz: self.offset_hz,
            channel_hz: self.bandwidth_hz,
            min_detection_rate: self.audio_rate,
        }
    }
}

/// Upper- or lower-sideband receiver.
pub struct SsbReceiver {
    config: SsbConfig,
    front: ChannelFrontEnd,
    lock: Option<CarrierLock>,
    detector: SsbDetector,
    agc: Agc,
    audio: AudioStage,
    channel: Vec<Complex32>,
    detected: Vec<f32>,
}

impl SsbReceiver {
    /// Builds the receiver for `config`.
    ///
    /// ```
    /// use amrx::demod::{Sideband, SsbConfig, SsbReceiver};
    /// let rx = SsbReceiver::new(SsbConfig::new(2_400_000.0, 14_000.0, Sideband::Upper)).unwrap();
    /// assert_eq!(rx.detection_rate(), 48_000.0);
    /// ```
    pub fn new(config: SsbConfig) -> Result<Self> {
        config.validate()?;
        let front = ChannelFrontEnd::new(config.front_end())?;
        let rate = front.detection_rate();
        let mid = front.max_output_len(CHUNK);
        let lock = if config.carrier_lock {
            Some(CarrierLock::new(
                rate,
                &config.loop_settings,
                DEFAULT_LOCK_BANDWIDTH_HZ,
                true,
            )?)
        } else {
            None
        };
        Ok(SsbReceiver {
            detector: ssb_detector(config.method, config.sideband, config.bandwidth_hz, rate)?,
            agc: Agc::new(config.agc, rate)?,
            audio: AudioStage::new(rate, config.audio_rate, config.bandwidth_hz, mid)?,
            channel: vec![Complex32::default(); mid],
            detected: vec![0.0; mid],
            lock,
            front,
            config,
        })
    }

    /// The rate at which the sideband is detected, in Hz.
    pub fn detection_rate(&self) -> f64 {
        self.front.detection_rate()
    }

    /// The settings.
    pub fn config(&self) -> &SsbConfig {
        &self.config
    }

    fn lock_measurements(&self, lock: &CarrierLock, m: &mut Measurements) {
        m.locked = Some(lock.is_locked());
        let Some(frequency) = lock.frequency_hz() else {
            m.warnings.push(
                "carrier lock: no pilot or carrier acquired; the dial is not corrected".into(),
            );
            return;
        };
        if !lock.is_locked() {
            m.warnings
                .push("carrier lock: the tracking loop lost lock".into());
            return;
        }
        m.carrier_offset_hz = Some(self.config.offset_hz + frequency);
        if let Some(peak) = find_carrier(self.front.spectrum(), frequency, PILOT_SEARCH_HZ) {
            m.cnr_db = self.front.cnr_db(&peak, self.config.bandwidth_hz);
        }
    }
}

impl Pieces for SsbReceiver {
    fn piece_bound(&self, n: usize) -> usize {
        self.audio.max_output_len(self.front.max_output_len(n))
    }

    fn process_piece(&mut self, input: &[Complex32], output: &mut [f32]) -> usize {
        let (_, n) = self.front.process(input, &mut self.channel);
        if let Some(lock) = self.lock.as_mut() {
            lock.process_in_place(&mut self.channel[..n]);
        }
        self.detector
            .process(&self.channel[..n], &mut self.detected[..n]);
        for x in self.detected[..n].iter_mut() {
            *x = self.agc.next_sample(*x);
        }
        self.audio.process(&self.detected[..n], output).1
    }
}

impl Block for SsbReceiver {
    type Input = Complex32;
    type Output = f32;

    fn process(&mut self, input: &[Complex32], output: &mut [f32]) -> (usize, usize) {
        self.process_pieces(input, output)
    }

    fn max_output_len(&self, input_len: usize) -> usize {
        self.pieces_output_len(input_len)
    }

    fn rate_ratio(&self) -> f64 {
        self.config.audio_rate / self.config.input_rate
    }

    fn delay(&self) -> f64 {
        let factor = self.config.input_rate / self.detection_rate();
        self.front.delay() + (self.detector.delay() + self.audio.delay()) * factor
    }

    fn reset(&mut self) {
        self.front.reset();
        if let Some(lock) = self.lock.as_mut() {
            lock.reset();
        }
        self.detector.reset();
        self.agc.reset();
        self.audio.reset();
    }
}

impl Receiver for SsbReceiver {
    fn audio_channels(&self) -> usize {
        1
    }

    fn audio_rate(&self) -> f64 {
        self.config.audio_rate
    }

    fn bandwidth_hz(&self) -> f64 {
        self.config.bandwidth_hz
    }

    /// With carrier lock: the lock verdict, the tracked carrier frequency and the CNR of the
    /// carrier line in the spectrum. Without: nothing is claimed about a carrier (`None`).
    fn measurements(&self) -> Measurements {
        let mut m = Measurements::default();
        if let Some(lock) = self.lock.as_ref() {
            self.lock_measurements(lock, &mut m);
        }
        m
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::{process_in_chunks, process_to_vec};
    use rand::{rngs::StdRng, RngExt, SeedableRng};
    use std::f64::consts::TAU;

    const FS: f64 = 96_000.0;

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

    /// Bit-exact: every stage works sample by sample or on whole windows in a fixed order.
    #[test]
    fn chunk_invariant_both_methods_with_lock() {
        let x = signal(60_000);
        for method in [SsbMethod::Phasing, SsbMethod::Weaver] {
            let make = || {
                let mut c = SsbConfig::new(FS, 10_000.0, Sideband::Upper);
                c.method = method;
                c.carrier_lock = true;
                SsbReceiver::new(c).unwrap()
            };
            let whole = process_to_vec(&mut make(), &x);
            let mut rng = StdRng::seed_from_u64(8);
            let random: Vec<usize> = (0..64).map(|_| rng.random_range(1..20_000)).collect();
            for sizes in [vec![1usize, 7, 1024], random] {
                assert_eq!(
                    process_in_chunks(&mut make(), &x, &sizes),
                    whole,
                    "{method:?}"
                );
            }
        }
    }

    #[test]
    fn bad_settings_are_errors() {
        let mut c = SsbConfig::new(FS, 10_000.0, Sideband::Lower);
        c.bandwidth_hz = 150.0;
        assert!(SsbReceiver::new(c).is_err());
        let mut c = SsbConfig::new(FS, 10_000.0, Sideband::Lower);
        c.carrier_lock = true;
        c.loop_settings.bandwidth_hz = Some(0.0);
        assert!(matches!(
            SsbReceiver::new(c),
            Err(Error::InvalidParameter {
                name: "--loop-bandwidth",
                ..
            })
        ));
        c.loop_settings = LoopSettings {
            bandwidth_hz: None,
            damping: Some(-1.0),
        };
        assert!(matches!(
            SsbReceiver::new(c),
            Err(Error::InvalidParameter {
                name: "--loop-damping",
                ..
            })
        ));
    }
}

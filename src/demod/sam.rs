//! Synchronous AM: full-carrier AM detected coherently against a phase-locked carrier, both
//! sidebands or one.
//!
//! Chain: [`ChannelFrontEnd`](super::ChannelFrontEnd) (channel ±W) → [`CarrierAcquisition`] driving a [`CarrierPll`]
//! (coarse FFT search, then the loop) → coherent detection → [`Agc`](crate::dsp::Agc) → [`AudioStage`](super::AudioStage).
//!
//! Coherent detection: with the carrier de-rotated onto the real axis, y = A_c(1 + μ·m) + j·0
//! for an undistorted signal, so the audio is Re(y) and the carrier is the DC the audio stage
//! removes. Unlike the envelope detector there is no threshold: the noise adds linearly
//! (Haykin, Communication Systems, ch. 2, coherent detection of AM).
//!
//! One sideband (`sideband`): the de-rotated signal is first reduced to its upper (or lower)
//! half by the Weaver arrangement (D. K. Weaver, Proc. IRE, 1956): shift by ∓W/2, low-pass
//! ±W/2, shift back; then 2·Re(·) restores the level of both sidebands. This keeps the message
//! when selective fading or a neighbour spoils the other sideband. The loop then sees the
//! carrier through its carrier filter ([`PllConfig::with_carrier_filter`](crate::sync::PllConfig::with_carrier_filter),
//! two poles at 20·B_L, 200 Hz for the default 10 Hz loop), so that a neighbour on the rejected
//! side does not phase-modulate the reference and come back through the kept side.

use super::assembly::Assembly;
use super::config::ModeSettings;
use super::detector::{Detector, DetectorContext, ModeDetector};
use super::front_end::FrontEnd;
use super::receiver::Measurements;
use super::sideband_selector::SidebandSelector;
use crate::block::Block;
use crate::sync::{CarrierAcquisition, CarrierKind, CarrierPll};
use crate::{Complex32, Result};

/// The carrier is searched for within this far of the tuned frequency, at most (half the
/// bandwidth when that is smaller; common practice, no source).
pub const CARRIER_SEARCH_HZ: f64 = 1000.0;
/// Default loop bandwidth: wide enough to follow drift and lock in tens of milliseconds,
/// narrow enough for a clean reference at low CNR (common practice, no source).
pub const DEFAULT_LOOP_BANDWIDTH_HZ: f64 = 30.0;
/// Default loop bandwidth with one sideband kept: a neighbour on the rejected side
/// phase-modulates the reference through the loop's closed-loop response, which falls with
/// B_L, so a narrower loop rejects it further (measured: 43.7 dB at 30 Hz, 52.2 dB at 10 Hz
/// for a neighbour 2 kHz away, before the loop had its carrier filter); the coarse FFT
/// acquisition keeps lock-in fast.
pub const DEFAULT_SIDEBAND_LOOP_BANDWIDTH_HZ: f64 = 10.0;

/// Synchronous AM receiver.
pub type SamReceiver = Assembly<SamDetector>;

/// Coherent detection against a phase-locked carrier, both sidebands or one.
pub struct SamDetector {
    settings: ModeSettings,
    context: DetectorContext,
    carrier: CarrierAcquisition<CarrierPll>,
    selector: Option<SidebandSelector>,
    /// The in-phase component of the last piece against the carrier, for the measurement
    /// stage.
    in_phase: Vec<f32>,
    in_phase_len: usize,
    derotated: Vec<Complex32>,
    shifted: Vec<Complex32>,
}

impl ModeDetector for SamDetector {
    /// Bad loop settings are errors naming the parameter.
    fn build(settings: &ModeSettings, context: &DetectorContext) -> Result<Self> {
        let rate = context.detection_rate;
        let mut loop_config = settings.loop_config(rate)?;
        if settings.sideband.is_some() {
            // One sideband: a neighbour on the rejected side must not reach the loop.
            loop_config = loop_config.with_carrier_filter();
        }
        let pll = CarrierPll::new(loop_config)?;
        let search = search_hz(settings.bandwidth_hz);
        let carrier = CarrierAcquisition::new(pll, CarrierKind::Line, search, rate)?;
        let mid = context.max_piece;
        Ok(SamDetector {
            selector: settings
                .sideband
                .map(|side| SidebandSelector::new(side, settings.bandwidth_hz, rate, mid))
                .transpose()?,
            in_phase: vec![0.0; mid],
            in_phase_len: 0,
            derotated: vec![Complex32::default(); mid],
            shifted: vec![Complex32::default(); mid],
            carrier,
            settings: *settings,
            context: *context,
        })
    }
}

fn search_hz(bandwidth_hz: f64) -> f64 {
    CARRIER_SEARCH_HZ.min(0.5 * bandwidth_hz)
}

impl SamDetector {
    /// The carrier loop.
    pub fn carrier_loop(&self) -> &CarrierPll {
        self.carrier.carrier_loop()
    }

    /// The carrier acquisition in front of the loop.
    pub fn acquisition(&self) -> &CarrierAcquisition<CarrierPll> {
        &self.carrier
    }
}

impl Detector for SamDetector {
    fn detect(&mut self, channel: &mut [Complex32], audio: &mut [Vec<f32>]) {
        let n = channel.len();
        let detected = &mut audio[0][..n];
        self.carrier.process(channel, &mut self.derotated[..n]);
        for (d, y) in detected.iter_mut().zip(&self.derotated[..n]) {
            *d = y.re;
        }
        let keep = n.min(self.in_phase.len());
        self.in_phase[..keep].copy_from_slice(&detected[..keep]);
        self.in_phase_len = keep;
        if let Some(selector) = self.selector.as_mut() {
            let shifted = &mut self.shifted[..n];
            selector.process(&self.derotated[..n], shifted);
            for (d, y) in detected.iter_mut().zip(shifted.iter()) {
                *d = 2.0 * y.re;
            }
        }
    }

    fn delay(&self) -> f64 {
        self.selector.as_ref().map_or(0.0, |s| s.delay())
    }

    fn reset(&mut self) {
        // Rebuilding cannot fail: the same settings built this detector.
        if let Ok(fresh) = SamDetector::build(&self.settings, &self.context) {
            *self = fresh;
        }
    }

    fn retuned(&mut self, _step_hz: f64) {
        self.reset();
    }

    fn envelope(&self) -> Option<&[f32]> {
        Some(&self.in_phase[..self.in_phase_len])
    }

    fn lock_state(&self) -> Option<bool> {
        Some(self.carrier_loop().is_locked())
    }

    /// The carrier frequency from the loop; carrier level, CNR, depth, lock fraction and
    /// their warnings come from the measurement stage, which has filled `m` already.
    fn measure(&self, front: &dyn FrontEnd, m: &mut Measurements) {
        let pll = self.carrier_loop();
        m.carrier_offset_hz = Some(front.offset_hz() + pll.frequency_hz());
        if m.carrier_present_s == Some(0.0) {
            // Whatever the lock statistic says, there was nothing to lock to.
            m.locked = Some(false);
            m.warnings
                .push("carrier loop did not lock: there is no carrier to lock to".to_string());
        } else if m.locked.is_none() {
            m.locked = Some(pll.is_locked());
        }
    }
}

//! Suppressed-carrier double sideband (DSB-SC) by coherent detection against a Costas loop.
//!
//! Chain: [`ChannelFrontEnd`](super::ChannelFrontEnd) (channel ±W) → [`CarrierAcquisition`] (the squared signal's line
//! at twice the carrier, halved) driving a [`CostasLoop`] → audio = Re(de-rotated) → [`Agc`](crate::dsp::Agc)
//! → [`AudioStage`](super::AudioStage).
//!
//! Coherent detection of DSB-SC: with the reference in phase, Re(y) = A·m(t) plus the in-phase
//! noise component only (Haykin, Communication Systems, ch. 2: figure of merit 1). The Costas
//! loop cannot tell 0 from 180°, so the audio may come out inverted; that is inaudible.
//!
//! No CNR is reported: there is no carrier to measure against (a signal-to-noise estimate
//! would need the message's spectrum, which DSB-SC does not constrain).

use super::assembly::Assembly;
use super::config::ModeSettings;
use super::detector::{Detector, DetectorContext, ModeDetector};
use super::front_end::FrontEnd;
use super::receiver::Measurements;
use crate::block::Block;
use crate::sync::{CarrierAcquisition, CarrierKind, CostasLoop};
use crate::{Complex32, Result};

/// The suppressed carrier is searched for within this far of the tuned frequency, at most
/// (half the bandwidth when that is smaller; common practice, no source).
pub const CARRIER_SEARCH_HZ: f64 = 1000.0;
/// Default loop bandwidth, as for `sam` (common practice, no source).
pub const DEFAULT_LOOP_BANDWIDTH_HZ: f64 = 30.0;

/// DSB-SC receiver.
pub type DsbReceiver = Assembly<DsbDetector>;

/// Coherent detection against a Costas loop.
pub struct DsbDetector {
    settings: ModeSettings,
    context: DetectorContext,
    carrier: CarrierAcquisition<CostasLoop>,
    derotated: Vec<Complex32>,
}

impl ModeDetector for DsbDetector {
    fn build(settings: &ModeSettings, context: &DetectorContext) -> Result<Self> {
        let rate = context.detection_rate;
        let costas = CostasLoop::new(settings.loop_config(rate)?)?;
        let search = CARRIER_SEARCH_HZ.min(0.5 * settings.bandwidth_hz);
        Ok(DsbDetector {
            carrier: CarrierAcquisition::new(costas, CarrierKind::Suppressed, search, rate)?,
            derotated: vec![Complex32::default(); context.max_piece],
            settings: *settings,
            context: *context,
        })
    }
}

impl DsbDetector {
    /// The Costas loop.
    pub fn carrier_loop(&self) -> &CostasLoop {
        self.carrier.carrier_loop()
    }

    /// The carrier acquisition in front of the loop.
    pub fn acquisition(&self) -> &CarrierAcquisition<CostasLoop> {
        &self.carrier
    }
}

impl Detector for DsbDetector {
    fn detect(&mut self, channel: &mut [Complex32], audio: &mut [Vec<f32>]) {
        let n = channel.len();
        self.carrier.process(channel, &mut self.derotated[..n]);
        for (d, y) in audio[0][..n].iter_mut().zip(&self.derotated[..n]) {
            *d = y.re;
        }
    }

    fn delay(&self) -> f64 {
        0.0
    }

    fn reset(&mut self) {
        // Rebuilding cannot fail: the same settings built this detector.
        if let Ok(fresh) = DsbDetector::build(&self.settings, &self.context) {
            *self = fresh;
        }
    }

    fn retuned(&mut self, _step_hz: f64) {
        self.reset();
    }

    fn measure(&self, front: &dyn FrontEnd, m: &mut Measurements) {
        let costas = self.carrier_loop();
        let locked = costas.is_locked();
        m.carrier_offset_hz = Some(front.offset_hz() + costas.frequency_hz());
        m.locked = Some(locked);
        if !locked {
            m.warnings.push(format!(
                "carrier loop did not lock (lock metric {:.2}, needs 0.5): no suppressed carrier within ±{} Hz of the tuned frequency, or too weak; the audio is not usable",
                costas.lock_metric(),
                CARRIER_SEARCH_HZ.min(0.5 * self.settings.bandwidth_hz)
            ));
        }
    }
}

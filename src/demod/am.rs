//! Full-carrier AM (A3E) by envelope detection.
//!
//! The detector is |x| of the channel; the audio stage's DC blocker then removes the carrier.
//! Meters tap the front end's spectrum (carrier frequency, CNR) and the envelope (modulation
//! depth).

use super::assembly::Assembly;
use super::config::ModeSettings;
use super::detector::{Detector, DetectorContext, ModeDetector};
use super::envelope::EnvelopeDetector;
use super::front_end::FrontEnd;
use super::receiver::Measurements;
use crate::block::Block;
use crate::{Complex32, Result};

/// The envelope detector's threshold by the 1 % rule: P(noise envelope > A_c) = e^(−ρ) = 0.01,
/// ρ = ln 100 ≈ 6.6 dB (Haykin, Communication Systems, ch. 2, threshold effect).
const ENVELOPE_THRESHOLD_CNR_DB: f64 = 6.6;
/// The carrier is searched for within this far of the tuned frequency, at most (half the
/// bandwidth when that is smaller; common practice, no source).
pub const CARRIER_SEARCH_HZ: f64 = 2000.0;

/// Full-carrier AM receiver by envelope detection.
pub type AmReceiver = Assembly<AmDetector>;

/// The envelope detector; the receiver's measurement stage reads its envelope.
pub struct AmDetector {
    envelope: EnvelopeDetector,
    bandwidth_hz: f64,
    /// The last piece's envelope, for the measurement stage.
    last: Vec<f32>,
    last_len: usize,
}

impl ModeDetector for AmDetector {
    fn build(settings: &ModeSettings, context: &DetectorContext) -> Result<Self> {
        Ok(AmDetector {
            envelope: EnvelopeDetector::new(),
            bandwidth_hz: settings.bandwidth_hz,
            last: vec![0.0; context.max_piece],
            last_len: 0,
        })
    }
}

/// Where the AM detectors look for the carrier: ±`CARRIER_SEARCH_HZ`, at most half the
/// bandwidth.
pub fn search_hz(bandwidth_hz: f64) -> f64 {
    (0.5 * bandwidth_hz).min(CARRIER_SEARCH_HZ)
}

impl Detector for AmDetector {
    fn detect(&mut self, channel: &mut [Complex32], audio: &mut [Vec<f32>]) {
        let n = channel.len();
        let detected = &mut audio[0][..n];
        self.envelope.process(channel, detected);
        let keep = n.min(self.last.len());
        self.last[..keep].copy_from_slice(&detected[..keep]);
        self.last_len = keep;
    }

    fn delay(&self) -> f64 {
        0.0
    }

    fn reset(&mut self) {
        self.last_len = 0;
    }

    fn envelope(&self) -> Option<&[f32]> {
        Some(&self.last[..self.last_len])
    }

    /// The carrier frequency from the front end's spectrum; carrier level, CNR, depth and
    /// their warnings come from the measurement stage, which has filled `m` already.
    fn measure(&self, front: &dyn FrontEnd, m: &mut Measurements) {
        if let Some(peak) = front.find_carrier_near(0.0, search_hz(self.bandwidth_hz)) {
            m.carrier_offset_hz = Some(front.offset_hz() + peak.frequency_hz);
        }
        if let Some(cnr) = m.cnr_db.filter(|&c| c < ENVELOPE_THRESHOLD_CNR_DB) {
            m.warnings.push(format!(
                "CNR {cnr:.1} dB is below the envelope detector's threshold (about {ENVELOPE_THRESHOLD_CNR_DB} dB): expect noise capture"
            ));
        }
    }
}

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
use crate::measure::ModulationMeter;
use crate::{Complex32, Result};

/// Negative modulation at or beyond which the envelope detector distorts.
const OVERMODULATION_NEGATIVE: f64 = 0.99;
/// The envelope detector's threshold by the 1 % rule: P(noise envelope > A_c) = e^(−ρ) = 0.01,
/// ρ = ln 100 ≈ 6.6 dB (Haykin, Communication Systems, ch. 2, threshold effect).
const ENVELOPE_THRESHOLD_CNR_DB: f64 = 6.6;
/// The carrier is searched for within this far of the tuned frequency, at most (half the
/// bandwidth when that is smaller; common practice, no source).
const CARRIER_SEARCH_HZ: f64 = 2000.0;

/// Full-carrier AM receiver by envelope detection.
pub type AmReceiver = Assembly<AmDetector>;

/// The envelope detector with its modulation meter.
pub struct AmDetector {
    envelope: EnvelopeDetector,
    meter: ModulationMeter,
    rate: f64,
    bandwidth_hz: f64,
    /// Envelope samples still to skip before metering: the filters' start-up transient would
    /// otherwise read as deep negative modulation.
    settling: usize,
    initial_settling: usize,
}

impl ModeDetector for AmDetector {
    fn build(settings: &ModeSettings, context: &DetectorContext) -> Result<Self> {
        Ok(AmDetector {
            envelope: EnvelopeDetector::new(),
            meter: ModulationMeter::new(context.detection_rate),
            rate: context.detection_rate,
            bandwidth_hz: settings.bandwidth_hz,
            settling: context.settling_samples,
            initial_settling: context.settling_samples,
        })
    }
}

impl AmDetector {
    fn search_hz(&self) -> f64 {
        (0.5 * self.bandwidth_hz).min(CARRIER_SEARCH_HZ)
    }

    fn carrier_measurements(&self, front: &dyn FrontEnd, m: &mut Measurements) {
        let search = self.search_hz();
        match front.find_carrier_near(0.0, search) {
            Some(peak) => {
                m.carrier_offset_hz = Some(front.offset_hz() + peak.frequency_hz);
                m.cnr_db = front.cnr_db(&peak, self.bandwidth_hz);
                if let Some(cnr) = m.cnr_db.filter(|&c| c < ENVELOPE_THRESHOLD_CNR_DB) {
                    m.warnings.push(format!(
                        "CNR {cnr:.1} dB is below the envelope detector's threshold (about {ENVELOPE_THRESHOLD_CNR_DB} dB): expect noise capture"
                    ));
                }
            }
            None if front.spectrum().frames() > 0 => m.warnings.push(format!(
                "no carrier found within ±{search} Hz of the tuned frequency"
            )),
            None => m
                .warnings
                .push("too few samples to measure the carrier".to_string()),
        }
    }
}

impl Detector for AmDetector {
    fn detect(&mut self, channel: &mut [Complex32], audio: &mut [Vec<f32>]) {
        let n = channel.len();
        let detected = &mut audio[0][..n];
        self.envelope.process(channel, detected);
        let skip = self.settling.min(n);
        self.settling -= skip;
        self.meter.push(&detected[skip..]);
    }

    fn delay(&self) -> f64 {
        0.0
    }

    fn reset(&mut self) {
        self.meter = ModulationMeter::new(self.rate);
        self.settling = self.initial_settling;
    }

    fn retuned(&mut self, _step_hz: f64) {
        self.reset();
    }

    fn measure(&self, front: &dyn FrontEnd, m: &mut Measurements) {
        self.carrier_measurements(front, m);
        m.modulation_depth = self.meter.depth();
        if let Some(depth) = m
            .modulation_depth
            .filter(|d| d.negative >= OVERMODULATION_NEGATIVE)
        {
            m.warnings.push(format!(
                "overmodulation: negative peaks reach {:.0} %; the envelope detector distorts",
                100.0 * depth.negative
            ));
        }
    }
}

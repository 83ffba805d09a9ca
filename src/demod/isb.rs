//! Independent sideband (B8E): both sidebands of one carrier, detected separately, to stereo.
//!
//! Chain: [`ChannelFrontEnd`](super::ChannelFrontEnd) (channel ±W) → an SSB detector per sideband (same method) → an
//! [`Agc`](crate::dsp::Agc) per sideband → an [`AudioStage`](super::AudioStage) per sideband → interleaved frames [left, right],
//! left = lower sideband, right = upper sideband.

use super::assembly::Assembly;
use super::config::{ModeSettings, Sideband};
use super::detector::{Detector, DetectorContext, ModeDetector};
use super::front_end::FrontEnd;
use super::receiver::Measurements;
use super::ssb::{ssb_detector, SidebandDetector};
use crate::{Complex32, Result};

/// Independent-sideband receiver, stereo out.
pub type IsbReceiver = Assembly<IsbDetector>;

/// Two SSB detectors on one channel: audio channel 0 the lower sideband, 1 the upper.
pub struct IsbDetector {
    lower: SidebandDetector,
    upper: SidebandDetector,
}

impl ModeDetector for IsbDetector {
    fn build(settings: &ModeSettings, context: &DetectorContext) -> Result<Self> {
        let (method, w, rate) = (
            settings.ssb_method,
            settings.bandwidth_hz,
            context.detection_rate,
        );
        Ok(IsbDetector {
            lower: ssb_detector(method, Sideband::Lower, w, rate)?,
            upper: ssb_detector(method, Sideband::Upper, w, rate)?,
        })
    }
}

impl Detector for IsbDetector {
    fn channels(&self) -> usize {
        2
    }

    fn detect(&mut self, channel: &mut [Complex32], audio: &mut [Vec<f32>]) {
        let n = channel.len();
        let (left, right) = audio.split_at_mut(1);
        self.lower.process(channel, &mut left[0][..n]);
        self.upper.process(channel, &mut right[0][..n]);
    }

    /// Both sidebands pass identical filters, so one delay serves both.
    fn delay(&self) -> f64 {
        self.upper.delay()
    }

    fn reset(&mut self) {
        self.lower.reset();
        self.upper.reset();
    }

    /// Nothing about a carrier is claimed (ISB carries none to lock to here).
    fn measure(&self, _front: &dyn FrontEnd, _m: &mut Measurements) {}
}

//! The per-mode part of a receiver: a detector turns the channel (complex baseband at the
//! detection rate, centred on the carrier) into audio at the same rate, and measures what it
//! can see.

use super::config::ModeSettings;
use super::front_end::FrontEnd;
use super::receiver::Measurements;
use crate::{Complex32, Result};

/// What a detector is told when it is built.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DetectorContext {
    /// The rate the channel arrives at, in Hz.
    pub detection_rate: f64,
    /// Channel samples until the front end's filters have settled (meters skip them).
    pub settling_samples: usize,
    /// The most channel samples one call to [`Detector::detect`] carries.
    pub max_piece: usize,
}

/// A detector: one audio sample per channel sample for each audio channel.
pub trait Detector: Send {
    /// Audio channels produced (1, or 2 for independent sidebands).
    fn channels(&self) -> usize {
        1
    }

    /// Detects `channel` into `audio[c][..channel.len()]` for each audio channel `c`. The
    /// channel buffer is the detector's to overwrite (a carrier lock de-rotates it in place).
    fn detect(&mut self, channel: &mut [Complex32], audio: &mut [Vec<f32>]);

    /// Group delay from channel to audio, in detection-rate samples.
    fn delay(&self) -> f64;

    /// Returns the detector to its freshly built state.
    fn reset(&mut self);

    /// Called after the front end was retuned by `step_hz`: a loop restarts its search.
    fn retuned(&mut self, step_hz: f64) {
        let _ = step_hz;
    }

    /// The carrier-referenced envelope of the last piece, one value per channel sample, for
    /// the measurement stage ([`crate::measure::CarrierMeter`]): the magnitude for an
    /// envelope detector, the in-phase component against the locked carrier for a coherent
    /// one. `None` for detectors that have no carrier to refer to.
    fn envelope(&self) -> Option<&[f32]> {
        None
    }

    /// Whether the detector's carrier loop is locked now; `None` for detectors without one.
    fn lock_state(&self) -> Option<bool> {
        None
    }

    /// Adds what the detector measured to `m`; the front end gives the spectrum and tuning.
    /// The receiver's measurement stage has filled in its figures (carrier, CNR, depth, lock
    /// fraction, their warnings) before this is called.
    fn measure(&self, front: &dyn FrontEnd, m: &mut Measurements);
}

/// A detector that a mode of the table builds from its resolved settings.
pub trait ModeDetector: Detector + Sized + 'static {
    /// Builds the detector.
    fn build(settings: &ModeSettings, context: &DetectorContext) -> Result<Self>;
}

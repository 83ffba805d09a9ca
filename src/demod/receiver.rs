//! The interface every receiver offers: IQ in, audio out, measurements on demand, retuning.

use super::halves::{BackHalf, FrontHalf};
use crate::block::Block;
use crate::measure::{MeterSummary, ModulationDepth, WindowReading};
use crate::{Complex32, Result};
use serde::Serialize;

/// What a receiver has measured so far.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct Measurements {
    /// Measured carrier frequency relative to the recording centre, in Hz.
    pub carrier_offset_hz: Option<f64>,
    /// Whether the loop is locked at the end (false when there is no carrier); `None` for modes
    /// without a loop. `lock_fraction` says for how much of the carrier's time.
    pub locked: Option<bool>,
    /// Fraction of the carrier-present time the loop was locked; `None` without a loop or a
    /// carrier.
    pub lock_fraction: Option<f64>,
    /// Carrier-to-noise ratio in dB over the carrier-present time, noise in
    /// `cnr_bandwidth_hz`.
    pub cnr_db: Option<f64>,
    /// The bandwidth CNR is quoted in: twice the message bandwidth, in Hz.
    pub cnr_bandwidth_hz: Option<f64>,
    /// Mean carrier level over the carrier-present time, in dBFS (0 dBFS: amplitude 1).
    pub carrier_dbfs: Option<f64>,
    /// Seconds with a carrier present at the tuning (modes with a carrier).
    pub carrier_present_s: Option<f64>,
    /// Peak modulation depth over the carrier-present windows, noise-corrected.
    pub modulation_depth: Option<ModulationDepth>,
    /// IQ samples the noise blanker set to zero; `None` without a noise blanker.
    pub blanked_samples: Option<u64>,
    /// Channel SNR estimate in dB, every mode: the emission's power in its band over the
    /// noise in the message bandwidth ([`super::channel_snr`]); `None` when nothing stands
    /// above the noise floor or the floor cannot be read.
    pub snr_db: Option<f64>,
    /// Things the user should know (overmodulation, no carrier found, ...).
    pub warnings: Vec<String>,
}

/// A complete receiver: complex baseband in at the input rate, interleaved audio out at the
/// audio rate. Every mode's receiver is an [`Assembly`](super::Assembly).
pub trait Receiver: Block<Input = Complex32, Output = f32> + Send {
    /// Audio channels in the output (1, or 2 for ISB).
    fn audio_channels(&self) -> usize;
    /// Audio sample rate in Hz.
    fn audio_rate(&self) -> f64;
    /// Audio (message) bandwidth in Hz.
    fn bandwidth_hz(&self) -> f64;
    /// The tuned frequency relative to the recording centre, in Hz.
    fn offset_hz(&self) -> f64;
    /// Retunes while running, without a phase step in the tuning oscillator.
    fn set_offset(&mut self, offset_hz: f64) -> Result<()>;
    /// Measurements so far (cheap enough to call at the end of a run, not per sample).
    fn measurements(&self) -> Measurements;
    /// The measurement stage's figures so far (`None` for modes without a carrier).
    fn meter_summary(&self) -> Option<MeterSummary>;
    /// Rebuilds the measurement stage with windows of `window_s` seconds (call before the
    /// first sample); an error names `window_s` when it is too short or not finite.
    fn set_meter_window(&mut self, window_s: f64) -> Result<()>;
    /// Keeps every measurement window's reading (for modes with a carrier) until taken.
    fn record_windows(&mut self, on: bool);
    /// The recorded windows so far, leaving none behind (empty without recording or a carrier).
    fn take_windows(&mut self) -> Vec<WindowReading>;
    /// The receiver's two halves, to run on two threads ([`crate::pipeline::split`]); `None`
    /// for a receiver that cannot be cut (it then runs on one thread).
    fn halves(&mut self) -> Option<(&mut dyn FrontHalf, &mut dyn BackHalf)> {
        None
    }
}

/// A boxed receiver (what [`build_receiver`](super::build_receiver) returns) is a block too,
/// so it can be handed to anything generic over [`Block`], forwarding every method (its own
/// flush included).
impl Block for Box<dyn Receiver> {
    type Input = Complex32;
    type Output = f32;

    fn process(&mut self, input: &[Complex32], output: &mut [f32]) -> (usize, usize) {
        (**self).process(input, output)
    }

    fn max_output_len(&self, input_len: usize) -> usize {
        (**self).max_output_len(input_len)
    }

    fn rate_ratio(&self) -> f64 {
        (**self).rate_ratio()
    }

    fn delay(&self) -> f64 {
        (**self).delay()
    }

    fn reset(&mut self) {
        (**self).reset()
    }

    fn flush_len(&self) -> usize {
        (**self).flush_len()
    }

    fn flush_output_len(&self) -> usize {
        (**self).flush_output_len()
    }

    fn flush(&mut self, output: &mut [f32]) -> usize {
        (**self).flush(output)
    }
}

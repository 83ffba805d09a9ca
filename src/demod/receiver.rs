//! The interface every receiver offers: IQ in, audio out, measurements on demand, retuning.

use crate::block::Block;
use crate::measure::ModulationDepth;
use crate::{Complex32, Result};
use serde::Serialize;

/// What a receiver has measured so far.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct Measurements {
    /// Measured carrier frequency relative to the recording centre, in Hz.
    pub carrier_offset_hz: Option<f64>,
    /// Lock detector verdict; `None` for modes without a loop.
    pub locked: Option<bool>,
    /// Carrier-to-noise ratio in dB (carrier over noise in twice the message bandwidth).
    pub cnr_db: Option<f64>,
    /// Peak modulation depth from the detected envelope.
    pub modulation_depth: Option<ModulationDepth>,
    /// IQ samples the noise blanker set to zero; `None` without a noise blanker.
    pub blanked_samples: Option<u64>,
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
}

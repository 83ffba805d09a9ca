//! The notch on the receiver's audio: automatic ([`LineCanceller`]) or at a given frequency
//! ([`ToneCanceller`]), run in place on each audio channel after the audio stage.

use super::config::Notch;
use crate::block::SampleBlock;
use crate::dsp::{LineCanceller, ToneCanceller};
use crate::Result;

/// One channel's notch.
#[derive(Debug, Clone)]
pub enum AudioNotch {
    /// Finds and removes steady whistles.
    Auto(LineCanceller),
    /// Removes one known tone.
    At(ToneCanceller),
}

impl AudioNotch {
    /// The notch `notch` for audio at `audio_rate`.
    ///
    /// ```
    /// use amrx::demod::{AudioNotch, Notch};
    /// let notch = AudioNotch::new(Notch::At(1_000.0), 48_000.0).unwrap();
    /// ```
    pub fn new(notch: Notch, audio_rate: f64) -> Result<Self> {
        Ok(match notch {
            Notch::Auto => AudioNotch::Auto(LineCanceller::new(audio_rate)?),
            Notch::At(hz) => AudioNotch::At(ToneCanceller::new(hz, audio_rate)?),
        })
    }

    /// Filters `audio` in place (the direct path has no delay, so nothing moves).
    pub fn apply(&mut self, audio: &mut [f32]) {
        match self {
            AudioNotch::Auto(c) => audio.iter_mut().for_each(|x| *x = c.next(*x)),
            AudioNotch::At(c) => audio.iter_mut().for_each(|x| *x = c.next(*x)),
        }
    }

    /// Back to the freshly built state.
    pub fn reset(&mut self) {
        match self {
            AudioNotch::Auto(c) => c.reset_state(),
            AudioNotch::At(c) => c.reset_state(),
        }
    }
}

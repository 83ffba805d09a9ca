//! Test-signal generation: messages, modulators for the AM family, noise, receiver
//! impairments, and scenes of several emissions.
//!
//! Modulators are [`Block`](crate::block::Block)s from message samples (normalised to a peak
//! of 1) to complex baseband at a carrier offset, with f64 carrier phases so their output is
//! the same however it is split into calls. [`Emission`] joins a message, a modulator run at a
//! low message rate, an interpolator and a frequency shift; [`scene`] reads a JSON scene.

pub mod am;
pub mod am_modulator;
pub mod complex_fir;
pub mod dsb;
pub mod emission;
pub mod hilbert;
pub mod impair;
pub mod isb;
pub mod message;
pub mod noise;
pub mod noise_message;
mod params;
pub mod real_fir;
pub mod rotator;
pub mod scene;
pub mod ssb;
#[cfg(test)]
pub(crate) mod test_util;
pub mod tone_message;
pub mod vsb;
pub mod wav_message;

pub use am::AmToneTransmitter;
pub use am_modulator::AmModulator;
pub use complex_fir::ComplexFir;
pub use dsb::DsbModulator;
pub use emission::{ChannelSpec, Emission, EmissionSpec, FadingSpec, MessageSpec, ModeSpec};
pub use hilbert::AnalyticFilter;
pub use impair::{quantize_cu8, IqImpairment};
pub use isb::IsbModulator;
pub use message::MessageSource;
pub use noise::ComplexNoise;
pub use noise_message::NoiseMessage;
pub use real_fir::RealFir;
pub use rotator::Rotator;
pub use scene::{Scene, SceneGenerator};
pub use ssb::{Sideband, SsbModulator};
pub use tone_message::ToneMessage;
pub use vsb::VsbModulator;
pub use wav_message::WavMessage;

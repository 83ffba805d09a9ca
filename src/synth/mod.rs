//! Test-signal generation: messages, modulators for the AM family, interferers, and scenes of
//! several emissions.
//!
//! This layer sits above the channel simulator ([`crate::channel`]): a scene runs emissions
//! through channel blocks, and an [`Interferer`] adds a whole emission to a signal. The noise
//! and carrier primitives it builds on live in [`crate::dsp`].
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
pub mod interferer;
pub mod isb;
pub mod message;
pub mod noise_message;
mod params;
pub mod real_fir;
pub mod scene;
pub mod ssb;
pub mod tone_message;
pub mod vsb;
pub mod wav_message;

pub use am::AmToneTransmitter;
pub use am_modulator::AmModulator;
pub use complex_fir::ComplexFir;
pub use dsb::DsbModulator;
pub use emission::{ChannelSpec, Emission, EmissionSpec, FadingSpec, MessageSpec, ModeSpec};
pub use hilbert::AnalyticFilter;
pub use interferer::Interferer;
pub use isb::IsbModulator;
pub use message::MessageSource;
pub use noise_message::NoiseMessage;
pub use real_fir::RealFir;
pub use scene::{Scene, SceneGenerator};
pub use ssb::{Sideband, SsbModulator};
pub use tone_message::ToneMessage;
pub use vsb::VsbModulator;
pub use wav_message::WavMessage;

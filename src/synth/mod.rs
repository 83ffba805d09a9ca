//! Test-signal generation: modulators, messages, noise and receiver impairments.

pub mod am;
pub mod impair;
pub mod noise;

pub use am::AmToneTransmitter;
pub use impair::{quantize_cu8, IqImpairment};
pub use noise::ComplexNoise;

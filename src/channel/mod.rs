//! The channel simulator: noise, frequency errors, phase noise, impulses, interference,
//! HF multipath fading and cheap-receiver impairments, each a [`Block`](crate::block::Block)
//! on complex baseband, seeded and chunk-invariant. It builds on [`crate::dsp`] only; the
//! scene generator and the interferer ([`crate::synth`]) sit above it.

pub mod awgn;
pub mod frequency_offset;
pub mod impair;
pub mod impulse_noise;
pub mod iq_imbalance;
pub mod phase_noise;
pub mod quantizer;
pub mod snr;
pub mod tap_gain;
pub mod watterson;

pub use awgn::Awgn;
pub use frequency_offset::FrequencyOffset;
pub use impair::{quantize_cu8, IqImpairment};
pub use impulse_noise::ImpulseNoise;
pub use iq_imbalance::IqImbalance;
pub use phase_noise::PhaseNoise;
pub use quantizer::Cu8Quantizer;
pub use tap_gain::TapGain;
pub use watterson::{HfCondition, PathSpec, WattersonChannel};

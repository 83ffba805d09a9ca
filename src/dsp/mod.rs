//! DSP primitives: oscillators and rotators, mixers, FIR design and filtering, decimation and
//! resampling, seeded complex noise. Nothing here imports from the layers above.

pub mod agc;
pub mod dc_blocker;
pub mod decimator;
mod dot;
pub mod fir;
pub mod gain;
pub mod hilbert;
mod history;
pub(crate) use history::store_finite;
pub mod impulse_blanker;
pub mod iq_balance;
pub mod kaiser;
pub mod line_canceller;
pub mod mixer;
pub mod nco;
pub mod noise;
mod phase_bank;
pub(crate) mod phasor;
pub mod planner;
pub mod resampler;
pub mod rotator;
#[cfg(test)]
pub(crate) mod test_util;
pub mod tone_canceller;

pub use agc::{Agc, AgcSettings};
pub use dc_blocker::{dc_blocker_pole, DcBlocker};
pub use decimator::FirDecimator;
pub use fir::{audio_lowpass, Fir};
pub use gain::Gain;
pub use hilbert::{design_hilbert, HilbertFir, HilbertSpec};
pub use impulse_blanker::{BlankerCount, BlankerSettings, ImpulseBlanker};
pub use iq_balance::IqBalancer;
pub use kaiser::{design_lowpass, kaiser_beta, kaiser_num_taps, LowpassSpec};
pub use line_canceller::LineCanceller;
pub use mixer::Mixer;
pub use nco::Nco;
pub use noise::ComplexNoise;
pub use planner::{rational_ratio, DecimationPlan, DecimationStage, MultiStageDecimator};
pub use resampler::RationalResampler;
pub use rotator::Rotator;
pub use tone_canceller::ToneCanceller;

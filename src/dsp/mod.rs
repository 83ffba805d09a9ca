//! DSP primitives: oscillators, mixers, FIR design and filtering, decimation and resampling.

pub mod dc_blocker;
pub mod decimator;
pub mod fir;
pub mod gain;
pub mod kaiser;
pub mod mixer;
pub mod nco;
pub mod planner;
pub mod resampler;

pub use dc_blocker::DcBlocker;
pub use decimator::FirDecimator;
pub use fir::Fir;
pub use gain::Gain;
pub use kaiser::{design_lowpass, kaiser_beta, kaiser_num_taps, LowpassSpec};
pub use mixer::Mixer;
pub use nco::Nco;
pub use planner::{rational_ratio, DecimationPlan, MultiStageDecimator};
pub use resampler::RationalResampler;

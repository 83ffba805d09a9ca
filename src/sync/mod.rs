//! Carrier recovery: second-order loop design and phase-locked loops.

pub mod loop_filter;
pub mod pll;

pub use loop_filter::LoopGains;
pub use pll::{CarrierPll, PllConfig};

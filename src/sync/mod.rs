//! Carrier recovery: second-order loop design, a carrier PLL and a Costas loop.

pub mod acquisition;
pub mod carrier_lock;
pub mod costas;
pub mod loop_filter;
pub mod loop_settings;
pub mod pll;

pub use acquisition::{CarrierAcquisition, CarrierKind, CarrierLoop};
pub use costas::CostasLoop;
pub use loop_filter::LoopGains;
pub use loop_settings::LoopSettings;
pub use pll::{CarrierPll, PllConfig, CARRIER_FILTER_RATIO, MIN_CARRIER_FILTER_RATIO};

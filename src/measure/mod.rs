//! Measurements: spectra, carrier and CNR estimates, modulation depth, tone frequency, SINAD.

pub mod carrier;
pub mod carrier_meter;
pub mod modulation;
pub mod spectrum;
pub mod timeline;
pub mod tone;

pub use carrier::{
    estimate_cnr_db, estimate_cnr_db_within, estimate_noise_density, estimate_noise_density_within,
    find_carrier, CarrierPeak,
};
pub use carrier_meter::{CarrierMeter, MeterSettings, MeterSummary, WindowReading};
pub use modulation::{ModulationDepth, ModulationMeter};
pub use spectrum::PowerSpectrum;
pub use timeline::{Event, EventKind, Limits, Timeline, TimelineSummary};
pub use tone::{estimate_tone_hz, fit_tone, sinad_db, snr_in_band_db, ToneFit};

//! Carrier search and carrier-to-noise ratio from an averaged spectrum.

use super::PowerSpectrum;

/// A spectral peak taken to be the carrier.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CarrierPeak {
    /// Frequency in Hz, interpolated between bins.
    pub frequency_hz: f64,
    /// Carrier power (same units as the signal's mean power).
    pub power: f64,
}

/// Finds the strongest peak within `±search_hz` of `centre_hz`.
pub fn find_carrier(
    spectrum: &PowerSpectrum,
    centre_hz: f64,
    search_hz: f64,
) -> Option<CarrierPeak> {
    let _ = (spectrum, centre_hz, search_hz);
    todo!()
}

/// Carrier power over the noise power in `2·message_bandwidth_hz`, in dB, with the noise density
/// taken from the spectrum's floor.
pub fn estimate_cnr_db(
    spectrum: &PowerSpectrum,
    carrier: &CarrierPeak,
    message_bandwidth_hz: f64,
) -> f64 {
    let _ = (spectrum, carrier, message_bandwidth_hz);
    todo!()
}

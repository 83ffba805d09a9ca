//! Full-carrier AM with tone modulation: s(t) = A_c·(1 + μ·cos 2πf_m t)·e^{j2πf_c t}.

use crate::{Complex32, Result};

/// A full-carrier AM transmitter modulated by one tone, at complex baseband.
#[derive(Debug, Clone)]
pub struct AmToneTransmitter {}

impl AmToneTransmitter {
    /// `carrier_amplitude` A_c, modulation index `mu` (≥ 0; above 1 overmodulates), tone in Hz,
    /// carrier offset from the recording centre in Hz, sample rate in Hz.
    pub fn new(
        carrier_amplitude: f64,
        mu: f64,
        tone_hz: f64,
        offset_hz: f64,
        sample_rate: f64,
    ) -> Result<Self> {
        let _ = (carrier_amplitude, mu, tone_hz, offset_hz, sample_rate);
        todo!()
    }
    /// Fills `out` with the next samples.
    pub fn fill(&mut self, out: &mut [Complex32]) {
        let _ = out;
        todo!()
    }
}

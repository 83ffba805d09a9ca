//! FIR low-pass design by the Kaiser window method.

use crate::Result;

/// A low-pass specification: edges in Hz, attenuation in dB.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LowpassSpec {
    /// Passband edge in Hz.
    pub passband_hz: f64,
    /// Stopband edge in Hz.
    pub stopband_hz: f64,
    /// Stopband attenuation in dB (positive).
    pub attenuation_db: f64,
    /// Sample rate in Hz.
    pub sample_rate: f64,
}

/// Kaiser's β for a stopband attenuation in dB.
pub fn kaiser_beta(attenuation_db: f64) -> f64 {
    let _ = attenuation_db;
    todo!()
}

/// Number of taps for `attenuation_db` and a transition width as a fraction of the sample rate.
pub fn kaiser_num_taps(attenuation_db: f64, transition_fraction: f64) -> usize {
    let _ = (attenuation_db, transition_fraction);
    todo!()
}

/// Designs the taps (odd length, linear phase, unity DC gain), cutoff at mid-transition.
pub fn design_lowpass(spec: &LowpassSpec) -> Result<Vec<f32>> {
    let _ = spec;
    todo!()
}

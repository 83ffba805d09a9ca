//! Cheap-receiver impairments: DC offset, IQ gain and phase imbalance, 8-bit quantisation.

use crate::Complex32;

/// DC offset and IQ imbalance of a direct-conversion front end.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct IqImpairment {
    /// Added DC (complex).
    pub dc: Complex32,
    /// Gain imbalance in dB (Q relative to I).
    pub gain_db: f64,
    /// Phase imbalance in degrees (Q's error from quadrature).
    pub phase_deg: f64,
}

impl IqImpairment {
    /// Applies the impairment in place.
    pub fn apply(&self, signal: &mut [Complex32]) {
        let _ = signal;
        todo!()
    }
}

/// Quantises to unsigned 8-bit IQ bytes (full scale ±1 ↦ 0..255, centre 127.5), clipping.
pub fn quantize_cu8(signal: &[Complex32], out: &mut Vec<u8>) {
    let _ = (signal, out);
    todo!()
}

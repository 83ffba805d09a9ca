//! Modulation depth of full-carrier AM from the detected envelope.

use serde::Serialize;

/// Positive and negative peak modulation as fractions (1.0 = 100 %).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Default)]
pub struct ModulationDepth {
    /// (peak − carrier) / carrier.
    pub positive: f64,
    /// (carrier − trough) / carrier.
    pub negative: f64,
}

/// Watches an envelope stream and reports its peak modulation.
pub struct ModulationMeter {}

impl ModulationMeter {
    /// A meter for envelopes at `sample_rate`.
    pub fn new(sample_rate: f64) -> Self {
        let _ = sample_rate;
        todo!()
    }
    /// Adds envelope samples (the detector output before DC removal).
    pub fn push(&mut self, envelope: &[f32]) {
        let _ = envelope;
        todo!()
    }
    /// The depth measured so far, `None` before enough signal.
    pub fn depth(&self) -> Option<ModulationDepth> {
        todo!()
    }
}

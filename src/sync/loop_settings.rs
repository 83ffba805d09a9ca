//! Carrier-loop overrides a user may give; each loop's owner supplies the defaults.

/// Carrier-loop overrides; `None` keeps the mode's default.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct LoopSettings {
    /// One-sided loop noise bandwidth in Hz.
    pub bandwidth_hz: Option<f64>,
    /// Damping ζ.
    pub damping: Option<f64>,
}

impl LoopSettings {
    /// True when either value was set.
    pub fn is_set(&self) -> bool {
        self.bandwidth_hz.is_some() || self.damping.is_some()
    }
}

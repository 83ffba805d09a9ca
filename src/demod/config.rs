//! Settings shared by every mode's receiver, and the choices the command line offers.

use crate::dsp::AgcSettings;
use serde::Serialize;

/// Which sideband a receiver keeps.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Sideband {
    /// Frequencies above the carrier.
    Upper,
    /// Frequencies below the carrier.
    Lower,
}

/// How single sideband is demodulated.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum SsbMethod {
    /// The phasing method: a Hilbert-transformer FIR on one arm, a matching delay on the other.
    Phasing,
    /// The Weaver method (D. K. Weaver, Proc. IRE, 1956): shift by half the band, low-pass,
    /// shift back.
    #[default]
    Weaver,
}

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

/// The options of a receiver that do not depend on the recording.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ReceiverOptions {
    /// Audio rate in Hz.
    pub audio_rate: f64,
    /// Audio bandwidth in Hz; the mode's default when `None`.
    pub bandwidth_hz: Option<f64>,
    /// Keep one sideband only (`sam`).
    pub sideband: Option<Sideband>,
    /// SSB demodulation method (`usb`, `lsb`, `isb`).
    pub ssb_method: SsbMethod,
    /// Lock to a pilot or full carrier when one is present (`usb`, `lsb`).
    pub carrier_lock: bool,
    /// Carrier-loop overrides.
    pub loop_settings: LoopSettings,
    /// Gain control; the mode's default when `None`.
    pub agc: Option<AgcSettings>,
    /// Correct the front end's IQ gain and phase imbalance blindly before receiving.
    pub iq_balance: bool,
}

impl Default for ReceiverOptions {
    fn default() -> Self {
        ReceiverOptions {
            audio_rate: 48_000.0,
            bandwidth_hz: None,
            sideband: None,
            ssb_method: SsbMethod::default(),
            carrier_lock: false,
            loop_settings: LoopSettings::default(),
            agc: None,
            iq_balance: false,
        }
    }
}

/// Everything a receiver needs to be built, whatever its mode.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ReceiverConfig {
    /// IQ sample rate in Hz.
    pub input_rate: f64,
    /// Carrier (or suppressed-carrier reference) frequency relative to the recording centre.
    pub offset_hz: f64,
    /// The mode-independent options.
    pub options: ReceiverOptions,
}

impl ReceiverConfig {
    /// Settings with every option at the mode's default.
    pub fn new(input_rate: f64, offset_hz: f64) -> Self {
        ReceiverConfig {
            input_rate,
            offset_hz,
            options: ReceiverOptions::default(),
        }
    }
}

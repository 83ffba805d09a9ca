//! What a user chooses for a receiver: one [`ReceiverConfig`] for every mode, and the
//! [`ModeSettings`] it resolves to once the mode's defaults fill the gaps.
//!
//! Each concern is validated once, by the part that owns it: tuning by the front end, audio
//! rate and bandwidth by the audio stage, loop settings by the loop, the options a mode accepts
//! by the mode table ([`crate::demod::MODES`]).

use super::Mode;
use crate::dsp::AgcSettings;
pub use crate::sync::LoopSettings;
use crate::sync::PllConfig;
use crate::{Error, Result};
use serde::Serialize;

/// The audio rate when none is given, 48 kHz (common practice, no source).
pub const DEFAULT_AUDIO_RATE_HZ: f64 = 48_000.0;

/// Which sideband a receiver keeps.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Sideband {
    /// Frequencies above the carrier.
    Upper,
    /// Frequencies below the carrier.
    Lower,
}

impl Sideband {
    /// `upper` or `lower`.
    pub fn name(self) -> &'static str {
        match self {
            Sideband::Upper => "upper",
            Sideband::Lower => "lower",
        }
    }
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

/// A notch on the audio.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Notch {
    /// Find and remove steady whistles (the adaptive line canceller, [`crate::dsp::LineCanceller`]).
    Auto,
    /// Remove one tone at this audio frequency in Hz ([`crate::dsp::ToneCanceller`]).
    At(f64),
}

impl std::str::FromStr for Notch {
    type Err = Error;

    /// `auto`, or a frequency in Hz.
    fn from_str(s: &str) -> Result<Self> {
        let s = s.trim();
        if s.eq_ignore_ascii_case("auto") {
            return Ok(Notch::Auto);
        }
        s.parse::<f64>()
            .ok()
            .filter(|f| f.is_finite() && *f > 0.0)
            .map(Notch::At)
            .ok_or_else(|| Error::parameter("notch_hz", s, "is neither auto nor a frequency in Hz"))
    }
}

/// The options of a receiver that do not depend on the recording; `None` keeps the mode's
/// default from the mode table.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ReceiverOptions {
    /// Audio rate in Hz.
    pub audio_rate: f64,
    /// Audio (message) bandwidth in Hz.
    pub bandwidth_hz: Option<f64>,
    /// Keep one sideband only (`sam`).
    pub sideband: Option<Sideband>,
    /// SSB demodulation method (`usb`, `lsb`, `isb`).
    pub ssb_method: SsbMethod,
    /// Lock to a pilot or full carrier when one is present (`usb`, `lsb`).
    pub carrier_lock: bool,
    /// Carrier-loop overrides.
    pub loop_settings: LoopSettings,
    /// Gain control.
    pub agc: Option<AgcSettings>,
    /// Width of the vestige in Hz (`vsb`).
    pub vestige_hz: Option<f64>,
    /// Correct the front end's IQ gain and phase imbalance blindly before receiving.
    pub iq_balance: bool,
    /// Blank impulses on the IQ ahead of the channel filter.
    pub noise_blanker: bool,
    /// A notch on the audio.
    pub notch: Option<Notch>,
}

impl Default for ReceiverOptions {
    fn default() -> Self {
        ReceiverOptions {
            audio_rate: DEFAULT_AUDIO_RATE_HZ,
            bandwidth_hz: None,
            sideband: None,
            ssb_method: SsbMethod::default(),
            carrier_lock: false,
            loop_settings: LoopSettings::default(),
            agc: None,
            vestige_hz: None,
            iq_balance: false,
            noise_blanker: false,
            notch: None,
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

/// A [`ReceiverConfig`] for one mode with the mode's defaults filled in: what a detector is
/// built from.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ModeSettings {
    /// The mode.
    pub mode: Mode,
    /// IQ sample rate in Hz.
    pub input_rate: f64,
    /// Tuned frequency relative to the recording centre, in Hz.
    pub offset_hz: f64,
    /// Audio rate in Hz.
    pub audio_rate: f64,
    /// Audio (message) bandwidth W in Hz.
    pub bandwidth_hz: f64,
    /// Gain control.
    pub agc: AgcSettings,
    /// One sideband only (`sam`).
    pub sideband: Option<Sideband>,
    /// SSB method.
    pub ssb_method: SsbMethod,
    /// Pilot or carrier lock (`usb`, `lsb`).
    pub carrier_lock: bool,
    /// Loop bandwidth B_L in Hz, when the mode has a loop.
    pub loop_bandwidth_hz: Option<f64>,
    /// Loop damping ζ.
    pub loop_damping: f64,
    /// Vestige width in Hz (`vsb`).
    pub vestige_hz: Option<f64>,
    /// Blind IQ-imbalance correction ahead of the front end.
    pub iq_balance: bool,
    /// Impulse blanking ahead of the front end.
    pub noise_blanker: bool,
    /// A notch on the audio.
    pub notch: Option<Notch>,
}

impl ModeSettings {
    /// The carrier loop's design at the detection rate `rate`, from the resolved loop
    /// bandwidth and damping; the loop itself validates the values.
    pub fn loop_config(&self, rate: f64) -> Result<PllConfig> {
        let loop_bandwidth_hz = self.loop_bandwidth_hz.ok_or_else(|| {
            Error::parameter(
                "loop_bandwidth_hz",
                "none",
                format!("{} has no loop", self.mode),
            )
        })?;
        Ok(PllConfig {
            sample_rate: rate,
            loop_bandwidth_hz,
            damping: self.loop_damping,
            initial_frequency_hz: 0.0,
            carrier_filter_hz: None,
        })
    }
}

/// How loud the audio is: for listening, or calibrated for measuring.
///
/// The mode table's defaults ([`super::MODES`]) leave am and sam at unity gain, so that a
/// library user measuring levels gets calibrated audio. The command line listens by default.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum AudioLevel {
    /// A comfortable, steady level whatever the signal strength: the mode's AGC where it has
    /// one, the slow (broadcast) AGC for the modes that default to unity gain.
    #[default]
    Listening,
    /// Unity gain, no AGC: the audio keeps the signal's level (am and sam: a carrier of
    /// amplitude A modulated to depth μ by a tone gives a tone of peak A·μ; usb and lsb: a
    /// tone of amplitude A in the sideband gives a tone of peak A).
    Calibrated,
}

impl AudioLevel {
    /// The gain control this level asks for in `mode`.
    ///
    /// ```
    /// use amrx::demod::{AudioLevel, Mode, MODES};
    /// use amrx::dsp::AgcSettings;
    /// assert_eq!(AudioLevel::Listening.agc(Mode::Am), AgcSettings::SLOW);
    /// assert_eq!(AudioLevel::Listening.agc(Mode::Usb), AgcSettings::SPEECH);
    /// assert_eq!(AudioLevel::Calibrated.agc(Mode::Usb), AgcSettings::OFF);
    /// ```
    pub fn agc(self, mode: Mode) -> AgcSettings {
        match self {
            AudioLevel::Calibrated => AgcSettings::OFF,
            AudioLevel::Listening => match mode.spec().agc {
                automatic @ AgcSettings::Automatic { .. } => automatic,
                AgcSettings::Fixed { .. } => AgcSettings::SLOW,
            },
        }
    }
}

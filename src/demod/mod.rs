//! Receivers: one [`Assembly`] of front end, detector, gain control and audio stage, and the
//! table of modes ([`MODES`]) that says which detector each mode uses and with what defaults.
//!
//! ```text
//!  IQ ─▶ [guards] ─▶ FrontEnd ─▶ Detector ─▶ Agc ─▶ AudioStage ─▶ audio (interleaved)
//!        IQ balance   tune,       per mode    per audio channel
//!                     decimate,
//!                     channel filter
//! ```
//!
//! Adding a mode: write its detector in a new file here (a [`ModeDetector`]), then add a
//! variant to [`Mode`] and a row to [`MODES`] in this file. Nothing else changes: the command
//! line, the lab and the demo read the table.

pub mod am;
pub mod assembly;
pub mod audio_notch;
pub mod audio_stage;
pub mod blank_guard;
pub mod channel_snr;
pub mod config;
pub mod detector;
pub mod diode;
pub mod dsb;
pub mod envelope;
pub mod front_end;
pub mod halves;
pub mod iq_guard;
pub mod isb;
pub mod receiver;
pub mod sam;
pub mod sideband_selector;
pub mod ssb;
pub mod ssb_phasing;
pub mod ssb_weaver;
pub mod vsb;

pub use am::{AmDetector, AmReceiver};
pub use assembly::{assemble, Assembly, Guard, IqGuard};
pub use audio_notch::AudioNotch;
pub use audio_stage::AudioStage;
pub use blank_guard::{Blanking, BlankingGuard};
pub use config::{
    AudioLevel, LoopSettings, ModeSettings, Notch, ReceiverConfig, ReceiverOptions, Sideband,
    SsbMethod, DEFAULT_AUDIO_RATE_HZ,
};
pub use detector::{Detector, DetectorContext, ModeDetector};
pub use diode::{capacitor_voltage, diode_step, DiodeConfig, DiodeDetector};
pub use dsb::{DsbDetector, DsbReceiver};
pub use envelope::EnvelopeDetector;
pub use front_end::{ChannelFrontEnd, FrontEnd, FrontEndConfig};
pub use halves::{BackHalf, FrontHalf, GuardHalf};
pub use iq_guard::IqBalanceGuard;
pub use isb::{IsbDetector, IsbReceiver};
pub use receiver::{Measurements, Receiver};
pub use sam::{SamDetector, SamReceiver};
pub use ssb::{ssb_detector, SidebandDetector, SsbDetector, SsbReceiver};
pub use ssb_phasing::{PhasingDetector, PhasingImbalance};
pub use ssb_weaver::WeaverDetector;
pub use vsb::{VsbDetector, VsbReceiver};

use crate::dsp::AgcSettings;
use crate::{Error, Result};
use serde::Serialize;
use std::fmt;
use std::str::FromStr;

/// A receive mode; [`Mode::spec`] gives its row of the mode table.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize)]
#[serde(rename_all = "lowercase")]
#[non_exhaustive]
pub enum Mode {
    /// Full-carrier double-sideband AM by envelope detection.
    Am,
    /// Full-carrier AM by synchronous (PLL) detection, both or one sideband.
    Sam,
    /// Suppressed-carrier double sideband, Costas-loop detection.
    Dsb,
    /// Upper sideband.
    Usb,
    /// Lower sideband.
    Lsb,
    /// Independent sidebands, stereo out.
    Isb,
    /// Vestigial sideband.
    Vsb,
}

/// What the transmitter sends, as the lab and the generator need to know it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Transmission {
    /// Carrier and both sidebands.
    FullCarrier,
    /// Both sidebands, no carrier.
    SuppressedCarrier,
    /// The upper sideband.
    UpperSideband,
    /// The lower sideband.
    LowerSideband,
    /// Two independent sidebands.
    IndependentSidebands,
    /// Carrier, one sideband and a vestige of the other.
    Vestigial,
}

/// An option that only some modes accept.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ModeOption {
    /// Keep one sideband (`sideband`).
    Sideband,
    /// Phasing or Weaver (`ssb_method`).
    SsbMethod,
    /// Lock to a pilot or carrier (`carrier_lock`); loop settings then apply.
    CarrierLock,
    /// Loop bandwidth and damping (`loop_bandwidth_hz`, `loop_damping`).
    Loop,
    /// Vestige width (`vestige_hz`).
    Vestige,
}

/// One row of the mode table: everything about a mode that is not its detector's code.
#[derive(Debug, Clone, Copy)]
pub struct ModeSpec {
    /// The mode.
    pub mode: Mode,
    /// Name on the command line and in reports.
    pub name: &'static str,
    /// The usual ITU emission designators (ITU Radio Regulations, Appendix 1).
    pub emissions: &'static str,
    /// One line for help texts.
    pub summary: &'static str,
    /// What the transmitter sends.
    pub transmission: Transmission,
    /// Default audio bandwidth in Hz.
    pub bandwidth_hz: f64,
    /// Default gain control.
    pub agc: AgcSettings,
    /// Default loop bandwidth in Hz, for modes with a loop (or a carrier lock).
    pub loop_bandwidth_hz: Option<f64>,
    /// Default loop bandwidth with one sideband kept, when it differs.
    pub one_sideband_loop_bandwidth_hz: Option<f64>,
    /// Options beyond the common ones.
    pub options: &'static [ModeOption],
    /// Builds the receiver.
    pub build: fn(Mode, &ReceiverConfig) -> Result<Box<dyn Receiver>>,
}

/// Loop damping when none is given: ζ = 1/√2, the usual compromise between overshoot and
/// settling (F. M. Gardner, *Phaselock Techniques*, 3rd ed., ch. 2).
pub const DEFAULT_LOOP_DAMPING: f64 = std::f64::consts::FRAC_1_SQRT_2;

/// The mode table. Bandwidths and AGC defaults are common practice, no source; the loop
/// defaults are explained beside each detector.
pub static MODES: [ModeSpec; 7] = [
    ModeSpec {
        mode: Mode::Am,
        name: "am",
        emissions: "A3E",
        summary: "full-carrier AM, envelope detector",
        transmission: Transmission::FullCarrier,
        bandwidth_hz: 5000.0,
        agc: AgcSettings::OFF,
        loop_bandwidth_hz: None,
        one_sideband_loop_bandwidth_hz: None,
        options: &[],
        build: assemble::<AmDetector>,
    },
    ModeSpec {
        mode: Mode::Sam,
        name: "sam",
        emissions: "A3E",
        summary: "full-carrier AM, synchronous detector (PLL), both or one sideband",
        transmission: Transmission::FullCarrier,
        bandwidth_hz: 5000.0,
        agc: AgcSettings::OFF,
        loop_bandwidth_hz: Some(sam::DEFAULT_LOOP_BANDWIDTH_HZ),
        one_sideband_loop_bandwidth_hz: Some(sam::DEFAULT_SIDEBAND_LOOP_BANDWIDTH_HZ),
        options: &[ModeOption::Sideband, ModeOption::Loop],
        build: assemble::<SamDetector>,
    },
    ModeSpec {
        mode: Mode::Dsb,
        name: "dsb",
        emissions: "A3E (suppressed carrier)",
        summary: "suppressed-carrier DSB, Costas loop",
        transmission: Transmission::SuppressedCarrier,
        bandwidth_hz: 3000.0,
        agc: AgcSettings::SPEECH,
        loop_bandwidth_hz: Some(dsb::DEFAULT_LOOP_BANDWIDTH_HZ),
        one_sideband_loop_bandwidth_hz: None,
        options: &[ModeOption::Loop],
        build: assemble::<DsbDetector>,
    },
    ModeSpec {
        mode: Mode::Usb,
        name: "usb",
        emissions: "J3E/R3E/H3E",
        summary: "upper sideband, Weaver or phasing",
        transmission: Transmission::UpperSideband,
        bandwidth_hz: 2700.0,
        agc: AgcSettings::SPEECH,
        loop_bandwidth_hz: Some(crate::sync::carrier_lock::DEFAULT_LOCK_BANDWIDTH_HZ),
        one_sideband_loop_bandwidth_hz: None,
        options: &[ModeOption::SsbMethod, ModeOption::CarrierLock],
        build: assemble::<SsbDetector>,
    },
    ModeSpec {
        mode: Mode::Lsb,
        name: "lsb",
        emissions: "J3E/R3E/H3E",
        summary: "lower sideband, Weaver or phasing",
        transmission: Transmission::LowerSideband,
        bandwidth_hz: 2700.0,
        agc: AgcSettings::SPEECH,
        loop_bandwidth_hz: Some(crate::sync::carrier_lock::DEFAULT_LOCK_BANDWIDTH_HZ),
        one_sideband_loop_bandwidth_hz: None,
        options: &[ModeOption::SsbMethod, ModeOption::CarrierLock],
        build: assemble::<SsbDetector>,
    },
    ModeSpec {
        mode: Mode::Isb,
        name: "isb",
        emissions: "B8E",
        summary: "independent sidebands to stereo (left lower, right upper)",
        transmission: Transmission::IndependentSidebands,
        bandwidth_hz: 3000.0,
        agc: AgcSettings::SPEECH,
        loop_bandwidth_hz: None,
        one_sideband_loop_bandwidth_hz: None,
        options: &[ModeOption::SsbMethod],
        build: assemble::<IsbDetector>,
    },
    ModeSpec {
        mode: Mode::Vsb,
        name: "vsb",
        emissions: "C3F",
        summary: "vestigial sideband, carrier PLL and Nyquist slope",
        transmission: Transmission::Vestigial,
        bandwidth_hz: 4000.0,
        agc: AgcSettings::SLOW,
        loop_bandwidth_hz: Some(crate::sync::carrier_lock::DEFAULT_LOCK_BANDWIDTH_HZ),
        one_sideband_loop_bandwidth_hz: None,
        options: &[ModeOption::Loop, ModeOption::Vestige],
        build: assemble::<VsbDetector>,
    },
];

impl Mode {
    /// Every mode, in table order.
    pub fn all() -> impl Iterator<Item = Mode> {
        MODES.iter().map(|spec| spec.mode)
    }

    /// The mode's row of the table.
    pub fn spec(self) -> &'static ModeSpec {
        MODES
            .iter()
            .find(|spec| spec.mode == self)
            .expect("every mode has a row in MODES")
    }

    /// The name used on the command line and in reports.
    pub fn name(self) -> &'static str {
        self.spec().name
    }

    /// The usual ITU emission designators.
    pub fn emission(self) -> &'static str {
        self.spec().emissions
    }
}

impl fmt::Display for Mode {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for Mode {
    type Err = Error;

    fn from_str(s: &str) -> Result<Self> {
        Mode::all()
            .find(|m| m.name().eq_ignore_ascii_case(s.trim()))
            .ok_or_else(|| {
                let names: Vec<&str> = MODES.iter().map(|m| m.name).collect();
                Error::parameter("mode", s, format!("unknown mode ({})", names.join(", ")))
            })
    }
}

impl ModeSpec {
    /// Whether the mode accepts `option`.
    pub fn accepts(&self, option: ModeOption) -> bool {
        self.options.contains(&option)
    }

    /// Fills the mode's defaults into `config`, refusing options the mode does not have.
    pub fn resolve(&self, config: &ReceiverConfig) -> Result<ModeSettings> {
        let o = &config.options;
        self.refuse_foreign_options(o)?;
        let loop_default = match (o.sideband, self.one_sideband_loop_bandwidth_hz) {
            (Some(_), Some(narrow)) => Some(narrow),
            _ => self.loop_bandwidth_hz,
        };
        Ok(ModeSettings {
            mode: self.mode,
            input_rate: config.input_rate,
            offset_hz: config.offset_hz,
            audio_rate: o.audio_rate,
            bandwidth_hz: o.bandwidth_hz.unwrap_or(self.bandwidth_hz),
            agc: o.agc.unwrap_or(self.agc),
            sideband: o.sideband,
            ssb_method: o.ssb_method,
            carrier_lock: o.carrier_lock,
            loop_bandwidth_hz: o.loop_settings.bandwidth_hz.or(loop_default),
            loop_damping: o.loop_settings.damping.unwrap_or(DEFAULT_LOOP_DAMPING),
            vestige_hz: o.vestige_hz,
            iq_balance: o.iq_balance,
            noise_blanker: o.noise_blanker,
            notch: o.notch,
        })
    }

    fn refuse_foreign_options(&self, o: &ReceiverOptions) -> Result<()> {
        let refuse = |name: &'static str, value: String, needs: &str| {
            Err(Error::parameter(
                name,
                value,
                format!("applies to {needs} only, not {}", self.name),
            ))
        };
        if let Some(side) = o.sideband.filter(|_| !self.accepts(ModeOption::Sideband)) {
            return refuse(
                "sideband",
                side.name().into(),
                &self.modes_with(ModeOption::Sideband),
            );
        }
        if o.carrier_lock && !self.accepts(ModeOption::CarrierLock) {
            return refuse(
                "carrier_lock",
                "true".into(),
                &self.modes_with(ModeOption::CarrierLock),
            );
        }
        let has_loop = self.accepts(ModeOption::Loop)
            || (self.accepts(ModeOption::CarrierLock) && o.carrier_lock);
        if o.loop_settings.is_set() && !has_loop {
            let (name, value) = match o.loop_settings.bandwidth_hz {
                Some(hz) => ("loop_bandwidth_hz", hz),
                None => ("loop_damping", o.loop_settings.damping.unwrap_or_default()),
            };
            return refuse(
                name,
                value.to_string(),
                "modes with a carrier loop (sam, dsb, vsb, and usb/lsb with carrier lock)",
            );
        }
        if let Some(v) = o.vestige_hz.filter(|_| !self.accepts(ModeOption::Vestige)) {
            return refuse(
                "vestige_hz",
                v.to_string(),
                &self.modes_with(ModeOption::Vestige),
            );
        }
        Ok(())
    }

    fn modes_with(&self, option: ModeOption) -> String {
        let names: Vec<&str> = MODES
            .iter()
            .filter(|m| m.accepts(option))
            .map(|m| m.name)
            .collect();
        names.join(", ")
    }
}

/// The receiver for `mode`, from the table.
///
/// ```
/// use amrx::demod::{build_receiver, Mode, ReceiverConfig};
/// let rx = build_receiver(Mode::Am, &ReceiverConfig::new(2_400_000.0, 50_000.0)).unwrap();
/// assert_eq!(rx.audio_channels(), 1);
/// ```
pub fn build_receiver(mode: Mode, config: &ReceiverConfig) -> Result<Box<dyn Receiver>> {
    (mode.spec().build)(mode, config)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_round_trip_and_table_is_complete() {
        for (k, spec) in MODES.iter().enumerate() {
            assert_eq!(spec.name.parse::<Mode>().unwrap(), spec.mode);
            assert_eq!(spec.mode.spec().name, spec.name);
            assert!(
                MODES[..k].iter().all(|m| m.mode != spec.mode),
                "{} twice",
                spec.name
            );
        }
        assert!("fm".parse::<Mode>().is_err());
    }

    #[test]
    fn foreign_options_are_refused_naming_the_parameter() {
        let mut c = ReceiverConfig::new(96_000.0, 0.0);
        c.options.sideband = Some(Sideband::Upper);
        let err = Mode::Am.spec().resolve(&c).unwrap_err();
        assert!(err.to_string().contains("sideband"), "{err}");
        assert!(Mode::Sam.spec().resolve(&c).is_ok());
        let mut c = ReceiverConfig::new(96_000.0, 0.0);
        c.options.loop_settings.bandwidth_hz = Some(5.0);
        assert!(Mode::Usb.spec().resolve(&c).is_err());
        c.options.carrier_lock = true;
        assert!(Mode::Usb.spec().resolve(&c).is_ok());
    }

    #[test]
    fn one_sideband_sam_gets_the_narrow_loop() {
        let mut c = ReceiverConfig::new(96_000.0, 0.0);
        let spec = Mode::Sam.spec();
        assert_eq!(spec.resolve(&c).unwrap().loop_bandwidth_hz, Some(30.0));
        c.options.sideband = Some(Sideband::Lower);
        assert_eq!(spec.resolve(&c).unwrap().loop_bandwidth_hz, Some(10.0));
        c.options.loop_settings.bandwidth_hz = Some(25.0);
        assert_eq!(spec.resolve(&c).unwrap().loop_bandwidth_hz, Some(25.0));
    }
}

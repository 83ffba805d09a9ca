//! The detectors the lab can measure: any mode's receiver from [`build_receiver`], or the
//! physical diode-and-RC envelope detector.

use super::diode_receiver::diode_receiver;
use super::signal::TestSignal;
use super::theory::{
    full_carrier_figure_of_merit, one_sideband_figure_of_merit, vestigial_figure_of_merit,
    SUPPRESSED_CARRIER_FIGURE_OF_MERIT,
};
use crate::demod::vsb::DEFAULT_VESTIGE_HZ;
use crate::demod::{build_receiver, Mode, Receiver, ReceiverConfig, Sideband, Transmission, MODES};
use crate::{Error, Result};
use std::fmt;
use std::str::FromStr;

/// A detector under test.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Detector {
    /// The receiver [`build_receiver`] gives for this mode with its defaults (every mode).
    Receiver(Mode),
    /// The synchronous AM receiver (`sam`) keeping one sideband (`sam:upper`, `sam:lower`).
    SamSideband(Sideband),
    /// The diode-and-RC detector ([`crate::demod::DiodeDetector`]) with this time constant.
    Diode {
        /// RC in seconds.
        rc_s: f64,
    },
}

impl Detector {
    /// The lab's diode time constant, 50 µs: ≫ the 10.4 µs period of its 96 kHz IF, and inside
    /// the diagonal-clipping bound √(1−μ²)/(μω_m) = 55 µs for every tone up to W = 5 kHz at
    /// μ ≤ 0.5 (Haykin, Communication Systems, ch. 2).
    pub const DIODE_RC_S: f64 = 50e-6;

    /// The diode detector with [`DIODE_RC_S`](Self::DIODE_RC_S).
    pub fn diode() -> Self {
        Detector::Diode {
            rc_s: Self::DIODE_RC_S,
        }
    }

    /// The short name used on the command line and in the CSV (`am`, `diode`, `diode:100`
    /// for RC = 100 µs when not the default).
    pub fn name(&self) -> String {
        match self {
            Detector::Receiver(mode) => mode.name().to_string(),
            Detector::SamSideband(side) => format!("sam:{}", side.name()),
            Detector::Diode { rc_s } if *rc_s == Self::DIODE_RC_S => "diode".to_string(),
            Detector::Diode { rc_s } => format!("diode:{}", (rc_s * 1e9).round() / 1e3),
        }
    }

    /// A legend label saying what the detector is.
    pub fn label(&self) -> String {
        match self {
            Detector::Receiver(Mode::Am) => "am (envelope)".to_string(),
            Detector::Receiver(Mode::Sam) => "sam (synchronous)".to_string(),
            Detector::Receiver(Mode::Dsb) => "dsb (coherent)".to_string(),
            Detector::Receiver(Mode::Isb) => "isb (coherent, upper channel)".to_string(),
            Detector::Receiver(mode) => format!("{mode} (coherent)"),
            Detector::SamSideband(side) => {
                format!("sam:{} (synchronous, one sideband)", side.name())
            }
            Detector::Diode { rc_s } => format!("diode, RC {:.0} µs", rc_s * 1e6),
        }
    }

    /// The tone signal this detector is measured with.
    pub fn test_signal(&self) -> Result<TestSignal> {
        let mode = match self {
            Detector::Diode { .. } | Detector::SamSideband(_) => {
                return Ok(TestSignal::FullCarrier)
            }
            Detector::Receiver(mode) => *mode,
        };
        lab_signal(mode.spec().transmission).ok_or_else(|| {
            Error::parameter(
                "detectors",
                mode,
                format!("the lab measures {}", lab_names()),
            )
        })
    }

    /// True for detectors fed a full carrier (CNR is defined for them).
    pub fn has_carrier(&self) -> bool {
        matches!(self.test_signal(), Ok(TestSignal::FullCarrier))
    }

    /// The output channel the lab measures: 0, except `isb`, measured on its upper-sideband
    /// channel (1), where its test tone is.
    pub fn audio_channel(&self) -> usize {
        match self {
            Detector::Receiver(Mode::Isb) => 1,
            _ => 0,
        }
    }

    /// The theoretical figure of merit above threshold for a tone of index `mu` in message
    /// bandwidth `bandwidth_hz`: μ²/(2+μ²) with a full carrier and both sidebands, 1 for
    /// DSB-SC and SSB (Haykin, Communication Systems, ch. 2); μ²/(2(2+μ²)) for synchronous
    /// detection of one sideband of full-carrier AM and μ²/(4+μ²)·W/(W − f_v/3) for `vsb`
    /// (derived in the same convention: see [`super::theory`]).
    pub fn figure_of_merit(&self, mu: f64, bandwidth_hz: f64) -> f64 {
        match self {
            Detector::SamSideband(_) => one_sideband_figure_of_merit(mu),
            Detector::Receiver(Mode::Vsb) => {
                vestigial_figure_of_merit(mu, bandwidth_hz, DEFAULT_VESTIGE_HZ)
            }
            _ if self.has_carrier() => full_carrier_figure_of_merit(mu),
            _ => SUPPRESSED_CARRIER_FIGURE_OF_MERIT,
        }
    }

    /// The detector's complete receiver.
    pub fn build(&self, config: &ReceiverConfig) -> Result<Box<dyn Receiver>> {
        self.test_signal()?;
        match self {
            Detector::Receiver(mode) => build_receiver(*mode, config),
            Detector::SamSideband(side) => {
                let mut config = *config;
                config.options.sideband = Some(*side);
                build_receiver(Mode::Sam, &config)
            }
            Detector::Diode { rc_s } => {
                if config.options.bandwidth_hz.is_none() {
                    return Err(Error::parameter(
                        "bandwidth_hz",
                        "none",
                        "the diode detector needs a bandwidth",
                    ));
                }
                Ok(Box::new(diode_receiver(config, *rc_s)?))
            }
        }
    }
}

impl fmt::Display for Detector {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.name())
    }
}

impl FromStr for Detector {
    type Err = Error;

    /// A mode's name (`am`, `sam`, `dsb`, `usb`, `lsb`, `isb`, `vsb`), `sam:upper`,
    /// `sam:lower`, `diode`, or `diode:<RC in µs>`.
    fn from_str(s: &str) -> Result<Self> {
        let s = s.trim();
        if let Some(side) = s.strip_prefix("sam:") {
            return match side.to_ascii_lowercase().as_str() {
                "upper" => Ok(Detector::SamSideband(Sideband::Upper)),
                "lower" => Ok(Detector::SamSideband(Sideband::Lower)),
                _ => Err(Error::parameter("detectors", s, "sam:upper or sam:lower")),
            };
        }
        if s.eq_ignore_ascii_case("diode") {
            return Ok(Detector::diode());
        }
        if let Some(us) = s.strip_prefix("diode:") {
            let rc_us: f64 = us.parse().map_err(|_| {
                Error::parameter("detectors", s, "diode:<RC in µs>, e.g. diode:100")
            })?;
            if !(rc_us.is_finite() && rc_us > 0.0) {
                return Err(Error::parameter("detectors", s, "RC must be positive"));
            }
            return Ok(Detector::Diode { rc_s: rc_us * 1e-6 });
        }
        let mode: Mode = s.parse().map_err(|_| {
            Error::parameter("detectors", s, format!("not a detector ({})", lab_names()))
        })?;
        let detector = Detector::Receiver(mode);
        detector.test_signal()?;
        Ok(detector)
    }
}

/// The lab's test signal for a transmission, where the lab has one.
fn lab_signal(transmission: Transmission) -> Option<TestSignal> {
    match transmission {
        Transmission::FullCarrier => Some(TestSignal::FullCarrier),
        Transmission::SuppressedCarrier => Some(TestSignal::SuppressedCarrier),
        Transmission::UpperSideband => Some(TestSignal::UpperSideband),
        Transmission::LowerSideband => Some(TestSignal::LowerSideband),
        // The tone in the upper sideband, measured on the upper channel.
        Transmission::IndependentSidebands => Some(TestSignal::UpperSideband),
        Transmission::Vestigial => Some(TestSignal::Vestigial),
    }
}

/// The detectors the lab can sweep: every mode of the table it has a test signal for, and
/// the diode.
pub fn lab_names() -> String {
    let mut names: Vec<&str> = MODES
        .iter()
        .filter(|m| lab_signal(m.transmission).is_some())
        .map(|m| m.name)
        .collect();
    names.extend(["sam:upper", "sam:lower", "diode"]);
    names.join(", ")
}

/// Parses a comma-separated detector list such as `am,sam,diode:100`.
pub fn parse_detectors(list: &str) -> Result<Vec<Detector>> {
    list.split(',')
        .filter(|s| !s.trim().is_empty())
        .map(str::parse)
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_round_trip() {
        for name in [
            "am",
            "sam",
            "dsb",
            "usb",
            "lsb",
            "isb",
            "vsb",
            "sam:upper",
            "sam:lower",
            "diode",
            "diode:200",
        ] {
            let d: Detector = name.parse().unwrap();
            assert_eq!(d.name(), name);
        }
        assert!("sam:middle".parse::<Detector>().is_err());
        assert!("diode:-3".parse::<Detector>().is_err());
        assert!("fm".parse::<Detector>().is_err());
        assert_eq!(parse_detectors("am, diode").unwrap().len(), 2);
    }

    #[test]
    fn signals_and_theory_per_detector() {
        let am = Detector::Receiver(Mode::Am);
        assert_eq!(am.test_signal().unwrap(), TestSignal::FullCarrier);
        assert!((am.figure_of_merit(1.0, 5000.0) - 1.0 / 3.0).abs() < 1e-12);
        let usb = Detector::Receiver(Mode::Usb);
        assert_eq!(usb.test_signal().unwrap(), TestSignal::UpperSideband);
        assert_eq!(usb.figure_of_merit(0.5, 5000.0), 1.0);
        // One sideband of full-carrier AM: half the two-sideband figure (−3 dB).
        let one = Detector::SamSideband(Sideband::Upper).figure_of_merit(0.5, 5000.0);
        assert!((one - am.figure_of_merit(0.5, 5000.0) / 2.0).abs() < 1e-12);
        assert_eq!(Detector::Receiver(Mode::Isb).audio_channel(), 1);
        assert!(!Detector::Receiver(Mode::Vsb).has_carrier());
        assert!(!Detector::Receiver(Mode::Dsb).has_carrier());
        assert!(Detector::diode().has_carrier());
    }
}

//! The receive modes of the AM family and their ITU emission designators.

use serde::Serialize;
use std::fmt;
use std::str::FromStr;

/// A receive mode.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize)]
#[serde(rename_all = "lowercase")]
#[non_exhaustive]
pub enum Mode {
    /// Full-carrier double-sideband AM by envelope detection (A3E).
    Am,
    /// Full-carrier AM by synchronous (PLL) detection, both or one sideband (A3E).
    Sam,
    /// Suppressed-carrier double sideband, Costas-loop detection.
    Dsb,
    /// Upper sideband (J3E, R3E, H3E).
    Usb,
    /// Lower sideband (J3E, R3E, H3E).
    Lsb,
    /// Independent sidebands, stereo out (B8E).
    Isb,
    /// Vestigial sideband (C3F).
    Vsb,
}

impl Mode {
    /// Every mode, in the order the help lists them.
    pub const ALL: [Mode; 7] = [
        Mode::Am,
        Mode::Sam,
        Mode::Dsb,
        Mode::Usb,
        Mode::Lsb,
        Mode::Isb,
        Mode::Vsb,
    ];

    /// The name used on the command line and in reports.
    pub fn name(self) -> &'static str {
        match self {
            Mode::Am => "am",
            Mode::Sam => "sam",
            Mode::Dsb => "dsb",
            Mode::Usb => "usb",
            Mode::Lsb => "lsb",
            Mode::Isb => "isb",
            Mode::Vsb => "vsb",
        }
    }

    /// The usual ITU emission designator class (ITU Radio Regulations, Appendix 1), for the
    /// common case of analogue telephony; SSB's carrier variants are listed together.
    pub fn emission(self) -> &'static str {
        match self {
            Mode::Am | Mode::Sam => "A3E",
            Mode::Dsb => "A3E (suppressed carrier)",
            Mode::Usb | Mode::Lsb => "J3E/R3E/H3E",
            Mode::Isb => "B8E",
            Mode::Vsb => "C3F",
        }
    }
}

impl fmt::Display for Mode {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for Mode {
    type Err = String;

    fn from_str(s: &str) -> Result<Self, Self::Err> {
        Mode::ALL
            .into_iter()
            .find(|m| m.name().eq_ignore_ascii_case(s))
            .ok_or_else(|| format!("unknown mode '{s}' (am, sam, dsb, usb, lsb, isb, vsb)"))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_round_trip() {
        for mode in Mode::ALL {
            assert_eq!(mode.name().parse::<Mode>(), Ok(mode));
        }
        assert!("fm".parse::<Mode>().is_err());
    }
}

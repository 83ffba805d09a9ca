//! The lab's channel condition: what happens to the test signal between transmitter and
//! receiver besides the white noise that sets the channel SNR — Watterson fading
//! ([`WattersonChannel`]) and impulsive noise ([`ImpulseNoise`]) from the channel simulator.
//!
//! Order: the clean test signal is faded first (the standard conditions' paths have a mean
//! power gain of 1, so the channel SNR is the mean SNR over the fading), then the white noise
//! and the impulses are added. The fading is seeded per (point, trial) and not per detector,
//! so two detectors fed the same test signal see the same channel in the same trial: their
//! difference can be read trial by trial (a paired comparison).

use crate::block::process_to_vec;
use crate::channel::{HfCondition, ImpulseNoise, WattersonChannel};
use crate::{Complex32, Error, Result};
use std::fmt;

/// Poisson bursts of Gaussian noise added to every trial.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Impulses {
    /// Mean bursts per second.
    pub rate_hz: f64,
    /// Length of each burst, s.
    pub width_s: f64,
    /// Noise power during a burst over the test signal's mean power, dB.
    pub level_db: f64,
}

impl Impulses {
    fn validate(&self) -> Result<()> {
        if !(self.rate_hz.is_finite() && self.rate_hz > 0.0 && self.rate_hz <= 1e5) {
            return Err(Error::parameter(
                "impulse_rate_hz",
                self.rate_hz,
                "must be in (0, 100000] bursts per second",
            ));
        }
        if !(self.width_s.is_finite() && self.width_s > 0.0 && self.width_s <= 1.0) {
            return Err(Error::parameter(
                "impulse_width_s",
                self.width_s,
                "must be in (0, 1] s",
            ));
        }
        if !(self.level_db.is_finite() && self.level_db.abs() <= 100.0) {
            return Err(Error::parameter(
                "impulse_level_db",
                self.level_db,
                "must be within ±100 dB of the signal",
            ));
        }
        Ok(())
    }
}

/// The channel every trial of a sweep passes through, besides its white noise.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct ChannelCondition {
    /// A standard HF fading condition (two Watterson paths), or none.
    pub fading: Option<HfCondition>,
    /// Impulsive noise, or none.
    pub impulses: Option<Impulses>,
}

impl ChannelCondition {
    /// White noise only.
    pub const NONE: ChannelCondition = ChannelCondition {
        fading: None,
        impulses: None,
    };

    /// True for white noise only.
    pub fn is_none(&self) -> bool {
        self.fading.is_none() && self.impulses.is_none()
    }

    /// Checks the impulse settings.
    pub fn validate(&self) -> Result<()> {
        self.impulses.as_ref().map_or(Ok(()), Impulses::validate)
    }

    /// Parses a fading condition's name ([`HfCondition::name`]) or `none`.
    pub fn parse_fading(name: &str) -> Result<Option<HfCondition>> {
        let name = name.trim().to_ascii_lowercase();
        if name == "none" {
            return Ok(None);
        }
        HfCondition::parse(&name).map(Some).ok_or_else(|| {
            let names: Vec<&str> = HfCondition::ALL.iter().map(|c| c.name()).collect();
            Error::parameter(
                "fading",
                name,
                format!("not a fading condition (none, {})", names.join(", ")),
            )
        })
    }

    /// Applies the condition to the clean `signal` (mean power `signal_power`) at `rate`:
    /// the fading, seeded by `seed`; the impulses are added by [`add_impulses`](Self::add_impulses).
    pub fn fade(&self, signal: Vec<Complex32>, rate: f64, seed: u64) -> Result<Vec<Complex32>> {
        match self.fading {
            None => Ok(signal),
            Some(condition) => {
                let mut channel = WattersonChannel::from_condition(condition, rate, seed)?;
                Ok(process_to_vec(&mut channel, &signal))
            }
        }
    }

    /// Adds the impulses (seeded by `seed`) to `iq`, their burst power set against
    /// `signal_power`.
    pub fn add_impulses(
        &self,
        iq: &mut [Complex32],
        signal_power: f64,
        rate: f64,
        seed: u64,
    ) -> Result<()> {
        if let Some(imp) = self.impulses {
            imp.validate()?;
            let power = signal_power * 10f64.powf(imp.level_db / 10.0);
            let mut noise = ImpulseNoise::new(imp.rate_hz, imp.width_s, power, rate, seed)?;
            let mut out = vec![Complex32::default(); iq.len()];
            crate::block::Block::process(&mut noise, iq, &mut out);
            iq.copy_from_slice(&out);
        }
        Ok(())
    }
}

impl fmt::Display for ChannelCondition {
    /// `none`, `good`, `impulses 20/s 40 µs +30 dB`, or both joined by ` + `.
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let mut parts = Vec::new();
        if let Some(c) = self.fading {
            parts.push(format!("{} fading", c.name()));
        }
        if let Some(i) = self.impulses {
            parts.push(format!(
                "impulses {}/s {} µs {:+} dB",
                i.rate_hz,
                i.width_s * 1e6,
                i.level_db
            ));
        }
        if parts.is_empty() {
            f.write_str("none")
        } else {
            f.write_str(&parts.join(" + "))
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_and_validation() {
        assert_eq!(
            ChannelCondition::parse_fading("Good").unwrap(),
            Some(HfCondition::Good)
        );
        assert_eq!(ChannelCondition::parse_fading("none").unwrap(), None);
        assert!(ChannelCondition::parse_fading("stormy").is_err());
        let bad = ChannelCondition {
            fading: None,
            impulses: Some(Impulses {
                rate_hz: -1.0,
                width_s: 40e-6,
                level_db: 30.0,
            }),
        };
        assert!(bad.validate().is_err());
        assert_eq!(ChannelCondition::NONE.to_string(), "none");
    }

    #[test]
    fn fading_keeps_the_mean_power() {
        // The standard conditions' two paths share the power (a_p² = 1/2 each; Watterson et
        // al., 1970): over 40 s of a flutter channel (10 Hz spread, ≈ 400 independent fades)
        // the mean power gain is 1 within ±10 %.
        let x = vec![Complex32::new(1.0, 0.0); 400_000];
        let c = ChannelCondition {
            fading: Some(HfCondition::Flutter),
            impulses: None,
        };
        let y = c.fade(x, 10e3, 7).unwrap();
        let p = y.iter().map(|z| f64::from(z.norm_sqr())).sum::<f64>() / y.len() as f64;
        assert!((p - 1.0).abs() < 0.1, "{p}");
    }

    #[test]
    fn impulses_add_the_set_burst_power() {
        // Occupancy 1 − e^{−λT} (Poisson coverage); λ = 20/s, T = 1 ms: 0.0198. Mean added
        // power = occupancy · P_burst; over 100 s ≈ 2000 bursts, ±10 %.
        let c = ChannelCondition {
            fading: None,
            impulses: Some(Impulses {
                rate_hz: 20.0,
                width_s: 1e-3,
                level_db: 10.0,
            }),
        };
        let mut x = vec![Complex32::default(); 1_000_000];
        c.add_impulses(&mut x, 0.1, 10e3, 3).unwrap();
        let p = x.iter().map(|z| f64::from(z.norm_sqr())).sum::<f64>() / x.len() as f64;
        let want = (1.0 - (-0.02f64).exp()) * 1.0;
        assert!((p / want - 1.0).abs() < 0.1, "{p} vs {want}");
    }
}

//! Automatic gain control with attack, decay and hang time, or a fixed gain.

use crate::block::SampleBlock;
use crate::{Error, Result};

/// How an [`Agc`] sets its gain.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum AgcSettings {
    /// Track the signal's peak level and scale it to `target`.
    Automatic {
        /// Time for the level detector to rise by 1 − 1/e towards a louder signal, in s.
        attack_s: f64,
        /// Time for it to fall by 1 − 1/e towards a quieter signal once the hang is over, in s.
        decay_s: f64,
        /// How long the gain is held after the level drops, before decay starts, in s.
        hang_s: f64,
        /// Output peak level the AGC aims for.
        target: f64,
        /// Largest gain, in dB, so that noise between words is not pulled up without bound.
        max_gain_db: f64,
    },
    /// A fixed gain in dB.
    Fixed {
        /// Gain in dB.
        gain_db: f64,
    },
}

impl AgcSettings {
    /// Speech on SSB and DSB: fast attack, hang, slowish decay (common practice, no source:
    /// 2 ms attack, 500 ms hang, 200 ms decay).
    pub const SPEECH: AgcSettings = AgcSettings::Automatic {
        attack_s: 0.002,
        decay_s: 0.2,
        hang_s: 0.5,
        target: 0.5,
        max_gain_db: 60.0,
    };
    /// Broadcast and carrier modes: slow, so programme dynamics survive (common practice, no
    /// source: 20 ms attack, 1 s hang, 1 s decay).
    pub const SLOW: AgcSettings = AgcSettings::Automatic {
        attack_s: 0.02,
        decay_s: 1.0,
        hang_s: 1.0,
        target: 0.5,
        max_gain_db: 40.0,
    };
    /// Unity gain: the AGC does nothing.
    pub const OFF: AgcSettings = AgcSettings::Fixed { gain_db: 0.0 };
}

/// The largest output magnitude an automatic gain control lets out (full scale).
pub const FULL_SCALE: f32 = 1.0;

/// A peak-tracking AGC on real samples: y = g·x with g = target / level, where the level
/// detector rises with the attack time constant, holds for the hang time and then decays.
/// A sample that would leave above [`FULL_SCALE`] raises the level to its own magnitude at once
/// (instant attack on overload), so the output never overshoots full scale, from the first
/// sample on.
#[derive(Debug, Clone)]
pub struct Agc {
    settings: AgcSettings,
    attack: f32,
    decay: f32,
    hang_samples: u32,
    hang_left: u32,
    level: f32,
    target: f32,
    min_level: f32,
    fixed_gain: f32,
}

impl Agc {
    /// An AGC at `sample_rate` with `settings`; negative or non-finite times are errors.
    ///
    /// ```
    /// use amrx::dsp::{Agc, AgcSettings};
    /// let agc = Agc::new(AgcSettings::SPEECH, 48_000.0).unwrap();
    /// assert!(agc.gain() > 1.0); // starts at full gain, quiet
    /// ```
    pub fn new(settings: AgcSettings, sample_rate: f64) -> Result<Self> {
        if !(sample_rate.is_finite() && sample_rate > 0.0) {
            return Err(Error::parameter(
                "AGC sample rate",
                sample_rate,
                "must be positive",
            ));
        }
        let mut agc = Agc {
            settings,
            attack: 1.0,
            decay: 1.0,
            hang_samples: 0,
            hang_left: 0,
            level: 0.0,
            target: 1.0,
            min_level: 0.0,
            fixed_gain: 1.0,
        };
        match settings {
            AgcSettings::Automatic {
                attack_s,
                decay_s,
                hang_s,
                target,
                max_gain_db,
            } => {
                for (name, value) in [
                    ("agc.attack_s", attack_s),
                    ("agc.decay_s", decay_s),
                    ("agc.hang_s", hang_s),
                ] {
                    if !(value.is_finite() && value >= 0.0) {
                        return Err(Error::parameter(
                            name,
                            value,
                            "must be a time of 0 s or more",
                        ));
                    }
                }
                if !(target.is_finite() && target > 0.0 && max_gain_db.is_finite()) {
                    return Err(Error::parameter("agc.target", target, "must be positive"));
                }
                agc.attack = one_pole(attack_s, sample_rate);
                agc.decay = one_pole(decay_s, sample_rate);
                agc.hang_samples = (hang_s * sample_rate).round() as u32;
                agc.target = target as f32;
                agc.min_level = (target / 10f64.powf(max_gain_db / 20.0)) as f32;
                agc.level = agc.min_level;
            }
            AgcSettings::Fixed { gain_db } => {
                if !gain_db.is_finite() || gain_db.abs() > 200.0 {
                    return Err(Error::parameter(
                        "agc.gain_db",
                        gain_db,
                        "must be a finite gain within ±200 dB",
                    ));
                }
                agc.fixed_gain = 10f64.powf(gain_db / 20.0) as f32;
            }
        }
        Ok(agc)
    }

    /// One sample.
    #[inline]
    pub fn next_sample(&mut self, x: f32) -> f32 {
        if let AgcSettings::Fixed { .. } = self.settings {
            return x * self.fixed_gain;
        }
        let magnitude = x.abs();
        if magnitude >= self.level {
            // At or above the level: attack, and the hang starts again.
            self.level += self.attack * (magnitude - self.level);
            self.hang_left = self.hang_samples;
        } else if self.hang_left > 0 {
            self.hang_left -= 1;
        } else {
            self.level += self.decay * (magnitude - self.level);
        }
        // Overload: a peak the attack has not caught up with (the first samples, where the
        // level starts at its floor, or a sudden step up) that would leave above full scale
        // sets the level to itself at once, so it leaves at the target. Jumping to the target
        // rather than to full scale keeps the gain steady afterwards: a gain falling from full
        // scale to the target would turn into a DC step the audio stage's DC blocker swings
        // past full scale (measured: 1.34 on usb).
        self.level = self.level.max(self.min_level);
        if magnitude * self.target > FULL_SCALE * self.level {
            self.level = magnitude;
        }
        x * self.target / self.level
    }

    /// The gain now (linear).
    pub fn gain(&self) -> f32 {
        match self.settings {
            AgcSettings::Fixed { .. } => self.fixed_gain,
            AgcSettings::Automatic { .. } => self.target / self.level.max(f32::MIN_POSITIVE),
        }
    }

    /// The settings.
    pub fn settings(&self) -> AgcSettings {
        self.settings
    }
}

/// The per-sample coefficient of a one-pole follower with time constant `tau_s`
/// (1 − e^(−1/(τ·fs)); τ = 0 follows at once).
fn one_pole(tau_s: f64, sample_rate: f64) -> f32 {
    if tau_s == 0.0 {
        1.0
    } else {
        (1.0 - (-1.0 / (tau_s * sample_rate)).exp()) as f32
    }
}

impl SampleBlock for Agc {
    type In = f32;
    type Out = f32;

    #[inline]
    fn next(&mut self, x: f32) -> f32 {
        self.next_sample(x)
    }

    /// 0: the signal path is y = g·x with no filter; the gain's own lag is not a delay of
    /// the signal.
    fn sample_delay(&self) -> f64 {
        0.0
    }

    fn reset_state(&mut self) {
        self.hang_left = 0;
        self.level = self.min_level;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::check::{check_block, BlockCheck};
    use crate::block::process_to_vec;

    const FS: f64 = 8000.0;

    fn tone(amplitude: f32, len: usize) -> Vec<f32> {
        (0..len)
            .map(|n| amplitude * (n as f32 * 0.3).sin())
            .collect()
    }

    fn peak(x: &[f32]) -> f32 {
        x.iter().map(|v| v.abs()).fold(0.0, f32::max)
    }

    #[test]
    fn levels_differ_by_40_db_come_out_alike() {
        for amplitude in [0.005f32, 0.05, 0.5] {
            let mut agc = Agc::new(AgcSettings::SPEECH, FS).unwrap();
            let out = process_to_vec(&mut agc, &tone(amplitude, 8000));
            let p = peak(&out[4000..]);
            assert!((p - 0.5).abs() < 0.02, "input {amplitude}: output peak {p}");
        }
    }

    /// Attack: after a 5 dB step up (small enough not to reach full scale), the level detector
    /// covers 1 − 1/e of the step in one attack time constant (the one-pole definition).
    #[test]
    fn attack_time_constant() {
        let AgcSettings::Automatic { attack_s, .. } = AgcSettings::SLOW else {
            unreachable!()
        };
        let mut agc = Agc::new(AgcSettings::SLOW, FS).unwrap();
        process_to_vec(&mut agc, &vec![0.05f32; 8000]);
        let before = agc.level;
        let steps = (attack_s * FS).round() as usize;
        process_to_vec(&mut agc, &vec![0.09f32; steps]);
        let fraction = (agc.level - before) / (0.09 - before);
        assert!(
            (fraction - (1.0 - (-1.0f32).exp())).abs() < 0.01,
            "{fraction}"
        );
    }

    /// Hang: after a drop, the gain holds for the hang time, then decays.
    #[test]
    fn hang_then_decay() {
        let mut agc = Agc::new(AgcSettings::SPEECH, FS).unwrap();
        process_to_vec(&mut agc, &vec![0.5f32; 4000]);
        let held = agc.gain();
        process_to_vec(&mut agc, &vec![0.01f32; 3900]); // 0.4875 s < 0.5 s hang
        assert_eq!(agc.gain(), held);
        process_to_vec(&mut agc, &vec![0.01f32; 3200]); // 0.4 s of decay: two time constants
        assert!(
            agc.gain() > 5.0 * held,
            "gain {} vs held {held}",
            agc.gain()
        );
    }

    /// A loud start and a 40 dB step up never leave above full scale.
    #[test]
    fn no_overshoot_from_the_first_sample() {
        for settings in [AgcSettings::SPEECH, AgcSettings::SLOW] {
            let mut agc = Agc::new(settings, FS).unwrap();
            let mut x = tone(0.8, 4000);
            x.extend(tone(0.008, 8000));
            x.extend(tone(0.8, 4000));
            let out = process_to_vec(&mut agc, &x);
            assert!(peak(&out) <= FULL_SCALE, "{}", peak(&out));
            assert!(peak(&out[..100]) > 0.5 * FULL_SCALE); // and not silenced either
        }
    }

    #[test]
    fn gain_is_capped() {
        let mut agc = Agc::new(AgcSettings::SPEECH, FS).unwrap();
        process_to_vec(&mut agc, &vec![0.0f32; 16000]);
        assert!((agc.gain() - 1000.0).abs() < 1.0, "{}", agc.gain()); // 60 dB
    }

    #[test]
    fn fixed_gain() {
        let mut agc = Agc::new(AgcSettings::Fixed { gain_db: 20.0 }, FS).unwrap();
        let out = process_to_vec(&mut agc, &[0.01f32, -0.02]);
        // 10^(20/20) = 10, to f32 rounding.
        assert!(
            (out[0] - 0.1).abs() < 1e-7 && (out[1] + 0.2).abs() < 1e-7,
            "{out:?}"
        );
    }

    /// No delay probe: the gain depends on the level, so the block is not linear, and its
    /// signal path has no filter (delay 0). The input steps up 26 dB half-way, so attack,
    /// hang and decay all run across the splits.
    #[test]
    fn meets_the_block_contract() {
        let mut x = tone(0.02, 6000);
        x.extend(tone(0.4, 6000));
        x.extend(tone(0.01, 6000));
        let make = || Agc::new(AgcSettings::SPEECH, FS).unwrap();
        check_block(&BlockCheck::new(&make, &x));
        let make = || Agc::new(AgcSettings::Fixed { gain_db: -6.0 }, FS).unwrap();
        check_block(&BlockCheck::new(&make, &x));
    }

    #[test]
    fn bad_settings_are_errors() {
        let bad = AgcSettings::Automatic {
            attack_s: -1.0,
            decay_s: 0.1,
            hang_s: 0.0,
            target: 0.5,
            max_gain_db: 40.0,
        };
        assert!(Agc::new(bad, FS).is_err());
        assert!(Agc::new(AgcSettings::Fixed { gain_db: f64::NAN }, FS).is_err());
    }
}

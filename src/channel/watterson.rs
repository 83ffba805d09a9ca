//! HF multipath fading by the Watterson model: independent Rayleigh paths with Gaussian
//! Doppler spectra (C. C. Watterson, J. R. Juroshek, W. D. Bensema, "Experimental
//! confirmation of an HF channel model", IEEE Trans. Commun. Technol., 1970).
//!
//! y\[n\] = Σ_p a_p·g_p\[n\]·e^{j2πν_p n/fs}·x[n − d_p], with d_p = round(τ_p·fs) an exact whole
//! number of samples, g_p a [`TapGain`] of unit power and Doppler σ_p (spread 2σ_p), ν_p a
//! Doppler shift and a_p² the path's share of the power. The standard conditions use two
//! equal-power paths (a_p² = 1/2, so the mean channel power gain is 1), delays 0 and τ.

use super::tap_gain::TapGain;
use crate::block::SampleBlock;
use crate::dsp::Rotator;
use crate::{Complex32, Error, Result};
use num_complex::Complex64;

/// Tap rate as a multiple of σ (see [`TapGain`]).
const TAP_RATE_PER_SIGMA: f64 = 64.0;

/// A standard HF channel condition: differential delay and Doppler spread of two paths.
///
/// Values: ITU-R F.520 (CCIR Rec. 520) good 0.5 ms / 0.1 Hz, moderate 1 ms / 0.5 Hz, poor
/// 2 ms / 1 Hz, flutter 0.5 ms / 10 Hz — as the issue gives them and as remembered; not
/// verified against the Recommendation here. ITU-R F.1487 sets: all from memory, not verified.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum HfCondition {
    /// F.520 good: 0.5 ms, 0.1 Hz.
    Good,
    /// F.520 moderate: 1 ms, 0.5 Hz.
    Moderate,
    /// F.520 poor: 2 ms, 1 Hz.
    Poor,
    /// F.520 flutter: 0.5 ms, 10 Hz (from memory).
    Flutter,
    /// F.1487 low latitude quiet: 0.5 ms, 0.5 Hz (from memory).
    LowLatitudeQuiet,
    /// F.1487 low latitude moderate: 2 ms, 1.5 Hz (from memory).
    LowLatitudeModerate,
    /// F.1487 low latitude disturbed: 6 ms, 10 Hz (from memory).
    LowLatitudeDisturbed,
    /// F.1487 mid-latitude quiet: 0.5 ms, 0.1 Hz (from memory).
    MidLatitudeQuiet,
    /// F.1487 mid-latitude moderate: 1 ms, 0.5 Hz (from memory).
    MidLatitudeModerate,
    /// F.1487 mid-latitude disturbed: 2 ms, 1 Hz (from memory).
    MidLatitudeDisturbed,
    /// F.1487 mid-latitude disturbed near-vertical incidence: 7 ms, 1 Hz (from memory).
    MidLatitudeDisturbedNvis,
    /// F.1487 high latitude quiet: 1 ms, 0.5 Hz (from memory).
    HighLatitudeQuiet,
    /// F.1487 high latitude moderate: 3 ms, 10 Hz (from memory).
    HighLatitudeModerate,
    /// F.1487 high latitude disturbed: 7 ms, 30 Hz (from memory).
    HighLatitudeDisturbed,
}

impl HfCondition {
    /// Every condition.
    pub const ALL: [HfCondition; 14] = [
        HfCondition::Good,
        HfCondition::Moderate,
        HfCondition::Poor,
        HfCondition::Flutter,
        HfCondition::LowLatitudeQuiet,
        HfCondition::LowLatitudeModerate,
        HfCondition::LowLatitudeDisturbed,
        HfCondition::MidLatitudeQuiet,
        HfCondition::MidLatitudeModerate,
        HfCondition::MidLatitudeDisturbed,
        HfCondition::MidLatitudeDisturbedNvis,
        HfCondition::HighLatitudeQuiet,
        HfCondition::HighLatitudeModerate,
        HfCondition::HighLatitudeDisturbed,
    ];

    /// (differential delay in s, Doppler spread 2σ in Hz).
    pub fn delay_and_spread(self) -> (f64, f64) {
        match self {
            HfCondition::Good => (0.5e-3, 0.1),
            HfCondition::Moderate => (1e-3, 0.5),
            HfCondition::Poor => (2e-3, 1.0),
            HfCondition::Flutter => (0.5e-3, 10.0),
            HfCondition::LowLatitudeQuiet => (0.5e-3, 0.5),
            HfCondition::LowLatitudeModerate => (2e-3, 1.5),
            HfCondition::LowLatitudeDisturbed => (6e-3, 10.0),
            HfCondition::MidLatitudeQuiet => (0.5e-3, 0.1),
            HfCondition::MidLatitudeModerate => (1e-3, 0.5),
            HfCondition::MidLatitudeDisturbed => (2e-3, 1.0),
            HfCondition::MidLatitudeDisturbedNvis => (7e-3, 1.0),
            HfCondition::HighLatitudeQuiet => (1e-3, 0.5),
            HfCondition::HighLatitudeModerate => (3e-3, 10.0),
            HfCondition::HighLatitudeDisturbed => (7e-3, 30.0),
        }
    }

    /// The condition's name in lower-case words joined by '-', e.g. `mid-latitude-quiet`.
    pub fn name(self) -> &'static str {
        match self {
            HfCondition::Good => "good",
            HfCondition::Moderate => "moderate",
            HfCondition::Poor => "poor",
            HfCondition::Flutter => "flutter",
            HfCondition::LowLatitudeQuiet => "low-latitude-quiet",
            HfCondition::LowLatitudeModerate => "low-latitude-moderate",
            HfCondition::LowLatitudeDisturbed => "low-latitude-disturbed",
            HfCondition::MidLatitudeQuiet => "mid-latitude-quiet",
            HfCondition::MidLatitudeModerate => "mid-latitude-moderate",
            HfCondition::MidLatitudeDisturbed => "mid-latitude-disturbed",
            HfCondition::MidLatitudeDisturbedNvis => "mid-latitude-disturbed-nvis",
            HfCondition::HighLatitudeQuiet => "high-latitude-quiet",
            HfCondition::HighLatitudeModerate => "high-latitude-moderate",
            HfCondition::HighLatitudeDisturbed => "high-latitude-disturbed",
        }
    }

    /// Parses [`name`](Self::name).
    pub fn parse(name: &str) -> Option<Self> {
        Self::ALL.into_iter().find(|c| c.name() == name)
    }

    /// Its two equal-power paths.
    pub fn paths(self) -> [PathSpec; 2] {
        let (delay, spread) = self.delay_and_spread();
        let path = |delay_s| PathSpec {
            delay_s,
            power: 0.5,
            spread_hz: spread,
            shift_hz: 0.0,
        };
        [path(0.0), path(delay)]
    }
}

/// One path of the model.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PathSpec {
    /// Delay, s (rounded to a whole sample).
    pub delay_s: f64,
    /// Share of the mean power a_p².
    pub power: f64,
    /// Doppler spread 2σ, Hz (0: a fixed path of gain 1).
    pub spread_hz: f64,
    /// Doppler shift, Hz.
    pub shift_hz: f64,
}

struct Path {
    delay: usize,
    amplitude: f64,
    gain: TapGain,
    shift: Rotator,
}

/// The multipath fading channel.
pub struct WattersonChannel {
    paths: Vec<Path>,
    specs: Vec<PathSpec>,
    sample_rate: f64,
    seed: u64,
    delay_line: Vec<Complex64>,
    pos: usize,
}

impl std::fmt::Debug for WattersonChannel {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("WattersonChannel")
            .field("paths", &self.specs)
            .finish_non_exhaustive()
    }
}

impl WattersonChannel {
    /// A channel of the standard `condition` at `sample_rate`, from `seed`.
    ///
    /// ```
    /// use amrx::channel::{HfCondition, WattersonChannel};
    /// let ch = WattersonChannel::from_condition(HfCondition::Moderate, 48e3, 1).unwrap();
    /// assert_eq!(ch.path_delays(), vec![0, 48]);
    /// ```
    pub fn from_condition(condition: HfCondition, sample_rate: f64, seed: u64) -> Result<Self> {
        Self::new(&condition.paths(), sample_rate, seed)
    }

    /// A channel of any paths (at least one; delays ≥ 0 and below 10 s; finite values).
    pub fn new(paths: &[PathSpec], sample_rate: f64, seed: u64) -> Result<Self> {
        if !(sample_rate.is_finite() && sample_rate > 0.0) {
            return Err(Error::parameter(
                "sample_rate",
                sample_rate,
                "must be positive and finite",
            ));
        }
        if paths.is_empty() {
            return Err(Error::parameter(
                "fading paths",
                0,
                "need at least one path",
            ));
        }
        let built = paths
            .iter()
            .enumerate()
            .map(|(i, p)| build_path(p, sample_rate, seed.wrapping_add(0x1000 * (i as u64 + 1))))
            .collect::<Result<Vec<_>>>()?;
        let longest = built.iter().map(|p| p.delay).max().unwrap_or(0);
        Ok(WattersonChannel {
            paths: built,
            specs: paths.to_vec(),
            sample_rate,
            seed,
            delay_line: vec![Complex64::default(); longest + 1],
            pos: 0,
        })
    }

    /// Each path's delay in samples.
    pub fn path_delays(&self) -> Vec<usize> {
        self.paths.iter().map(|p| p.delay).collect()
    }
}

fn build_path(p: &PathSpec, fs: f64, seed: u64) -> Result<Path> {
    let ok = p.delay_s.is_finite()
        && (0.0..10.0).contains(&p.delay_s)
        && p.power.is_finite()
        && p.power >= 0.0
        && p.shift_hz.is_finite();
    if !ok {
        return Err(Error::parameter(
            "fading path",
            format!("{p:?}"),
            "delay in [0, 10) s, power ≥ 0, finite shift",
        ));
    }
    let sigma = p.spread_hz / 2.0;
    let (rate, factor) = if sigma > 0.0 {
        let factor = ((fs / (TAP_RATE_PER_SIGMA * sigma)).floor() as usize).max(1);
        (fs / factor as f64, factor)
    } else {
        (fs, 1)
    };
    Ok(Path {
        delay: (p.delay_s * fs).round() as usize,
        amplitude: p.power.sqrt(),
        gain: TapGain::new(sigma, rate, factor, seed)?,
        shift: Rotator::new(p.shift_hz, fs)?,
    })
}

impl SampleBlock for WattersonChannel {
    type In = Complex32;
    type Out = Complex32;

    #[inline]
    fn next(&mut self, x: Complex32) -> Complex32 {
        let x = if x.re.is_finite() && x.im.is_finite() {
            x
        } else {
            Complex32::default()
        };
        let len = self.delay_line.len();
        self.delay_line[self.pos] = Complex64::new(f64::from(x.re), f64::from(x.im));
        let mut sum = Complex64::default();
        for path in &mut self.paths {
            let delayed = self.delay_line[(self.pos + len - path.delay) % len];
            sum += delayed * path.gain.next_sample() * path.shift.next_sample() * path.amplitude;
        }
        self.pos = (self.pos + 1) % len;
        Complex32::new(sum.re as f32, sum.im as f32)
    }

    /// 0: the first path arrives undelayed; later paths are echoes, not a delay of the
    /// signal.
    fn sample_delay(&self) -> f64 {
        0.0
    }

    fn reset_state(&mut self) {
        if let Ok(fresh) = WattersonChannel::new(&self.specs, self.sample_rate, self.seed) {
            *self = fresh;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn path_delays_are_exact() {
        // An impulse comes out at 0 and at round(τ·fs) and nowhere else.
        let fs = 48e3;
        for c in [
            HfCondition::Good,
            HfCondition::Moderate,
            HfCondition::Poor,
            HfCondition::HighLatitudeDisturbed,
        ] {
            let mut ch = WattersonChannel::from_condition(c, fs, 3).unwrap();
            let mut x = vec![Complex32::default(); 1000];
            x[100] = Complex32::new(1.0, 0.0);
            let y = crate::block::process_to_vec(&mut ch, &x);
            let d = (c.delay_and_spread().0 * fs).round() as usize;
            let hits: Vec<usize> = (0..y.len()).filter(|&n| y[n].norm() > 0.0).collect();
            assert_eq!(hits, vec![100, 100 + d], "{c:?}");
        }
        assert!(HfCondition::ALL
            .iter()
            .all(|c| HfCondition::parse(c.name()) == Some(*c)));
    }

    /// No delay probe: a fading, time-varying channel; its first path arrives undelayed.
    #[test]
    fn meets_the_block_contract() {
        let x: Vec<Complex32> = (0..8000)
            .map(|n| Complex32::new((n as f32 * 0.1).sin(), 0.3))
            .collect();
        let make = || WattersonChannel::from_condition(HfCondition::Poor, 8e3, 2).unwrap();
        crate::block::check::check_block(&crate::block::check::BlockCheck::new(&make, &x));
    }
}

//! Costas loop for suppressed-carrier DSB: recovers the carrier's phase from the sidebands.

use super::loop_filter::LoopGains;
use super::pll::PllConfig;
use crate::block::SampleBlock;
use crate::{Complex32, Error, Result};
use std::f64::consts::{PI, TAU};

/// Lock when the averaged cos 2φ_err (I-arm minus Q-arm power over their sum) exceeds this;
/// on noise alone it stays within a few 1/√N_eff of zero (common practice, no source).
const LOCK_ON: f64 = 0.5;
const LOCK_OFF: f64 = 0.3;
/// The arm averages span about this many loop time constants 1/B_L (common practice, no source).
const ARM_AVERAGE_TIME_CONSTANTS: f64 = 8.0;

/// A second-order Costas loop (J. P. Costas, "Synchronous communications", Proc. IRE, 1956).
///
/// Phase detector: the product of the in-phase and quadrature arms, I·Q = ½·m²A²·sin 2φ_err,
/// normalised by the averaged in-phase power m²A² so that Kp = 1 rad/rad near lock whatever the
/// level. The detector is blind to the message's sign, so the loop has stable points at 0 and
/// 180°: the ambiguity is inherent and only flips the audio's polarity.
#[derive(Debug, Clone)]
pub struct CostasLoop {
    config: PllConfig,
    gains: LoopGains,
    nominal: f64,
    phase: f64,
    integrator: f64,
    alpha: f64,
    started: bool,
    i_power: f64,
    q_power: f64,
    /// Zero-started arm powers for the lock detector (the detector's seeded ones weigh the
    /// first sample like 1/α samples and declared lock at once), and samples seen.
    lock_i_power: f64,
    lock_q_power: f64,
    samples: u64,
    /// Samples before the lock detector may decide: one loop time constant 1/B_L.
    warm_up: u64,
    /// False until the NCO phase has been set from the first non-zero sample.
    aligned: bool,
    /// (1 − α)^samples: how much of the arm averages' weight is still missing.
    decay: f64,
    locked: bool,
}

impl CostasLoop {
    /// Builds the loop; bandwidth ≤ 0 or above half the rate, or damping ≤ 0, is an error.
    ///
    /// ```
    /// use amrx::sync::{CostasLoop, PllConfig};
    /// let costas = CostasLoop::new(PllConfig::new(48_000.0, 30.0)).unwrap();
    /// assert!(!costas.is_locked());
    /// ```
    pub fn new(config: PllConfig) -> Result<Self> {
        let gains =
            LoopGains::design_hz(config.loop_bandwidth_hz, config.damping, config.sample_rate)?;
        if !config.initial_frequency_hz.is_finite()
            || config.initial_frequency_hz.abs() >= 0.5 * config.sample_rate
        {
            return Err(Error::parameter(
                "initial_frequency_hz",
                config.initial_frequency_hz,
                "outside the loop's ±rate/2",
            ));
        }
        if let Some(corner) = config.carrier_filter_hz {
            return Err(Error::parameter(
                "carrier_filter_hz",
                corner,
                "the Costas loop has no carrier filter",
            ));
        }
        Ok(CostasLoop {
            nominal: TAU * config.initial_frequency_hz / config.sample_rate,
            gains,
            phase: 0.0,
            integrator: 0.0,
            alpha: (config.loop_bandwidth_hz / (ARM_AVERAGE_TIME_CONSTANTS * config.sample_rate))
                .min(1.0),
            started: false,
            i_power: 0.0,
            q_power: 0.0,
            lock_i_power: 0.0,
            lock_q_power: 0.0,
            samples: 0,
            warm_up: (config.sample_rate / config.loop_bandwidth_hz).ceil() as u64,
            locked: false,
            aligned: false,
            decay: 1.0,
            config,
        })
    }

    /// One sample: de-rotates `x` by the NCO, updates the loop, returns the de-rotated sample
    /// (the message is on its real part).
    #[inline]
    pub fn next_sample(&mut self, x: Complex32) -> Complex32 {
        if !self.aligned {
            self.align_to(x);
        }
        let (sin, cos) = self.phase.sin_cos();
        let y = x * Complex32::new(cos as f32, -(sin as f32));
        let (i, q) = (f64::from(y.re), f64::from(y.im));
        self.update_arms(i, q);
        let scale = self.detector_scale();
        let error = i * q / scale;
        self.integrator += self.gains.k2 * error;
        self.phase += self.nominal + self.gains.k1 * error + self.integrator;
        if self.phase.abs() > PI {
            self.phase -= TAU * (self.phase / TAU).round();
        }
        y
    }

    #[inline]
    fn update_arms(&mut self, i: f64, q: f64) {
        if !self.started {
            self.started = true;
            self.i_power = i * i + q * q;
            self.q_power = 0.0;
        } else {
            self.i_power += self.alpha * (i * i - self.i_power);
            self.q_power += self.alpha * (q * q - self.q_power);
        }
        self.decay *= 1.0 - self.alpha;
        self.lock_i_power += self.alpha * (i * i - self.lock_i_power);
        self.lock_q_power += self.alpha * (q * q - self.lock_q_power);
        self.samples += 1;
        let metric = self.lock_metric();
        self.locked = if self.locked {
            metric > LOCK_OFF
        } else {
            metric > LOCK_ON
        };
    }

    /// The in-phase power the detector divides by: the zero-started average corrected by the
    /// weight it has gathered (1 − (1 − α)^n), so that neither the front end's start-up transient
    /// nor a seeded first sample makes the loop gain huge for the first fraction of a second;
    /// never below a tenth of the total arm power.
    #[inline]
    fn detector_scale(&self) -> f64 {
        let weight = (1.0 - self.decay).max(f64::MIN_POSITIVE);
        let (i, q) = (self.lock_i_power / weight, self.lock_q_power / weight);
        i.max(0.1 * (i + q)).max(f64::MIN_POSITIVE)
    }

    /// The averaged cos 2φ_err: (I² − Q²)/(I² + Q²), near 1 when locked on a clean signal; 0
    /// until the averages span one loop time constant. The zero-started averages share one
    /// start-up bias, which cancels in the ratio.
    pub fn lock_metric(&self) -> f64 {
        let total = self.lock_i_power + self.lock_q_power;
        if self.samples >= self.warm_up && total > 0.0 {
            (self.lock_i_power - self.lock_q_power) / total
        } else {
            0.0
        }
    }

    /// The lock detector's verdict.
    pub fn is_locked(&self) -> bool {
        self.locked
    }

    /// Starts the NCO at the phase of the first non-zero sample, so the loop never begins near
    /// its unstable point 180° away, where it can hang for a long time before pulling in
    /// (Gardner, Phaselock Techniques, "hang-up"; common practice, no source for the remedy).
    #[cold]
    fn align_to(&mut self, x: Complex32) {
        if x.re != 0.0 || x.im != 0.0 {
            self.phase = f64::from(x.im).atan2(f64::from(x.re));
            self.aligned = true;
        }
    }

    /// The tracked carrier frequency in Hz.
    pub fn frequency_hz(&self) -> f64 {
        (self.nominal + self.integrator) * self.config.sample_rate / TAU
    }

    /// The NCO phase in radians, in [−π, π].
    pub fn phase(&self) -> f64 {
        self.phase
    }

    /// Sets the NCO phase (radians), which also stops the loop from aligning itself to its
    /// first sample: for starting from a known phase error.
    pub fn set_phase(&mut self, radians: f64) {
        self.phase = radians;
        self.aligned = true;
    }

    /// Moves the NCO to `frequency_hz` and clears the integrator.
    pub fn retune(&mut self, frequency_hz: f64) {
        self.nominal = TAU * frequency_hz / self.config.sample_rate;
        self.integrator = 0.0;
    }
}

impl SampleBlock for CostasLoop {
    type In = Complex32;
    type Out = Complex32;

    #[inline]
    fn next(&mut self, x: Complex32) -> Complex32 {
        self.next_sample(x)
    }

    /// 0: the output is the input de-rotated by the NCO, sample for sample; the loop adds
    /// no filter to the signal path.
    fn sample_delay(&self) -> f64 {
        0.0
    }

    fn reset_state(&mut self) {
        if let Ok(fresh) = CostasLoop::new(self.config) {
            *self = fresh;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::check::{check_block, BlockCheck};
    use crate::block::process_to_vec;

    const FS: f64 = 48_000.0;

    /// DSB-SC: m(t)·e^{j(2π f t + φ0)} with a two-tone message.
    fn dsb(freq_hz: f64, phase0: f64, len: usize) -> Vec<Complex32> {
        (0..len)
            .map(|n| {
                let t = n as f64 / FS;
                let m = (TAU * 700.0 * t).cos() + 0.5 * (TAU * 1900.0 * t).sin();
                Complex32::from_polar(m as f32, (phase0 + TAU * freq_hz * t) as f32)
            })
            .collect()
    }

    fn settled_phase_error(start_deg: f64) -> f64 {
        let x = dsb(0.0, start_deg.to_radians(), 48_000);
        let mut costas = CostasLoop::new(PllConfig::new(FS, 30.0)).unwrap();
        costas.set_phase(0.0); // the loop starts `start_deg` away from the carrier
        process_to_vec(&mut costas, &x);
        assert!(costas.is_locked());
        let error = (start_deg.to_radians() - costas.phase()).to_degrees();
        (error + 180.0).rem_euclid(360.0) - 180.0
    }

    /// The 180° ambiguity: from 10° the loop settles at 0°, from 170° at 180° (inverted audio).
    #[test]
    fn settles_at_zero_or_half_turn() {
        let near_zero = settled_phase_error(10.0);
        assert!(near_zero.abs() < 2.0, "from 10°: {near_zero:.2}°");
        let near_half_turn = settled_phase_error(170.0);
        assert!(
            (near_half_turn.abs() - 180.0).abs() < 2.0,
            "from 170°: {near_half_turn:.2}°"
        );
    }

    #[test]
    fn tracks_a_carrier_error_of_tens_of_hertz() {
        let x = dsb(35.0, 0.4, 96_000);
        let mut costas = CostasLoop::new(PllConfig::new(FS, 60.0)).unwrap();
        process_to_vec(&mut costas, &x);
        assert!(costas.is_locked());
        assert!(
            (costas.frequency_hz() - 35.0).abs() < 0.05,
            "{}",
            costas.frequency_hz()
        );
    }

    /// Regression: the lock detector used to start from the first sample's power on the
    /// in-phase arm and declared lock on the first sample of pure noise.
    #[test]
    fn noise_is_not_reported_locked_at_any_sample() {
        use rand::rngs::StdRng;
        use rand::SeedableRng;
        use rand_distr::{Distribution, Normal};
        let normal = Normal::new(0.0, 0.5f64.sqrt()).unwrap();
        let mut rng = StdRng::seed_from_u64(4);
        let mut costas = CostasLoop::new(PllConfig::new(FS, 30.0)).unwrap();
        for n in 0..48_000 {
            let x = Complex32::new(
                normal.sample(&mut rng) as f32,
                normal.sample(&mut rng) as f32,
            );
            costas.next_sample(x);
            assert!(!costas.is_locked(), "locked at sample {n}");
        }
    }

    /// No delay probe: the output is de-rotated by the loop; `delay()` is 0 because the
    /// loop adds no filter delay.
    #[test]
    fn meets_the_block_contract() {
        let x = dsb(12.0, 0.3, 20_000);
        let make = || CostasLoop::new(PllConfig::new(FS, 40.0)).unwrap();
        check_block(&BlockCheck::new(&make, &x));
    }

    #[test]
    fn bad_settings_are_errors() {
        assert!(CostasLoop::new(PllConfig::new(FS, -1.0)).is_err());
        let mut c = PllConfig::new(FS, 30.0);
        c.damping = -0.5;
        assert!(CostasLoop::new(c).is_err());
    }
}

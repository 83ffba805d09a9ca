//! An f64 FIR for message shaping, and the windowed-sinc band-pass design it uses.
//!
//! Design: the Kaiser window method (J. F. Kaiser, "Nonrecursive digital filter design using
//! the I0-sinh window function", 1974; Oppenheim & Schafer, Discrete-Time Signal Processing,
//! sec. 7.5-7.6): h\[n\] = (2f₂ sinc(2f₂m) − 2f₁ sinc(2f₁m))·w\[n\], m = n − (N−1)/2, cutoffs at
//! mid-transition. Both edges share the window, hence the same transition width.

use crate::block::Block;
use crate::dsp::kaiser::{bessel_i0, kaiser_beta, kaiser_num_taps, MAX_TAPS};
use crate::{Error, Result};

/// A real FIR `y[n] = Σ h[k] x[n−k]` in f64 from zeroed history.
#[derive(Debug, Clone)]
pub struct RealFir {
    /// Taps reversed, so the window in `history` lines up oldest-first.
    reversed: Vec<f64>,
    /// The last N inputs, stored twice so a contiguous window always exists.
    history: Vec<f64>,
    pos: usize,
}

impl RealFir {
    /// A filter with `taps` (at least one, all finite).
    pub fn new(taps: &[f64]) -> Result<Self> {
        if taps.is_empty() || taps.iter().any(|h| !h.is_finite()) {
            return Err(Error::parameter(
                "message filter taps",
                taps.len(),
                "need at least one tap, all finite",
            ));
        }
        Ok(RealFir {
            reversed: taps.iter().rev().copied().collect(),
            history: vec![0.0; 2 * taps.len()],
            pos: 0,
        })
    }

    /// Band-pass from `low_hz` to `high_hz` (passband edges) with transitions of `width_hz`
    /// outside each edge and `attenuation_db` stopband; `low_hz` = 0 gives a low-pass.
    pub fn band_pass(
        low_hz: f64,
        high_hz: f64,
        width_hz: f64,
        attenuation_db: f64,
        sample_rate: f64,
    ) -> Result<Self> {
        Self::new(&band_pass_taps(
            low_hz,
            high_hz,
            width_hz,
            attenuation_db,
            sample_rate,
        )?)
    }

    /// Number of taps.
    pub fn len(&self) -> usize {
        self.reversed.len()
    }

    /// Always false: a filter has at least one tap.
    pub fn is_empty(&self) -> bool {
        self.reversed.is_empty()
    }

    /// Filters one sample (non-finite input counts as zero).
    #[inline]
    pub fn next(&mut self, x: f64) -> f64 {
        let n = self.reversed.len();
        let x = if x.is_finite() { x } else { 0.0 };
        self.history[self.pos] = x;
        self.history[self.pos + n] = x;
        self.pos = (self.pos + 1) % n;
        let window = &self.history[self.pos..self.pos + n];
        window.iter().zip(&self.reversed).map(|(a, b)| a * b).sum()
    }

    /// Zeroes the history.
    pub fn reset(&mut self) {
        self.history.fill(0.0);
        self.pos = 0;
    }
}

impl Block for RealFir {
    type Input = f32;
    type Output = f32;

    fn process(&mut self, input: &[f32], output: &mut [f32]) -> (usize, usize) {
        let n = input.len().min(output.len());
        for (y, x) in output.iter_mut().zip(input).take(n) {
            *y = self.next(f64::from(*x)) as f32;
        }
        (n, n)
    }

    fn max_output_len(&self, input_len: usize) -> usize {
        input_len
    }

    fn rate_ratio(&self) -> f64 {
        1.0
    }

    fn delay(&self) -> f64 {
        (self.reversed.len() as f64 - 1.0) / 2.0
    }

    fn reset(&mut self) {
        RealFir::reset(self);
    }
}

/// The band-pass taps of [`RealFir::band_pass`] (odd length).
pub fn band_pass_taps(
    low_hz: f64,
    high_hz: f64,
    width_hz: f64,
    attenuation_db: f64,
    sample_rate: f64,
) -> Result<Vec<f64>> {
    let fs = sample_rate;
    let ok = fs.is_finite()
        && fs > 0.0
        && width_hz.is_finite()
        && width_hz > 0.0
        && low_hz.is_finite()
        && low_hz >= 0.0
        && high_hz.is_finite()
        && high_hz > low_hz
        && high_hz + width_hz / 2.0 < fs / 2.0
        && attenuation_db.is_finite()
        && attenuation_db > 0.0;
    if !ok {
        return Err(Error::parameter(
            "message band",
            format!("{low_hz}..{high_hz} Hz, transition {width_hz} Hz at {fs} Hz"),
            "need 0 ≤ low < high, high + transition/2 below half the rate",
        ));
    }
    let n = kaiser_num_taps(attenuation_db, width_hz / fs) | 1;
    if n > MAX_TAPS {
        return Err(Error::parameter(
            "message filter transition",
            format!("{width_hz} Hz"),
            format!("needs {n} taps, more than {MAX_TAPS}"),
        ));
    }
    let beta = kaiser_beta(attenuation_db);
    let f2 = (high_hz + width_hz / 2.0) / fs;
    let f1 = if low_hz > 0.0 {
        (low_hz - width_hz / 2.0).max(0.0) / fs
    } else {
        0.0
    };
    let centre = (n as f64 - 1.0) / 2.0;
    Ok((0..n)
        .map(|i| {
            let m = i as f64 - centre;
            let r = if n == 1 {
                0.0
            } else {
                2.0 * i as f64 / (n as f64 - 1.0) - 1.0
            };
            let w = bessel_i0(beta * (1.0 - r * r).max(0.0).sqrt()) / bessel_i0(beta);
            (2.0 * f2 * sinc(2.0 * f2 * m) - 2.0 * f1 * sinc(2.0 * f1 * m)) * w
        })
        .collect())
}

/// sin(πx)/(πx), 1 at x = 0.
pub(crate) fn sinc(x: f64) -> f64 {
    if x == 0.0 {
        1.0
    } else {
        let px = std::f64::consts::PI * x;
        px.sin() / px
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::check::{check_block, BlockCheck, DelayProbe};

    fn gain_at(taps: &[f64], f: f64, fs: f64) -> f64 {
        let z: num_complex::Complex64 = taps
            .iter()
            .enumerate()
            .map(|(k, h)| {
                num_complex::Complex64::from_polar(*h, -std::f64::consts::TAU * f * k as f64 / fs)
            })
            .sum();
        z.norm()
    }

    #[test]
    fn band_pass_meets_its_specification() {
        // Kaiser's method gives ripple δ = 10^(−A/20) on both sides (Oppenheim & Schafer
        // sec. 7.6); the check allows 2δ since the two windowed edges add their ripples.
        let (fs, a) = (16e3, 70.0);
        let taps = band_pass_taps(300.0, 3000.0, 200.0, a, fs).unwrap();
        let delta = 2.0 * 10f64.powf(-a / 20.0);
        for f in [300.0, 500.0, 1000.0, 2000.0, 3000.0] {
            assert!((gain_at(&taps, f, fs) - 1.0).abs() < delta, "passband {f}");
        }
        for f in [0.0, 50.0, 100.0, 3200.0, 5000.0, 8000.0] {
            assert!(gain_at(&taps, f, fs) < delta, "stopband {f}");
        }
        assert!(band_pass_taps(3000.0, 300.0, 200.0, a, fs).is_err());
        assert!(band_pass_taps(300.0, 7950.0, 200.0, a, fs).is_err());
    }

    /// A symmetric (linear-phase) low-pass to 1 kHz at 8 kS/s; tones at 400 and 440 Hz, in the
    /// passband, 0.005 of the rate apart < 1/(2·delay) for its ~100 taps.
    #[test]
    fn meets_the_block_contract() {
        let make = || RealFir::band_pass(0.0, 1000.0, 300.0, 60.0, 8000.0).unwrap();
        let x: Vec<f32> = (0..5000)
            .map(|n| ((n * 7919) % 101) as f32 / 50.0 - 1.0)
            .collect();
        let signal = |f: f64| crate::dsp::test_util::real_tone(20_000, f);
        check_block(&BlockCheck {
            delay_probe: Some(DelayProbe {
                signal: &signal,
                tones: [400.0 / 8000.0, 440.0 / 8000.0],
            }),
            ..BlockCheck::new(&make, &x)
        });
    }
}

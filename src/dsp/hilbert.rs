//! Hilbert-transformer FIR: design by the Kaiser-windowed ideal response, and the filter block.
//!
//! Ideal discrete-time Hilbert transformer (Oppenheim & Schafer, *Discrete-Time Signal
//! Processing*, sec. 12.4): H(e^jω) = −j for 0 < ω < π, +j for −π < ω < 0, with impulse
//! response h\[n\] = 2/(πn) for odd n and 0 for even n. Truncated to N = 4k + 3 taps (odd
//! length, antisymmetric: a type-III linear-phase FIR, delay (N−1)/2, zeros at 0 and fs/2)
//! and shaped by a Kaiser window. The response near 0 and fs/2 is a windowed jump of size 2,
//! so the ripple is about twice the window's low-pass ripple δ = 10^(−A/20) and the
//! transition is centred on 0 Hz: the ripple spec holds from `low_edge_hz` up to
//! fs/2 − `low_edge_hz` when the window is sized for a transition of 2 × `low_edge_hz`.

use super::fir::Fir;
use super::kaiser::{bessel_i0, kaiser_beta, kaiser_num_taps, MAX_TAPS};
use crate::block::Block;
use crate::{Error, Result};
use std::f64::consts::PI;

/// What a Hilbert transformer must achieve.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HilbertSpec {
    /// Lowest frequency (and distance below fs/2) at which the ripple spec holds, in Hz.
    pub low_edge_hz: f64,
    /// Kaiser attenuation A in dB; the magnitude ripple is then about 2·10^(−A/20).
    pub attenuation_db: f64,
    /// Sample rate in Hz.
    pub sample_rate: f64,
}

/// Designs the Hilbert-transformer taps for `spec` (length 4k + 3, antisymmetric).
///
/// ```
/// use amrx::dsp::{design_hilbert, HilbertSpec};
/// let taps = design_hilbert(&HilbertSpec {
///     low_edge_hz: 100.0,
///     attenuation_db: 60.0,
///     sample_rate: 48_000.0,
/// })
/// .unwrap();
/// assert_eq!(taps.len() % 4, 3);
/// assert_eq!(taps[taps.len() / 2], 0.0);
/// ```
pub fn design_hilbert(spec: &HilbertSpec) -> Result<Vec<f32>> {
    Ok(design_hilbert_f64(spec)?
        .into_iter()
        .map(|t| t as f32)
        .collect())
}

/// [`design_hilbert`] in f64, for generators that need the taps beyond f32 precision.
pub fn design_hilbert_f64(spec: &HilbertSpec) -> Result<Vec<f64>> {
    validate(spec)?;
    let transition = 2.0 * spec.low_edge_hz / spec.sample_rate;
    let n = kaiser_num_taps(spec.attenuation_db, transition);
    if n > MAX_TAPS {
        return Err(Error::parameter(
            "Hilbert low edge",
            format!("{} Hz", spec.low_edge_hz),
            format!("needs {n} taps, more than {MAX_TAPS}"),
        ));
    }
    // Round up to 4k + 3 so that the end taps sit at odd offsets (nonzero).
    let n = n.div_ceil(4) * 4 + 3;
    let beta = kaiser_beta(spec.attenuation_db);
    Ok(windowed_antisymmetric_f64(n, beta, ideal_hilbert))
}

/// The ideal Hilbert impulse response at offset `m` from the centre: 2/(πm) for odd m, else 0.
fn ideal_hilbert(m: i64) -> f64 {
    if m % 2 == 0 {
        0.0
    } else {
        2.0 / (PI * m as f64)
    }
}

/// Taps of odd length `n`: `ideal(m)` at offset m = i − (n−1)/2, times a Kaiser window of
/// `beta`; `ideal` must be odd in m so that the taps are antisymmetric (type III).
pub fn windowed_antisymmetric(n: usize, beta: f64, ideal: impl Fn(i64) -> f64) -> Vec<f32> {
    windowed_antisymmetric_f64(n, beta, ideal)
        .into_iter()
        .map(|t| t as f32)
        .collect()
}

/// [`windowed_antisymmetric`] in f64.
pub fn windowed_antisymmetric_f64(n: usize, beta: f64, ideal: impl Fn(i64) -> f64) -> Vec<f64> {
    let centre = (n / 2) as i64;
    let denominator = bessel_i0(beta);
    (0..n)
        .map(|i| {
            let m = i as i64 - centre;
            let r = m as f64 / centre.max(1) as f64;
            let w = bessel_i0(beta * (1.0 - r * r).max(0.0).sqrt()) / denominator;
            ideal(m) * w
        })
        .collect()
}

/// The real amplitude A(f) of antisymmetric taps, H(e^j2πf) = −j·A(f)·e^(−j2πf(N−1)/2):
/// A(f) = 2·Σ_{m>0} h[c+m]·sin(2πfm), c the centre. An ideal Hilbert gives A = 1 for f in
/// (0, fs/2). `f_over_fs` in cycles per sample.
pub fn antisymmetric_amplitude(taps: &[f32], f_over_fs: f64) -> f64 {
    let c = taps.len() / 2;
    (1..=c)
        .map(|m| 2.0 * f64::from(taps[c + m]) * (2.0 * PI * f_over_fs * m as f64).sin())
        .sum()
}

fn validate(spec: &HilbertSpec) -> Result<()> {
    let fs = spec.sample_rate;
    if !(fs.is_finite() && fs > 0.0) {
        return Err(Error::parameter(
            "sample_rate",
            fs,
            "must be positive and finite",
        ));
    }
    let edge = spec.low_edge_hz;
    if !(edge.is_finite() && edge > 0.0 && edge < fs / 4.0) {
        return Err(Error::parameter(
            "Hilbert low edge",
            format!("{edge} Hz"),
            format!("must lie in (0, {} Hz)", fs / 4.0),
        ));
    }
    let a = spec.attenuation_db;
    if !(a.is_finite() && a > 0.0) {
        return Err(Error::parameter(
            "Hilbert attenuation",
            format!("{a} dB"),
            "must be positive and finite",
        ));
    }
    Ok(())
}

/// A Hilbert transformer on real samples: y\[n\] = Σ h\[k\]·x\[n−k\] with taps from
/// [`design_hilbert`], delay (N−1)/2 samples.
#[derive(Debug, Clone)]
pub struct HilbertFir {
    fir: Fir<f32>,
}

impl HilbertFir {
    /// The filter for `spec`.
    ///
    /// ```
    /// use amrx::block::Block;
    /// use amrx::dsp::{HilbertFir, HilbertSpec};
    /// let h = HilbertFir::new(&HilbertSpec {
    ///     low_edge_hz: 200.0,
    ///     attenuation_db: 50.0,
    ///     sample_rate: 8_000.0,
    /// })
    /// .unwrap();
    /// assert_eq!(h.delay(), (h.num_taps() as f64 - 1.0) / 2.0);
    /// ```
    pub fn new(spec: &HilbertSpec) -> Result<Self> {
        Self::from_taps(&design_hilbert(spec)?)
    }

    /// The filter with given taps (any length; antisymmetric odd-length taps for a delay of
    /// (N−1)/2).
    pub fn from_taps(taps: &[f32]) -> Result<Self> {
        Ok(HilbertFir {
            fir: Fir::new(taps)?,
        })
    }

    /// Number of taps.
    pub fn num_taps(&self) -> usize {
        self.fir.num_taps()
    }
}

impl Block for HilbertFir {
    type Input = f32;
    type Output = f32;

    fn process(&mut self, input: &[f32], output: &mut [f32]) -> (usize, usize) {
        self.fir.process(input, output)
    }

    fn max_output_len(&self, input_len: usize) -> usize {
        input_len
    }

    fn rate_ratio(&self) -> f64 {
        1.0
    }

    fn delay(&self) -> f64 {
        self.fir.delay()
    }

    fn reset(&mut self) {
        self.fir.reset();
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::check::{check_block, BlockCheck, DelayProbe};
    use crate::block::process_to_vec;
    use crate::dsp::test_util::{random_real, real_tone};

    fn spec() -> HilbertSpec {
        HilbertSpec {
            low_edge_hz: 100.0,
            attenuation_db: 60.0,
            sample_rate: 48_000.0,
        }
    }

    /// Ripple over [low edge, fs/2 − low edge] within 2·10^(−A/20) (the windowed jump of 2;
    /// Kaiser's formulas are empirical, so 1.5× that is allowed) and the ideal taps at the
    /// centre equal 2/(πm) to within the window's near-unity value.
    #[test]
    fn meets_the_ripple_spec() {
        for (edge, a, fs) in [(100.0, 60.0, 48_000.0), (300.0, 50.0, 8_000.0)] {
            let s = HilbertSpec {
                low_edge_hz: edge,
                attenuation_db: a,
                sample_rate: fs,
            };
            let taps = design_hilbert(&s).unwrap();
            let c = taps.len() / 2;
            for m in 0..=c {
                assert_eq!(taps[c + m], -taps[c - m], "antisymmetric at {m}");
            }
            // O&S 12.4: h[1] = 2/π; the Kaiser window is 1 − O(β/N²) next to the centre.
            assert!((f64::from(taps[c + 1]) * PI / 2.0 - 1.0).abs() < 0.01);
            assert_eq!(taps[c + 2], 0.0);
            let delta = 2.0 * 10f64.powf(-a / 20.0);
            let grid = 2000;
            let worst = (0..=grid)
                .map(|i| {
                    let f = edge + (fs / 2.0 - 2.0 * edge) * i as f64 / grid as f64;
                    (antisymmetric_amplitude(&taps, f / fs) - 1.0).abs()
                })
                .fold(0.0, f64::max);
            println!(
                "{s:?}: {} taps, ripple {worst:.2e} (2δ {delta:.2e})",
                taps.len()
            );
            assert!(worst < 1.5 * delta, "{s:?}: ripple {worst}");
        }
    }

    /// The Hilbert transform of sin is −cos (O&S 12.4: H = −j for positive frequencies).
    #[test]
    fn turns_sine_into_minus_cosine() {
        let mut h = HilbertFir::new(&spec()).unwrap();
        let d = h.delay() as usize;
        let w = 2.0 * PI * 1000.0 / 48_000.0;
        let x: Vec<f32> = (0..20_000).map(|n| (w * n as f64).sin() as f32).collect();
        let y = process_to_vec(&mut h, &x);
        for (n, &v) in y.iter().enumerate().skip(2 * d) {
            let expected = -(w * (n - d) as f64).cos();
            assert!((f64::from(v) - expected).abs() < 3e-3, "n {n}");
        }
    }

    /// A pure delay of (N − 1)/2 plus −90°: the probe reads the phase difference of two
    /// tones, so the constant quarter turn cancels. Tones at 0.1 and 0.11 of the rate, inside
    /// the band, 0.01 apart < 1/(2·delay) for the ~40 taps of this design.
    #[test]
    fn meets_the_block_contract() {
        let taps = design_hilbert(&HilbertSpec {
            low_edge_hz: 400.0,
            attenuation_db: 50.0,
            sample_rate: 8_000.0,
        })
        .unwrap();
        assert!(taps.len() < 100, "{} taps", taps.len());
        let x = random_real(9000, 7);
        let make = || HilbertFir::from_taps(&taps).unwrap();
        let signal = |f: f64| real_tone(9000, f);
        check_block(&BlockCheck {
            delay_probe: Some(DelayProbe {
                signal: &signal,
                tones: [0.1, 0.11],
            }),
            ..BlockCheck::new(&make, &x)
        });
    }

    #[test]
    fn bad_specs_are_errors() {
        let good = spec();
        for bad in [
            HilbertSpec {
                low_edge_hz: 0.0,
                ..good
            },
            HilbertSpec {
                low_edge_hz: 12_000.0,
                ..good
            },
            HilbertSpec {
                attenuation_db: f64::NAN,
                ..good
            },
            HilbertSpec {
                sample_rate: -1.0,
                ..good
            },
            HilbertSpec {
                low_edge_hz: 1e-6,
                ..good
            },
        ] {
            assert!(design_hilbert(&bad).is_err(), "{bad:?}");
        }
    }
}

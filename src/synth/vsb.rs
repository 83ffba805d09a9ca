//! Vestigial sideband with carrier (C3F-style): the upper sideband, a vestige of width f_v
//! below the carrier, and the carrier.
//!
//! The full-carrier AM envelope x = A_c(1 + μm) is shaped by a complex FIR H with
//! H(f) = 0 below −f_v, (f + f_v)/(2f_v) on [−f_v, f_v] (the linear Nyquist slope through the
//! carrier, H(0) = ½), 1 from f_v to W, falling linearly to 0 at W + t (t = 0.15·W), and the
//! output is 2·(h ∗ x). Because H(f) + H(−f) = 1 for |f| < W (the VSB condition, S. Haykin,
//! Communication Systems, ch. 2, VSB), the in-phase part of the envelope is A_c(1 + μm)
//! delayed: the carrier keeps amplitude A_c and coherent detection recovers the message.
//!
//! Design (common practice, no source): the taps are the inverse DTFT of H, integrated
//! numerically on a grid that contains every corner (so the trapezoid rule is exact for the
//! piecewise-linear H), times a Kaiser window for 70 dB; the window smooths each corner over
//! about f_v/2 but, being symmetric, keeps H(f) + H(−f) = 1 away from the upper edge.

use super::complex_fir::ComplexFir;
use super::params::{amplitude, modulation_index, to_c32};
use crate::block::SampleBlock;
use crate::dsp::kaiser::{bessel_i0, kaiser_beta, kaiser_num_taps, MAX_TAPS};
use crate::dsp::Rotator;
use crate::{Complex32, Error, Result};
use num_complex::Complex64;

/// Window attenuation of the vestige filter, dB.
const ATTENUATION_DB: f64 = 70.0;
/// Grid points per corner-to-corner segment of the numerical inverse DTFT.
const GRID_PER_SEGMENT: usize = 512;

/// VSB modulator: message in, complex baseband at the carrier offset out.
///
/// ```
/// use amrx::synth::VsbModulator;
/// let vsb = VsbModulator::new(0.5, 0.8, 500.0, 4000.0, 0.0, 20e3).unwrap();
/// assert!(vsb.num_taps() > 1);
/// ```
#[derive(Debug, Clone)]
pub struct VsbModulator {
    carrier_amplitude: f64,
    mu: f64,
    shaping: ComplexFir,
    carrier: Rotator,
}

impl VsbModulator {
    /// Carrier amplitude A_c, modulation index μ, vestige width f_v and message bandwidth W
    /// (0 < f_v < W, W·1.15 < fs/2), carrier offset and sample rate in Hz.
    pub fn new(
        carrier_amplitude: f64,
        mu: f64,
        vestige_hz: f64,
        bandwidth_hz: f64,
        offset_hz: f64,
        sample_rate: f64,
    ) -> Result<Self> {
        let mu = modulation_index(mu)?;
        let a_c = amplitude("carrier_amplitude", carrier_amplitude, 2.0 * (1.0 + mu))?;
        let taps = vestige_taps(vestige_hz, bandwidth_hz, sample_rate)?;
        Ok(VsbModulator {
            carrier_amplitude: a_c,
            mu,
            shaping: ComplexFir::new(&taps)?,
            carrier: Rotator::new(offset_hz, sample_rate)?,
        })
    }

    /// Taps of the shaping filter.
    pub fn num_taps(&self) -> usize {
        self.shaping.len()
    }

    /// The shaping filter's response 2·H(f) (f relative to the carrier).
    pub fn response(&self, frequency_hz: f64, sample_rate: f64) -> Complex64 {
        self.shaping.response(frequency_hz, sample_rate)
    }
}

/// The taps of 2·H (see the module docs).
fn vestige_taps(f_v: f64, w: f64, fs: f64) -> Result<Vec<Complex64>> {
    let top = 1.15 * w;
    if !(fs.is_finite()
        && fs > 0.0
        && f_v.is_finite()
        && f_v > 0.0
        && w.is_finite()
        && f_v < w
        && top < fs / 2.0)
    {
        return Err(Error::parameter(
            "vestige",
            format!("f_v {f_v} Hz, W {w} Hz at {fs} Hz"),
            "need 0 < f_v < W and 1.15·W below half the rate",
        ));
    }
    let n = kaiser_num_taps(ATTENUATION_DB, 0.5 * f_v.min(top - w) / fs) | 1;
    if n > MAX_TAPS {
        return Err(Error::parameter(
            "vestige",
            format!("{f_v} Hz"),
            format!("needs {n} taps, more than {MAX_TAPS}"),
        ));
    }
    let corners = [-f_v, f_v, w, top];
    let shape = |f: f64| -> f64 {
        if f <= -f_v || f >= top {
            0.0
        } else if f < f_v {
            (f + f_v) / (2.0 * f_v)
        } else if f <= w {
            1.0
        } else {
            (top - f) / (top - w)
        }
    };
    let mut grid = Vec::new();
    for pair in corners.windows(2) {
        let step = (pair[1] - pair[0]) / GRID_PER_SEGMENT as f64;
        grid.extend((0..GRID_PER_SEGMENT).map(|i| pair[0] + step * i as f64));
    }
    grid.push(top);
    let beta = kaiser_beta(ATTENUATION_DB);
    let centre = (n as f64 - 1.0) / 2.0;
    Ok((0..n)
        .map(|i| {
            let m = i as f64 - centre;
            // h[m] = (1/fs)∫ H(f) e^{j2πfm/fs} df by the trapezoid rule on the grid.
            let integral: Complex64 = grid
                .windows(2)
                .map(|p| {
                    let e = |f: f64| {
                        Complex64::from_polar(shape(f), std::f64::consts::TAU * f * m / fs)
                    };
                    (e(p[0]) + e(p[1])) * (0.5 * (p[1] - p[0]))
                })
                .sum();
            let r = if n == 1 {
                0.0
            } else {
                2.0 * i as f64 / (n as f64 - 1.0) - 1.0
            };
            let window = bessel_i0(beta * (1.0 - r * r).max(0.0).sqrt()) / bessel_i0(beta);
            integral * (2.0 * window / fs)
        })
        .collect())
}

impl SampleBlock for VsbModulator {
    type In = f32;
    type Out = Complex32;

    #[inline]
    fn next(&mut self, m: f32) -> Complex32 {
        let m = if m.is_finite() { f64::from(m) } else { 0.0 };
        let x = Complex64::new(self.carrier_amplitude * (1.0 + self.mu * m), 0.0);
        to_c32(self.shaping.next(x) * self.carrier.next_sample())
    }

    /// (N − 1)/2 of the linear-phase sideband-shaping filter.
    fn sample_delay(&self) -> f64 {
        (self.shaping.len() as f64 - 1.0) / 2.0
    }

    fn reset_state(&mut self) {
        self.shaping.reset();
        self.carrier.reset();
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::check::{check_block, BlockCheck, DelayProbe};
    use crate::block::{process_in_chunks, Block};
    use crate::dsp::test_util::real_tone;
    use crate::dsp::test_util::{cosine, line_amplitudes};

    #[test]
    fn response_meets_the_vsb_condition() {
        // H(f) + H(−f) = 1 for |f| < W (Haykin ch. 2); 2H here, so |2H(f)| + |2H(−f)| = 2
        // after removing the linear phase. Tolerance 1e-2: the window's 70 dB ripple plus
        // the corner smoothing, which the symmetric window keeps out of the sum.
        let (fs, f_v, w) = (20e3, 600.0, 4000.0);
        let vsb = VsbModulator::new(1.0, 0.5, f_v, w, 0.0, fs).unwrap();
        let delay = (vsb.num_taps() as f64 - 1.0) / 2.0;
        let zero_phase = |f: f64| {
            (vsb.response(f, fs)
                * Complex64::from_polar(1.0, std::f64::consts::TAU * f * delay / fs))
            .re
        };
        for f in [0.0, 100.0, 300.0, 599.0, 1000.0, 2500.0, 3500.0] {
            let sum = zero_phase(f) + zero_phase(-f);
            assert!((sum - 2.0).abs() < 1e-2, "{f} Hz: {sum}");
        }
        assert!((zero_phase(0.0) - 1.0).abs() < 1e-3);
        assert!((zero_phase(300.0) - 1.5).abs() < 1e-2);
        for f in [-1500.0, -3000.0, 5500.0] {
            assert!(vsb.response(f, fs).norm() < 1e-3, "stopband {f}");
        }
    }

    #[test]
    fn tone_lines_follow_the_slope() {
        // Carrier A_c; a tone at f > f_v leaves one line of A_c·μ above; a tone inside the
        // vestige splits A_c·μ as (f_v + f)/(2f_v) above and (f_v − f)/(2f_v) below.
        let (fs, f_v, w, f_c, a_c, mu) = (20e3, 600.0, 4000.0, 1500.0, 0.4, 0.8);
        for (f, up_share) in [(2000.0, 1.0), (300.0, 0.75), (150.0, 0.625)] {
            let m = cosine(f, fs, 60_000);
            let z = process_in_chunks(
                &mut VsbModulator::new(a_c, mu, f_v, w, f_c, fs).unwrap(),
                &m,
                &[60_000],
            );
            let (up, down, car) = line_amplitudes(&z[20_000..], f_c, f, fs);
            eprintln!("VSB tone {f} Hz: carrier {car:.4}, upper {up:.4}, lower {down:.4}");
            assert!((car - a_c).abs() < 2e-3);
            assert!((up - a_c * mu * up_share).abs() < 3e-3, "{f}: upper {up}");
            assert!(
                (down - a_c * mu * (1.0 - up_share)).abs() < 3e-3,
                "{f}: lower {down}"
            );
        }
    }

    /// At a 0 Hz carrier a message tone above the vestige comes out at its own frequency after
    /// the shaping filter's (N − 1)/2; tones at 1500 and 1520 Hz (12 kS/s), in the flat part of
    /// the band, 20 Hz apart: below fs/(2·delay) for a delay under 300 samples.
    #[test]
    fn meets_the_block_contract() {
        let input: Vec<f32> = (0..5000).map(|n| ((n as f32) * 0.21).sin()).collect();
        let make = || VsbModulator::new(0.3, 0.7, 400.0, 3000.0, -2000.0, 12e3).unwrap();
        check_block(&BlockCheck::new(&make, &input));
        let make = || VsbModulator::new(0.3, 0.7, 400.0, 3000.0, 0.0, 12e3).unwrap();
        let signal = |f: f64| real_tone(60_000, f);
        check_block(&BlockCheck {
            delay_probe: Some(DelayProbe {
                signal: &signal,
                tones: [1500.0 / 12e3, 1520.0 / 12e3],
            }),
            ..BlockCheck::new(&make, &input)
        });
        assert!(make().delay() < 300.0, "{}", make().delay());
        assert!(VsbModulator::new(0.3, 0.7, 4000.0, 3000.0, 0.0, 12e3).is_err());
    }
}

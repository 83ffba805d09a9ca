//! Cheap-receiver impairments: DC offset, IQ gain and phase imbalance, 8-bit quantisation.

use crate::Complex32;

/// DC offset and IQ imbalance of a direct-conversion front end.
///
/// Model (I taken as the reference branch): with g = 10^(gain_db/20) and φ = phase_deg in
/// radians,
/// ```text
/// I' = I + dc.re
/// Q' = g·(Q·cos φ − I·sin φ) + dc.im
/// ```
/// i.e. the Q branch's local oscillator lags quadrature by φ and its gain is g. A complex tone
/// e^{jθ} becomes K₁e^{jθ} + K₂e^{−jθ} with K₁ = (1 + g e^{−jφ})/2 and K₂ = (1 − g e^{jφ})/2,
/// so the image rejection ratio is |K₁|²/|K₂|² = (1 + 2g cos φ + g²)/(1 − 2g cos φ + g²).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct IqImpairment {
    /// Added DC (complex).
    pub dc: Complex32,
    /// Gain imbalance in dB (Q relative to I).
    pub gain_db: f64,
    /// Phase imbalance in degrees (Q's error from quadrature).
    pub phase_deg: f64,
}

impl IqImpairment {
    /// Applies the impairment in place.
    ///
    /// Non-finite gain or phase settings are treated as no imbalance.
    pub fn apply(&self, signal: &mut [Complex32]) {
        let q_from = self.q_coefficients();
        for s in signal.iter_mut() {
            *s = self.apply_one(q_from, *s);
        }
    }

    /// The Q branch's weights (on Q, on I): (g·cos φ, −g·sin φ), or (1, 0) for non-finite
    /// settings.
    pub(crate) fn q_coefficients(&self) -> (f32, f32) {
        let gain = 10f64.powf(self.gain_db / 20.0);
        let (sin, cos) = self.phase_deg.to_radians().sin_cos();
        if gain.is_finite() && sin.is_finite() {
            ((gain * cos) as f32, (-gain * sin) as f32)
        } else {
            (1.0, 0.0)
        }
    }

    /// One sample, with the weights of [`q_coefficients`](Self::q_coefficients).
    #[inline]
    pub(crate) fn apply_one(&self, (q_from_q, q_from_i): (f32, f32), s: Complex32) -> Complex32 {
        let (i, q) = (s.re, s.im);
        Complex32::new(i + self.dc.re, q_from_q * q + q_from_i * i + self.dc.im)
    }

    /// The image rejection ratio (linear power ratio) this impairment produces,
    /// (1 + 2g cos φ + g²)/(1 − 2g cos φ + g²); infinite for a perfect front end.
    pub fn image_rejection_ratio(&self) -> f64 {
        let g = 10f64.powf(self.gain_db / 20.0);
        let c = self.phase_deg.to_radians().cos();
        (1.0 + 2.0 * g * c + g * g) / (1.0 - 2.0 * g * c + g * g)
    }
}

/// Quantises to unsigned 8-bit IQ bytes (full scale ±1 ↦ 0..255, centre 127.5), clipping.
///
/// `out` is cleared and receives I, Q interleaved: `round((x + 1)·127.5)` clipped to [0, 255],
/// rounding halves away from zero (so 0.0 ↦ 128). NaN maps to 128.
pub fn quantize_cu8(signal: &[Complex32], out: &mut Vec<u8>) {
    out.clear();
    out.reserve(2 * signal.len());
    for s in signal {
        out.push(quantize(s.re));
        out.push(quantize(s.im));
    }
}

fn quantize(x: f32) -> u8 {
    if x.is_nan() {
        return 128;
    }
    ((f64::from(x) + 1.0) * 127.5).round().clamp(0.0, 255.0) as u8
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Complex amplitudes of e^{+jθ} and e^{−jθ} in `z`, over whole cycles.
    fn tone_and_image(z: &[Complex32], step: f64) -> (f64, f64) {
        let (mut k1, mut k2) = (
            num_complex::Complex64::default(),
            num_complex::Complex64::default(),
        );
        for (n, s) in z.iter().enumerate() {
            let rot =
                num_complex::Complex64::from_polar(1.0, std::f64::consts::TAU * step * n as f64);
            let s = num_complex::Complex64::new(f64::from(s.re), f64::from(s.im));
            k1 += s * rot.conj();
            k2 += s * rot;
        }
        let n = z.len() as f64;
        ((k1 / n).norm_sqr(), (k2 / n).norm_sqr())
    }

    #[test]
    fn image_rejection_matches_the_standard_relation() {
        // IRR = (1 + 2g cos φ + g²)/(1 − 2g cos φ + g²): standard image-rejection relation
        // for gain ratio g and phase error φ (e.g. B. Razavi, RF Microelectronics,
        // image-reject receivers; from memory). Tone on an exact DFT bin over whole cycles,
        // so the projection has no leakage; f32 samples limit the image floor to ~ −140 dB.
        let step = 37.0 / 4096.0;
        let tone: Vec<Complex32> = (0..4096)
            .map(|n| {
                let p = std::f64::consts::TAU * step * n as f64;
                Complex32::new(p.cos() as f32, p.sin() as f32)
            })
            .collect();
        for (gain_db, phase_deg) in [
            (0.5, 0.0),
            (0.0, 3.0),
            (1.0, -5.0),
            (-2.0, 10.0),
            (0.1, 1.0),
        ] {
            let imp = IqImpairment {
                dc: Complex32::new(0.0, 0.0),
                gain_db,
                phase_deg,
            };
            let mut z = tone.clone();
            imp.apply(&mut z);
            let (p1, p2) = tone_and_image(&z, step);
            let g = 10f64.powf(gain_db / 20.0);
            let c = phase_deg.to_radians().cos();
            let want = 10.0 * ((1.0 + 2.0 * g * c + g * g) / (1.0 - 2.0 * g * c + g * g)).log10();
            let got = 10.0 * (p1 / p2).log10();
            eprintln!(
                "IRR {gain_db} dB {phase_deg} deg: measured {got:.4} dB, formula {want:.4} dB"
            );
            assert!(
                (got - want).abs() < 0.2,
                "{gain_db} dB {phase_deg}°: {got} vs {want}"
            );
            assert!((10.0 * imp.image_rejection_ratio().log10() - want).abs() < 1e-9);
        }
    }

    #[test]
    fn dc_is_added() {
        let imp = IqImpairment {
            dc: Complex32::new(0.1, -0.2),
            ..Default::default()
        };
        let mut z = vec![Complex32::new(0.5, 0.25)];
        imp.apply(&mut z);
        assert!((z[0] - Complex32::new(0.6, 0.05)).norm() < 1e-6);
    }

    #[test]
    fn quantize_known_values() {
        let x = [
            Complex32::new(-1.0, 1.0),
            Complex32::new(0.0, 0.5),
            Complex32::new(-0.5, 2.0),
            Complex32::new(-3.0, f32::NAN),
            Complex32::new(1.0 / 127.5 - 1.0, 0.999),
        ];
        let mut out = vec![7u8; 3];
        quantize_cu8(&x, &mut out);
        // round((x+1)·127.5): −1→0, 1→255, 0→127.5→128, 0.5→191.25→191, −0.5→63.75→64,
        // 2→382.5→255 (clip), −3→−255→0 (clip), 1/127.5−1→1, 0.999→254.87→255.
        assert_eq!(out, vec![0, 255, 128, 191, 64, 255, 0, 128, 1, 255]);
    }
}

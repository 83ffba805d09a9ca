//! Helpers shared by the synth unit tests.

use crate::Complex32;
use num_complex::Complex64;

/// Amplitudes of the lines at f_c + f, f_c − f and f_c in `z` (DFT projections; exact for
/// whole numbers of cycles).
pub(crate) fn line_amplitudes(z: &[Complex32], f_c: f64, f: f64, fs: f64) -> (f64, f64, f64) {
    let project = |freq: f64| {
        let sum: Complex64 = z
            .iter()
            .enumerate()
            .map(|(n, v)| {
                Complex64::new(f64::from(v.re), f64::from(v.im))
                    * Complex64::from_polar(1.0, -std::f64::consts::TAU * freq * n as f64 / fs)
            })
            .sum();
        sum.norm() / z.len() as f64
    };
    (project(f_c + f), project(f_c - f), project(f_c))
}

/// A cosine message of `len` samples.
pub(crate) fn cosine(f: f64, fs: f64, len: usize) -> Vec<f32> {
    (0..len)
        .map(|n| (std::f64::consts::TAU * f * n as f64 / fs).cos() as f32)
        .collect()
}

//! A tabulation-free complex exponential for signal generators: e^{j2π·step·k}, exact at
//! every [`ANCHOR`]-th index and a rotation between.

use std::f64::consts::TAU;

/// Samples between the exact restarts of a [`Phasor`].
const ANCHOR: u64 = 1024;

/// e^{j2π·step·k} for k = n, n + 1, …: exact at every multiple of [`ANCHOR`] (`sin_cos` of the
/// phase in cycles reduced to [0, 1)) and a rotation by e^{j2π·step} between, so a value
/// depends on k alone, not on where a fill started, and the recurrence's rounding stays near
/// ANCHOR·2⁻⁵³ ≈ 10⁻¹³, far below the f32 the samples are stored in (common practice, no
/// source). Callgrind on one point of a lab sweep: the library's `sin_cos` per sample was a
/// tenth of the instructions.
#[derive(Debug, Clone)]
pub(crate) struct Phasor {
    step: f64,
    rotation: (f64, f64),
    k: u64,
    cos: f64,
    sin: f64,
}

impl Phasor {
    /// The phasor at index `k`: exact at the anchor at or before it, rotated forward.
    pub(crate) fn at(step: f64, k: u64) -> Self {
        let (s, c) = (TAU * step).sin_cos();
        let mut p = Phasor {
            step,
            rotation: (c, s),
            k: k - k % ANCHOR,
            cos: 0.0,
            sin: 0.0,
        };
        p.restart();
        while p.k < k {
            p.advance();
        }
        p
    }

    fn restart(&mut self) {
        let (s, c) = (TAU * (self.k as f64 * self.step).fract()).sin_cos();
        (self.cos, self.sin) = (c, s);
    }

    /// (cos, sin) of the phase at the current index.
    #[inline]
    pub(crate) fn value(&self) -> (f64, f64) {
        (self.cos, self.sin)
    }

    /// On to the next index.
    #[inline]
    pub(crate) fn advance(&mut self) {
        self.k += 1;
        if self.k % ANCHOR == 0 {
            self.restart();
        } else {
            let ((a, b), (c, d)) = (self.value(), self.rotation);
            (self.cos, self.sin) = (a * c - b * d, a * d + b * c);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Against the exponential evaluated from k directly (within 1e-12, far below the f32 the
    /// generators store), from index 0 and from a start part-way between anchors.
    #[test]
    fn follows_the_exponential_from_any_start() {
        let step = 1234.567 / 96_000.0;
        for start in [0u64, 3000] {
            let mut p = Phasor::at(step, start);
            for k in start..start + 5_000 {
                let (s, c) = (TAU * (k as f64 * step).fract()).sin_cos();
                let (cos, sin) = p.value();
                assert!((cos - c).abs() < 1e-12 && (sin - s).abs() < 1e-12, "k {k}");
                p.advance();
            }
        }
    }
}

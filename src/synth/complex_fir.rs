//! An FIR with complex taps on complex samples (f64 arithmetic), for one-sided shaping.

use crate::block::Block;
use crate::{Complex32, Error, Result};
use num_complex::Complex64;

/// `y[n] = Σ h[k]·x[n−k]` with complex `h`, from zeroed history.
#[derive(Debug, Clone)]
pub struct ComplexFir {
    reversed: Vec<Complex64>,
    history: Vec<Complex64>,
    pos: usize,
}

impl ComplexFir {
    /// A filter with `taps` (at least one, all finite).
    pub fn new(taps: &[Complex64]) -> Result<Self> {
        if taps.is_empty() || taps.iter().any(|h| !(h.re.is_finite() && h.im.is_finite())) {
            return Err(Error::parameter(
                "complex filter taps",
                taps.len(),
                "need at least one tap, all finite",
            ));
        }
        Ok(ComplexFir {
            reversed: taps.iter().rev().copied().collect(),
            history: vec![Complex64::default(); 2 * taps.len()],
            pos: 0,
        })
    }

    /// Number of taps.
    pub fn len(&self) -> usize {
        self.reversed.len()
    }

    /// Always false.
    pub fn is_empty(&self) -> bool {
        self.reversed.is_empty()
    }

    /// Filters one sample (non-finite input counts as zero).
    #[inline]
    pub fn next(&mut self, x: Complex64) -> Complex64 {
        let n = self.reversed.len();
        let x = if x.re.is_finite() && x.im.is_finite() {
            x
        } else {
            Complex64::default()
        };
        self.history[self.pos] = x;
        self.history[self.pos + n] = x;
        self.pos = (self.pos + 1) % n;
        let window = &self.history[self.pos..self.pos + n];
        window.iter().zip(&self.reversed).map(|(a, b)| a * b).sum()
    }

    /// The frequency response Σ h\[k\] e^{−j2πfk/fs}.
    pub fn response(&self, frequency_hz: f64, sample_rate: f64) -> Complex64 {
        let n = self.reversed.len();
        self.reversed
            .iter()
            .enumerate()
            .map(|(i, h)| {
                let k = (n - 1 - i) as f64;
                h * Complex64::from_polar(
                    1.0,
                    -std::f64::consts::TAU * frequency_hz * k / sample_rate,
                )
            })
            .sum()
    }

    /// Zeroes the history.
    pub fn reset(&mut self) {
        self.history.fill(Complex64::default());
        self.pos = 0;
    }
}

impl Block for ComplexFir {
    type Input = Complex32;
    type Output = Complex32;

    fn process(&mut self, input: &[Complex32], output: &mut [Complex32]) -> (usize, usize) {
        let n = input.len().min(output.len());
        for (y, x) in output.iter_mut().zip(input).take(n) {
            let v = self.next(Complex64::new(f64::from(x.re), f64::from(x.im)));
            *y = Complex32::new(v.re as f32, v.im as f32);
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
        ComplexFir::reset(self);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::process_in_chunks;

    #[test]
    fn matches_direct_convolution_in_any_chunking() {
        let taps: Vec<Complex64> = (0..17)
            .map(|k| Complex64::new((k as f64 * 0.3).cos(), (k as f64 * 0.7).sin()))
            .collect();
        let x: Vec<Complex32> = (0..3000)
            .map(|n| Complex32::new(((n * 31) % 17) as f32 - 8.0, ((n * 7) % 13) as f32 - 6.0))
            .collect();
        let whole = process_in_chunks(&mut ComplexFir::new(&taps).unwrap(), &x, &[3000]);
        for (n, y) in whole.iter().enumerate() {
            let want: Complex64 = (0..17.min(n + 1))
                .map(|k| taps[k] * Complex64::new(f64::from(x[n - k].re), f64::from(x[n - k].im)))
                .sum();
            assert!(
                (Complex64::new(f64::from(y.re), f64::from(y.im)) - want).norm()
                    < 1e-4 * (1.0 + want.norm())
            );
        }
        for sizes in [vec![1usize], vec![7, 1024], vec![5, 333]] {
            assert_eq!(
                process_in_chunks(&mut ComplexFir::new(&taps).unwrap(), &x, &sizes),
                whole
            );
        }
    }
}

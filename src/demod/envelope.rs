//! Envelope detector: the magnitude of the complex baseband signal.

use crate::block::Block;
use crate::Complex32;

/// Ideal envelope detector, y\[n\] = |x\[n\]| = √(I² + Q²).
///
/// On a channel-filtered full-carrier AM signal this recovers A_c·|1 + μ·m(t)|: the message plus
/// the carrier's DC, and the folded (distorted) envelope when μ·m(t) < −1.
#[derive(Debug, Clone, Copy, Default)]
pub struct EnvelopeDetector;

impl EnvelopeDetector {
    /// A new detector (it has no state).
    ///
    /// ```
    /// use amrx::block::process_to_vec;
    /// use amrx::{demod::EnvelopeDetector, Complex32};
    /// let mut det = EnvelopeDetector::new();
    /// assert_eq!(process_to_vec(&mut det, &[Complex32::new(3.0, 4.0)]), vec![5.0]);
    /// ```
    pub fn new() -> Self {
        EnvelopeDetector
    }
}

impl Block for EnvelopeDetector {
    type Input = Complex32;
    type Output = f32;

    fn process(&mut self, input: &[Complex32], output: &mut [f32]) -> (usize, usize) {
        let n = input.len().min(output.len());
        for (y, x) in output[..n].iter_mut().zip(&input[..n]) {
            *y = (x.re * x.re + x.im * x.im).sqrt();
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
        0.0
    }

    fn reset(&mut self) {}
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::process_to_vec;

    #[test]
    fn magnitude_of_known_values() {
        let input = [
            Complex32::new(0.0, 0.0),
            Complex32::new(-1.0, 0.0),
            Complex32::new(0.6, -0.8),
        ];
        assert_eq!(
            process_to_vec(&mut EnvelopeDetector::new(), &input),
            vec![0.0, 1.0, 1.0]
        );
    }

    #[test]
    fn chunk_invariant() {
        let input: Vec<Complex32> = (0..5000)
            .map(|n| Complex32::new((n as f32 * 0.37).sin(), (n as f32 * 0.11).cos()))
            .collect();
        let whole = process_to_vec(&mut EnvelopeDetector::new(), &input);
        for sizes in [vec![1usize], vec![7, 1024], vec![333, 1, 4096]] {
            let pieces =
                crate::block::process_in_chunks(&mut EnvelopeDetector::new(), &input, &sizes);
            assert_eq!(pieces, whole, "sizes {sizes:?}");
        }
    }

    #[test]
    fn short_output_consumes_only_what_fits() {
        let input = [Complex32::new(1.0, 0.0); 5];
        let mut out = [0.0f32; 3];
        assert_eq!(EnvelopeDetector::new().process(&input, &mut out), (3, 3));
    }
}

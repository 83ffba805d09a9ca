//! Envelope detector: the magnitude of the complex baseband signal.

use crate::block::SampleBlock;
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

impl SampleBlock for EnvelopeDetector {
    type In = Complex32;
    type Out = f32;

    #[inline]
    fn next(&mut self, x: Complex32) -> f32 {
        (x.re * x.re + x.im * x.im).sqrt()
    }

    /// Memoryless: no delay.
    fn sample_delay(&self) -> f64 {
        0.0
    }

    fn reset_state(&mut self) {}
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

    /// The contract, with the delay probed on AM: the envelope of 1 + ½cos is the cosine
    /// itself, undelayed.
    #[test]
    fn meets_the_block_contract() {
        use crate::block::check::{check_block, BlockCheck, DelayProbe};
        let am = |f: f64| -> Vec<Complex32> {
            (0..20_000)
                .map(|n| {
                    let envelope = 1.0 + 0.5 * (std::f64::consts::TAU * f * n as f64).cos();
                    Complex32::from_polar(envelope as f32, 0.3 * n as f32)
                })
                .collect()
        };
        let input = am(0.01);
        let make = EnvelopeDetector::new;
        check_block(&BlockCheck {
            delay_probe: Some(DelayProbe {
                signal: &am,
                tones: [0.01, 0.012],
            }),
            ..BlockCheck::new(&make, &input)
        });
    }
}

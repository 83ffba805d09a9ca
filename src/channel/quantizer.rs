//! 8-bit receiver quantisation as a channel block: samples snapped to the cu8 grid.

use crate::block::Block;
use crate::io::SampleFormat;
use crate::Complex32;

/// Quantises to unsigned 8-bit IQ and back (the cu8 convention of [`crate::io::format`]:
/// `round((x + 1)·127.5)` clipped to 0..=255, decoded as (b − 127.5)/127.5), so the output is
/// what an 8-bit receiver would record, clipping at ±1.
///
/// ```
/// use amrx::block::process_to_vec;
/// use amrx::channel::Cu8Quantizer;
/// let y = process_to_vec(&mut Cu8Quantizer::new(), &[amrx::Complex32::new(2.0, -2.0)]);
/// assert_eq!((y[0].re, y[0].im), (1.0, -1.0));
/// ```
#[derive(Debug, Clone, Copy, Default)]
pub struct Cu8Quantizer;

impl Cu8Quantizer {
    /// The quantiser.
    pub fn new() -> Self {
        Cu8Quantizer
    }
}

impl Block for Cu8Quantizer {
    type Input = Complex32;
    type Output = Complex32;

    fn process(&mut self, input: &[Complex32], output: &mut [Complex32]) -> (usize, usize) {
        let n = input.len().min(output.len());
        let mut bytes = [0u8; 2];
        for (y, x) in output.iter_mut().zip(input).take(n) {
            SampleFormat::Cu8.encode(*x, &mut bytes);
            *y = SampleFormat::Cu8.decode(&bytes);
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

    #[test]
    fn agrees_with_quantize_cu8_and_bounds_the_error() {
        // Same bytes as quantize_cu8; inside full scale the error is at most half a
        // step, 0.5/127.5.
        let x: Vec<Complex32> = (0..5000)
            .map(|n| {
                Complex32::new(
                    (n as f32 * 0.013).sin() * 0.9,
                    (n as f32 * 0.007).cos() * 0.9,
                )
            })
            .collect();
        let y = crate::block::process_to_vec(&mut Cu8Quantizer::new(), &x);
        let mut bytes = Vec::new();
        crate::channel::quantize_cu8(&x, &mut bytes);
        for ((a, b), pair) in x.iter().zip(&y).zip(bytes.chunks(2)) {
            assert_eq!(*b, SampleFormat::Cu8.decode(pair));
            assert!(
                (a - b).re.abs() <= 0.5 / 127.5 + 1e-6 && (a - b).im.abs() <= 0.5 / 127.5 + 1e-6
            );
        }
        crate::channel::assert_chunk_invariant(Cu8Quantizer::new, &x);
    }
}

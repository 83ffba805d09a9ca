//! 8-bit receiver quantisation as a channel block: samples snapped to the cu8 grid.

use crate::block::SampleBlock;
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

impl SampleBlock for Cu8Quantizer {
    type In = Complex32;
    type Out = Complex32;

    #[inline]
    fn next(&mut self, x: Complex32) -> Complex32 {
        let mut bytes = [0u8; 2];
        SampleFormat::Cu8.encode(x, &mut bytes);
        SampleFormat::Cu8.decode(&bytes)
    }

    fn sample_delay(&self) -> f64 {
        0.0
    }

    fn reset_state(&mut self) {}
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
    }

    /// No delay probe: memoryless and not linear (delay 0).
    #[test]
    fn meets_the_block_contract() {
        let x: Vec<Complex32> = (0..3000)
            .map(|n| Complex32::new((n as f32 * 0.1).sin(), 0.3))
            .collect();
        let make = Cu8Quantizer::new;
        crate::block::check::check_block(&crate::block::check::BlockCheck::new(&make, &x));
    }
}

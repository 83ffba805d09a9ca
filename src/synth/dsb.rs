//! Double-sideband suppressed-carrier modulation: s(t) = A·m(t)·e^{j2πf_c t}
//! (S. Haykin, Communication Systems, ch. 2, DSB-SC).

use super::params::{amplitude, to_c32};
use crate::block::Block;
use crate::dsp::Rotator;
use crate::{Complex32, Result};

/// DSB-SC: message in, complex baseband at the carrier offset out; A is the peak for |m| = 1.
///
/// ```
/// use amrx::block::process_to_vec;
/// use amrx::synth::DsbModulator;
/// let out = process_to_vec(&mut DsbModulator::new(0.5, 0.0, 8000.0).unwrap(), &[1.0f32, -1.0]);
/// assert_eq!((out[0].re, out[1].re), (0.5, -0.5));
/// ```
#[derive(Debug, Clone)]
pub struct DsbModulator {
    amplitude: f64,
    carrier: Rotator,
}

impl DsbModulator {
    /// Amplitude A (≥ 0), carrier offset and sample rate in Hz.
    pub fn new(amplitude_value: f64, offset_hz: f64, sample_rate: f64) -> Result<Self> {
        Ok(DsbModulator {
            amplitude: amplitude("amplitude", amplitude_value, 1.0)?,
            carrier: Rotator::new(offset_hz, sample_rate)?,
        })
    }
}

impl Block for DsbModulator {
    type Input = f32;
    type Output = Complex32;

    fn process(&mut self, input: &[f32], output: &mut [Complex32]) -> (usize, usize) {
        let n = input.len().min(output.len());
        for (y, m) in output.iter_mut().zip(input).take(n) {
            let m = if m.is_finite() { f64::from(*m) } else { 0.0 };
            *y = to_c32(self.carrier.next_sample() * (self.amplitude * m));
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

    fn reset(&mut self) {
        self.carrier.reset();
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::process_in_chunks;

    #[test]
    fn closed_form_and_chunk_invariance() {
        let (fs, f_c) = (20e3, 2500.25);
        let m: Vec<f32> = (0..8000).map(|n| ((n as f32) * 0.05).cos()).collect();
        let make = || DsbModulator::new(0.4, f_c, fs).unwrap();
        let whole = process_in_chunks(&mut make(), &m, &[8000]);
        for (n, y) in whole.iter().enumerate() {
            let want = num_complex::Complex64::from_polar(
                0.4 * f64::from(m[n]),
                std::f64::consts::TAU * f_c * n as f64 / fs,
            );
            assert!(
                (f64::from(y.re) - want.re).abs() < 1e-6
                    && (f64::from(y.im) - want.im).abs() < 1e-6
            );
        }
        for sizes in [vec![1usize], vec![7, 1024], vec![3, 500]] {
            assert_eq!(process_in_chunks(&mut make(), &m, &sizes), whole);
        }
        assert!(DsbModulator::new(f64::NAN, 0.0, fs).is_err());
    }
}

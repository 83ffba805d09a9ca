//! Double-sideband suppressed-carrier modulation: s(t) = A·m(t)·e^{j2πf_c t}
//! (S. Haykin, Communication Systems, ch. 2, DSB-SC).

use super::params::{amplitude, to_c32};
use crate::block::SampleBlock;
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

impl SampleBlock for DsbModulator {
    type In = f32;
    type Out = Complex32;

    #[inline]
    fn next(&mut self, m: f32) -> Complex32 {
        let m = if m.is_finite() { f64::from(m) } else { 0.0 };
        to_c32(self.carrier.next_sample() * (self.amplitude * m))
    }

    fn sample_delay(&self) -> f64 {
        0.0
    }

    fn reset_state(&mut self) {
        self.carrier.reset();
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::check::{check_block, BlockCheck, DelayProbe};
    use crate::block::process_in_chunks;
    use crate::dsp::test_util::real_tone;

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
        assert!(DsbModulator::new(f64::NAN, 0.0, fs).is_err());
    }

    /// Memoryless: at a 0 Hz carrier the message tone comes out with no delay.
    #[test]
    fn meets_the_block_contract() {
        let input: Vec<f32> = (0..8000).map(|n| ((n as f32) * 0.05).cos()).collect();
        let make = || DsbModulator::new(0.4, 2500.25, 20e3).unwrap();
        check_block(&BlockCheck::new(&make, &input));
        let make = || DsbModulator::new(0.4, 0.0, 20e3).unwrap();
        let signal = |f: f64| real_tone(8000, f);
        check_block(&BlockCheck {
            delay_probe: Some(DelayProbe {
                signal: &signal,
                tones: [0.01, 0.03],
            }),
            ..BlockCheck::new(&make, &input)
        });
    }
}

//! Full-carrier AM (A3E) of any message: s(t) = A_c·(1 + k_a·m(t))·e^{j2πf_c t}.
//!
//! S. Haykin, Communication Systems, ch. 2: A_c carrier amplitude, k_a amplitude sensitivity;
//! for a message with peak |m| = 1 (as every [`MessageSource`](super::MessageSource) is
//! normalised) the modulation index is μ = k_a·max|m| = k_a.

use super::params::{amplitude, modulation_index, to_c32};
use crate::block::Block;
use crate::dsp::Rotator;
use crate::{Complex32, Result};

/// Full-carrier AM: message samples in, complex baseband at the carrier offset out.
///
/// ```
/// use amrx::block::{process_to_vec};
/// use amrx::synth::AmModulator;
/// let mut am = AmModulator::new(0.5, 0.8, 0.0, 8000.0).unwrap();
/// let out = process_to_vec(&mut am, &[1.0f32, -1.0]);
/// assert!((out[0].re - 0.9).abs() < 1e-6 && (out[1].re - 0.1).abs() < 1e-6);
/// ```
#[derive(Debug, Clone)]
pub struct AmModulator {
    carrier_amplitude: f64,
    k_a: f64,
    carrier: Rotator,
}

impl AmModulator {
    /// Carrier amplitude A_c (≥ 0), modulation index μ (≥ 0; above 1 overmodulates, the
    /// envelope |1 + μm| folding through zero), carrier offset and sample rate in Hz.
    pub fn new(carrier_amplitude: f64, mu: f64, offset_hz: f64, sample_rate: f64) -> Result<Self> {
        let mu = modulation_index(mu)?;
        Ok(AmModulator {
            carrier_amplitude: amplitude("carrier amplitude", carrier_amplitude, 1.0 + mu)?,
            k_a: mu,
            carrier: Rotator::new(offset_hz, sample_rate)?,
        })
    }

    /// From the amplitude sensitivity k_a (per unit of message); errors as [`new`](Self::new).
    pub fn with_sensitivity(
        carrier_amplitude: f64,
        k_a: f64,
        offset_hz: f64,
        sample_rate: f64,
    ) -> Result<Self> {
        Self::new(carrier_amplitude, k_a, offset_hz, sample_rate)
    }

    /// The modulation index μ for a message of peak 1.
    pub fn modulation_index(&self) -> f64 {
        self.k_a
    }

    #[inline]
    fn next(&mut self, m: f32) -> Complex32 {
        let m = if m.is_finite() { f64::from(m) } else { 0.0 };
        to_c32(self.carrier.next_sample() * (self.carrier_amplitude * (1.0 + self.k_a * m)))
    }
}

impl Block for AmModulator {
    type Input = f32;
    type Output = Complex32;

    fn process(&mut self, input: &[f32], output: &mut [Complex32]) -> (usize, usize) {
        let n = input.len().min(output.len());
        for (y, m) in output.iter_mut().zip(input).take(n) {
            *y = self.next(*m);
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
    use crate::synth::{AmToneTransmitter, MessageSource, ToneMessage};

    #[test]
    fn equals_the_tone_transmitter_for_a_tone() {
        // Same formula as AmToneTransmitter (a cosine tone); f32 rounding of the message
        // bounds the difference.
        let (fs, f_m, f_c) = (48e3, 997.0, -3210.5);
        let mut msg = ToneMessage::single(f_m, fs).unwrap();
        let mut m = vec![0.0; 20_000];
        msg.fill(&mut m);
        let m32: Vec<f32> = m.iter().map(|v| *v as f32).collect();
        let got = process_in_chunks(
            &mut AmModulator::new(0.7, 1.3, f_c, fs).unwrap(),
            &m32,
            &[20_000],
        );
        let mut want = vec![Complex32::default(); 20_000];
        AmToneTransmitter::new(0.7, 1.3, f_m, f_c, fs)
            .unwrap()
            .fill(&mut want);
        for (a, b) in got.iter().zip(&want) {
            assert!((a - b).norm() < 1e-6);
        }
    }

    #[test]
    fn chunk_invariant_and_validated() {
        let m: Vec<f32> = (0..10_000).map(|n| ((n as f32) * 0.013).sin()).collect();
        let make = || AmModulator::new(0.3, 0.9, 1234.5, 20e3).unwrap();
        let whole = process_in_chunks(&mut make(), &m, &[10_000]);
        for sizes in [vec![1usize], vec![7, 1024], vec![999, 13, 2]] {
            assert_eq!(process_in_chunks(&mut make(), &m, &sizes), whole);
        }
        assert!(AmModulator::new(0.3, -0.1, 0.0, 20e3).is_err());
        assert!(AmModulator::new(-0.3, 0.1, 0.0, 20e3).is_err());
        assert!(AmModulator::new(0.3, 0.1, 10_001.0, 20e3).is_err());
    }
}

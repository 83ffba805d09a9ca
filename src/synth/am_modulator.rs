//! Full-carrier AM (A3E) of any message: s(t) = A_c·(1 + k_a·m(t))·e^{j2πf_c t}.
//!
//! S. Haykin, Communication Systems, ch. 2: A_c carrier amplitude, k_a amplitude sensitivity;
//! for a message with peak |m| = 1 (as every [`MessageSource`](super::MessageSource) is
//! normalised) the modulation index is μ = k_a·max|m| = k_a.

use super::params::{amplitude, modulation_index, to_c32};
use crate::block::SampleBlock;
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
            carrier_amplitude: amplitude("carrier_amplitude", carrier_amplitude, 1.0 + mu)?,
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
}

impl SampleBlock for AmModulator {
    type In = f32;
    type Out = Complex32;

    #[inline]
    fn next(&mut self, m: f32) -> Complex32 {
        let m = if m.is_finite() { f64::from(m) } else { 0.0 };
        to_c32(self.carrier.next_sample() * (self.carrier_amplitude * (1.0 + self.k_a * m)))
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

    /// Memoryless: at a 0 Hz carrier the message tone comes out at its own frequency with
    /// no delay.
    #[test]
    fn meets_the_block_contract() {
        let input: Vec<f32> = (0..10_000).map(|n| ((n as f32) * 0.013).sin()).collect();
        let make = || AmModulator::new(0.3, 0.9, 1234.5, 20e3).unwrap();
        check_block(&BlockCheck::new(&make, &input));
        let make = || AmModulator::new(0.3, 0.9, 0.0, 20e3).unwrap();
        let signal = |f: f64| real_tone(10_000, f);
        check_block(&BlockCheck {
            delay_probe: Some(DelayProbe {
                signal: &signal,
                tones: [0.01, 0.03],
            }),
            ..BlockCheck::new(&make, &input)
        });
    }

    #[test]
    fn validated() {
        assert!(AmModulator::new(0.3, -0.1, 0.0, 20e3).is_err());
        assert!(AmModulator::new(-0.3, 0.1, 0.0, 20e3).is_err());
        assert!(AmModulator::new(0.3, 0.1, 10_001.0, 20e3).is_err());
    }
}

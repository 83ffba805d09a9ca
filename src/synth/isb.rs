//! Independent sideband (B8E-style): two messages, one on each side of the carrier.
//!
//! s = A·[(m̃_U + jĤ{m̃_U}) + (m̃_L − jĤ{m̃_L})] + A_c at the carrier offset (the sum of an
//! upper and a lower SSB, S. Haykin, Communication Systems, ch. 2). Carrier level: relative
//! to the peak envelope power with full-scale tones on both sidebands, whose envelope peaks
//! at A_c + 2A; A_c = 2rA/(1 − r), r = 10^(carrier_db/20); `None` suppresses it.

use super::hilbert::AnalyticFilter;
use super::params::{amplitude, carrier_amplitude, to_c32};
use crate::block::SampleBlock;
use crate::dsp::Rotator;
use crate::{Complex32, Result};

/// ISB modulator: `[lower, upper]` message pairs in, complex baseband at the offset out.
///
/// ```
/// use amrx::synth::IsbModulator;
/// let isb = IsbModulator::new(0.25, None, 100.0, 0.0, 8000.0).unwrap();
/// assert_eq!(isb.carrier_amplitude(), 0.0);
/// ```
#[derive(Debug, Clone)]
pub struct IsbModulator {
    amplitude: f64,
    carrier_amplitude: f64,
    lower: AnalyticFilter,
    upper: AnalyticFilter,
    carrier: Rotator,
}

impl IsbModulator {
    /// Amplitude A per sideband, carrier level, Hilbert lower edge, offset, rate (as
    /// [`SsbModulator::new`](super::SsbModulator::new)).
    pub fn new(
        amplitude_value: f64,
        carrier_db: Option<f64>,
        hilbert_low_hz: f64,
        offset_hz: f64,
        sample_rate: f64,
    ) -> Result<Self> {
        let a = amplitude("amplitude", amplitude_value, 3.0)?;
        Ok(IsbModulator {
            amplitude: a,
            carrier_amplitude: carrier_amplitude(carrier_db, 2.0 * a)?,
            lower: AnalyticFilter::new(hilbert_low_hz, sample_rate)?,
            upper: AnalyticFilter::new(hilbert_low_hz, sample_rate)?,
            carrier: Rotator::new(offset_hz, sample_rate)?,
        })
    }

    /// The carrier amplitude A_c.
    pub fn carrier_amplitude(&self) -> f64 {
        self.carrier_amplitude
    }
}

impl SampleBlock for IsbModulator {
    type In = [f32; 2];
    type Out = Complex32;

    #[inline]
    fn next(&mut self, m: [f32; 2]) -> Complex32 {
        let [lo, up] = m;
        let l = self.lower.next(f64::from(lo)).conj();
        let u = self.upper.next(f64::from(up));
        let env = (l + u) * self.amplitude + self.carrier_amplitude;
        to_c32(env * self.carrier.next_sample())
    }

    /// The Hilbert FIRs' (N − 1)/2 (both sidebands use the same design).
    fn sample_delay(&self) -> f64 {
        self.upper.delay() as f64
    }

    fn reset_state(&mut self) {
        self.lower.reset();
        self.upper.reset();
        self.carrier.reset();
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::check::{check_block, BlockCheck, DelayProbe};
    use crate::block::process_in_chunks;
    use crate::dsp::test_util::real_tone;
    use crate::dsp::test_util::{cosine, line_amplitudes};

    #[test]
    fn each_message_lands_on_its_own_side() {
        // Lower message 600 Hz, upper 1400 Hz: lines at f_c − 600 and f_c + 1400 of amplitude
        // A; their mirrors ≥ 60 dB down (the SSB requirement, per sideband).
        let (fs, f_c) = (16e3, 1000.0);
        let lo = cosine(600.0, fs, 48_000);
        let up = cosine(1400.0, fs, 48_000);
        let input: Vec<[f32; 2]> = lo.iter().zip(&up).map(|(a, b)| [*a, *b]).collect();
        let mut isb = IsbModulator::new(0.3, None, 150.0, f_c, fs).unwrap();
        let z = process_in_chunks(&mut isb, &input, &[48_000]);
        let settled = &z[16_000..];
        let (_, lower, _) = line_amplitudes(settled, f_c, 600.0, fs);
        let (mirror_l, _, _) = line_amplitudes(settled, f_c, 600.0, fs);
        let (upper, mirror_u, _) = line_amplitudes(settled, f_c, 1400.0, fs);
        eprintln!(
            "ISB: lower {lower:.4}, upper {upper:.4}, mirrors {:.1} / {:.1} dB",
            20.0 * (mirror_l / lower).log10(),
            20.0 * (mirror_u / upper).log10()
        );
        assert!((lower - 0.3).abs() < 1e-3 && (upper - 0.3).abs() < 1e-3);
        assert!(mirror_l < 1e-3 * lower && mirror_u < 1e-3 * upper);
    }

    /// The probe puts a tone on the upper channel only, at a 0 Hz carrier, so it comes out at
    /// its own frequency after the Hilbert FIR's (N − 1)/2; tones 0.003 apart as for SSB.
    #[test]
    fn meets_the_block_contract() {
        let input: Vec<[f32; 2]> = (0..5000)
            .map(|n| [((n as f32) * 0.3).sin(), ((n as f32) * 0.11).cos()])
            .collect();
        let make = || IsbModulator::new(0.3, Some(-20.0), 200.0, 300.0, 12e3).unwrap();
        check_block(&BlockCheck::new(&make, &input));
        let make = || IsbModulator::new(0.3, Some(-20.0), 200.0, 0.0, 12e3).unwrap();
        let signal = |f: f64| {
            real_tone(20_000, f)
                .into_iter()
                .map(|u| [0.0, u])
                .collect::<Vec<_>>()
        };
        check_block(&BlockCheck {
            delay_probe: Some(DelayProbe {
                signal: &signal,
                tones: [0.05, 0.053],
            }),
            ..BlockCheck::new(&make, &input)
        });
    }
}

//! Single-sideband modulation by the phasing method, with a suppressed, reduced or full
//! carrier (J3E, R3E, H3E).
//!
//! Upper sideband: s = A·(m̃ + jĤ{m̃}) + A_c, lower: s = A·(m̃ − jĤ{m̃}) + A_c, at the carrier
//! offset (S. Haykin, Communication Systems, ch. 2, SSB; m̃ is m delayed by the Hilbert FIR's
//! K samples, see [`AnalyticFilter`]). A full-scale tone gives a sideband of amplitude A.
//!
//! Carrier level convention: `carrier_db` is the carrier power relative to the peak envelope
//! power of the emission modulated by a full-scale single tone, whose envelope peaks at
//! A_c + A; so A_c = r·A/(1 − r), r = 10^(carrier_db/20). −6.02 dB gives A_c = A (an H3E-style
//! full carrier); R3E uses a reduced level such as −16 or −26 dB (values from memory);
//! `None` suppresses the carrier (J3E).

use super::hilbert::AnalyticFilter;
use super::params::{amplitude, carrier_amplitude, to_c32};
use crate::block::SampleBlock;
use crate::dsp::Rotator;
use crate::{Complex32, Result};

/// Which sideband an SSB emission keeps.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Sideband {
    /// Above the carrier.
    Upper,
    /// Below the carrier.
    Lower,
}

/// SSB modulator: message in, complex baseband at the carrier offset out.
///
/// ```
/// use amrx::synth::{Sideband, SsbModulator};
/// let ssb = SsbModulator::new(Sideband::Upper, 0.5, None, 100.0, 0.0, 8000.0).unwrap();
/// assert_eq!(ssb.carrier_amplitude(), 0.0);
/// ```
#[derive(Debug, Clone)]
pub struct SsbModulator {
    sign: f64,
    amplitude: f64,
    carrier_amplitude: f64,
    analytic: AnalyticFilter,
    carrier: Rotator,
}

impl SsbModulator {
    /// Sideband, sideband amplitude A (≥ 0), carrier level (see the module docs), the lowest
    /// message frequency the Hilbert FIR must treat exactly (`hilbert_low_hz`, in (0, fs/4)),
    /// carrier offset and sample rate in Hz.
    pub fn new(
        sideband: Sideband,
        amplitude_value: f64,
        carrier_db: Option<f64>,
        hilbert_low_hz: f64,
        offset_hz: f64,
        sample_rate: f64,
    ) -> Result<Self> {
        let a = amplitude("amplitude", amplitude_value, 2.0)?;
        Ok(SsbModulator {
            sign: if sideband == Sideband::Upper {
                1.0
            } else {
                -1.0
            },
            amplitude: a,
            carrier_amplitude: carrier_amplitude(carrier_db, a)?,
            analytic: AnalyticFilter::new(hilbert_low_hz, sample_rate)?,
            carrier: Rotator::new(offset_hz, sample_rate)?,
        })
    }

    /// The carrier amplitude A_c the level convention gave.
    pub fn carrier_amplitude(&self) -> f64 {
        self.carrier_amplitude
    }

    /// Delay of the message through the Hilbert FIR, samples.
    pub fn message_delay(&self) -> usize {
        self.analytic.delay()
    }
}

impl SampleBlock for SsbModulator {
    type In = f32;
    type Out = Complex32;

    #[inline]
    fn next(&mut self, m: f32) -> Complex32 {
        let z = self.analytic.next(f64::from(m));
        let envelope = num_complex::Complex64::new(
            self.carrier_amplitude + self.amplitude * z.re,
            self.sign * self.amplitude * z.im,
        );
        to_c32(envelope * self.carrier.next_sample())
    }

    /// The Hilbert FIR's (N − 1)/2: the message, and so every sideband line, comes out that
    /// late (the carrier is not delayed).
    fn sample_delay(&self) -> f64 {
        self.analytic.delay() as f64
    }

    fn reset_state(&mut self) {
        self.analytic.reset();
        self.carrier.reset();
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::check::{check_block, BlockCheck, DelayProbe};
    use crate::block::{process_in_chunks, Block};
    use crate::dsp::test_util::line_amplitudes;
    use crate::dsp::test_util::real_tone;

    #[test]
    fn opposite_sideband_is_suppressed_by_60_db() {
        // Requirement ≥ 60 dB; tones on exact DFT bins (whole cycles) so leakage is nil.
        let (fs, f_c) = (16e3, 2000.0);
        for sideband in [Sideband::Upper, Sideband::Lower] {
            for f in [250.0, 1000.0, 3000.0] {
                let mut ssb = SsbModulator::new(sideband, 0.5, None, 150.0, f_c, fs).unwrap();
                let m: Vec<f32> = (0..64_000)
                    .map(|n| (std::f64::consts::TAU * f * n as f64 / fs).cos() as f32)
                    .collect();
                let z = process_in_chunks(&mut ssb, &m, &[4096]);
                let (up, down, _) = line_amplitudes(&z[16_000..], f_c, f, fs);
                let (want, other) = if sideband == Sideband::Upper {
                    (up, down)
                } else {
                    (down, up)
                };
                let db = 20.0 * (want / other).log10();
                eprintln!(
                    "SSB {sideband:?} {f} Hz: wanted {want:.5}, opposite sideband −{db:.1} dB"
                );
                assert!(
                    db >= 60.0 && (want - 0.5).abs() < 1e-3,
                    "{sideband:?} {f}: {db} dB, {want}"
                );
            }
        }
    }

    #[test]
    fn carrier_levels() {
        let (fs, f_c, f) = (16e3, 2000.0, 1000.0);
        let m: Vec<f32> = (0..32_000)
            .map(|n| (std::f64::consts::TAU * f * n as f64 / fs).cos() as f32)
            .collect();
        for db in [-6.02, -16.0, -26.0] {
            let mut ssb =
                SsbModulator::new(Sideband::Upper, 0.2, Some(db), 150.0, f_c, fs).unwrap();
            let z = process_in_chunks(&mut ssb, &m, &[32_000]);
            let settled = &z[8000..];
            let (_, _, car) = line_amplitudes(settled, f_c, f, fs);
            let pep = settled
                .iter()
                .map(|v| f64::from(v.norm_sqr()))
                .fold(0.0, f64::max);
            let got = 10.0 * (car * car / pep).log10();
            eprintln!("carrier {db} dB re PEP: measured {got:.3} dB");
            assert!((got - db).abs() < 0.05, "{db}: {got}");
        }
    }

    /// The message goes through the Hilbert FIR: the probe (upper sideband at a 0 Hz carrier,
    /// so a message tone comes out at its own frequency) must read its (N − 1)/2. Tones at
    /// 0.05 and 0.053 of the rate, in the band, 0.003 apart < 1/(2·delay) for up to 160 taps.
    #[test]
    fn meets_the_block_contract() {
        let input: Vec<f32> = (0..6000)
            .map(|n| ((n as f32) * 0.21).sin() * ((n as f32) * 0.003).cos())
            .collect();
        let make =
            || SsbModulator::new(Sideband::Lower, 0.3, Some(-16.0), 200.0, -700.0, 12e3).unwrap();
        check_block(&BlockCheck::new(&make, &input));
        let make =
            || SsbModulator::new(Sideband::Upper, 0.3, Some(-16.0), 200.0, 0.0, 12e3).unwrap();
        let signal = |f: f64| real_tone(20_000, f);
        check_block(&BlockCheck {
            delay_probe: Some(DelayProbe {
                signal: &signal,
                tones: [0.05, 0.053],
            }),
            ..BlockCheck::new(&make, &input)
        });
        assert!(make().delay() < 80.0, "{}", make().delay());
    }
}

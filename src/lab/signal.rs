//! The tone test signal each detector is measured with: full-carrier AM, DSB-SC, SSB (one
//! complex line), or a carrier with one sideband line (VSB with the tone above the vestige),
//! at complex baseband with the carrier at an offset.

use crate::dsp::phasor::Phasor;
use crate::synth::AmToneTransmitter;
use crate::{Complex32, Error, Result};

/// Which tone-modulated signal a detector is fed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TestSignal {
    /// A_c·(1 + μ cos ω_m t)·e^{jω_c t}.
    FullCarrier,
    /// A·cos(ω_m t)·e^{jω_c t}.
    SuppressedCarrier,
    /// A·e^{j(ω_c + ω_m)t}.
    UpperSideband,
    /// A·e^{j(ω_c − ω_m)t}.
    LowerSideband,
    /// A_c·(1 + (μ/2)·e^{jω_m t})·e^{jω_c t}: the carrier and the upper line of full-carrier
    /// AM, which is what a vestigial-sideband transmitter sends for a tone above its vestige.
    Vestigial,
}

/// A generator of one [`TestSignal`] scaled to a given mean power mean|s|².
#[derive(Debug, Clone)]
pub enum ToneSource {
    /// Full-carrier AM from the project's transmitter.
    FullCarrier(AmToneTransmitter),
    /// DSB-SC or SSB, phases in f64 cycles.
    Suppressed {
        /// The signal kind.
        kind: TestSignal,
        /// Peak amplitude A.
        amplitude: f64,
        /// Tone step in cycles per sample.
        tone_step: f64,
        /// Carrier step in cycles per sample.
        carrier_step: f64,
        /// Sample index.
        n: u64,
    },
    /// A carrier and its upper line, phases in f64 cycles.
    Vestigial {
        /// Carrier amplitude A_c.
        carrier: f64,
        /// Modulation index μ (the line has amplitude μ·A_c/2).
        mu: f64,
        /// Tone step in cycles per sample.
        tone_step: f64,
        /// Carrier step in cycles per sample.
        carrier_step: f64,
        /// Sample index.
        n: u64,
    },
}

impl ToneSource {
    /// A source of `kind` with mean power `power`, index `mu` (full carrier only), tone and
    /// carrier offset in Hz, at `rate`.
    pub fn new(
        kind: TestSignal,
        power: f64,
        mu: f64,
        tone_hz: f64,
        offset_hz: f64,
        rate: f64,
    ) -> Result<Self> {
        if !(power.is_finite() && power > 0.0) {
            return Err(Error::parameter("signal_power", power, "must be positive"));
        }
        match kind {
            TestSignal::FullCarrier => {
                // mean|s|² = A_c²(1 + μ²/2) for a tone.
                let a_c = (power / (1.0 + mu * mu / 2.0)).sqrt();
                let tx = AmToneTransmitter::new(a_c, mu, tone_hz, offset_hz, rate)?;
                Ok(ToneSource::FullCarrier(tx))
            }
            TestSignal::Vestigial => {
                AmToneTransmitter::new(1.0, mu, tone_hz, offset_hz, rate)?;
                // mean|s|² = A_c²(1 + μ²/4): the carrier and one line of amplitude μA_c/2.
                Ok(ToneSource::Vestigial {
                    carrier: (power / (1.0 + mu * mu / 4.0)).sqrt(),
                    mu,
                    tone_step: tone_hz / rate,
                    carrier_step: offset_hz / rate,
                    n: 0,
                })
            }
            _ => {
                // Validates the tone and offset the same way as the full-carrier transmitter.
                AmToneTransmitter::new(1.0, 0.0, tone_hz, offset_hz, rate)?;
                let mean_square = if kind == TestSignal::SuppressedCarrier {
                    0.5
                } else {
                    1.0
                };
                Ok(ToneSource::Suppressed {
                    kind,
                    amplitude: (power / mean_square).sqrt(),
                    tone_step: tone_hz / rate,
                    carrier_step: offset_hz / rate,
                    n: 0,
                })
            }
        }
    }

    /// Fills `out` with the next samples.
    pub fn fill(&mut self, out: &mut [Complex32]) {
        match self {
            ToneSource::FullCarrier(tx) => tx.fill(out),
            ToneSource::Vestigial {
                carrier,
                mu,
                tone_step,
                carrier_step,
                n,
            } => {
                let (mut c, mut t) = (Phasor::at(*carrier_step, *n), Phasor::at(*tone_step, *n));
                for s in out.iter_mut() {
                    // A_c·e^{jω_c t}·(1 + (μ/2)·e^{jω_m t}).
                    let (tc, ts) = t.value();
                    let line = (1.0 + *mu / 2.0 * tc, *mu / 2.0 * ts);
                    let (re, im) = times(c.value(), line);
                    *s = Complex32::new((*carrier * re) as f32, (*carrier * im) as f32);
                    c.advance();
                    t.advance();
                }
                *n += out.len() as u64;
            }
            ToneSource::Suppressed {
                kind,
                amplitude,
                tone_step,
                carrier_step,
                n,
            } => {
                let (mut c, mut t) = (Phasor::at(*carrier_step, *n), Phasor::at(*tone_step, *n));
                let a = *amplitude;
                for s in out.iter_mut() {
                    let ((cc, cs), (tc, ts)) = (c.value(), t.value());
                    let (re, im) = match kind {
                        TestSignal::SuppressedCarrier => (a * tc * cc, a * tc * cs),
                        TestSignal::UpperSideband => times((cc, cs), (a * tc, a * ts)),
                        _ => times((cc, cs), (a * tc, -a * ts)),
                    };
                    *s = Complex32::new(re as f32, im as f32);
                    c.advance();
                    t.advance();
                }
                *n += out.len() as u64;
            }
        }
    }
}

/// (a + jb)(c + jd) as pairs.
#[inline(always)]
fn times((a, b): (f64, f64), (c, d): (f64, f64)) -> (f64, f64) {
    (a * c - b * d, a * d + b * c)
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::f64::consts::TAU;

    fn mean_power(x: &[Complex32]) -> f64 {
        x.iter().map(|z| f64::from(z.norm_sqr())).sum::<f64>() / x.len() as f64
    }

    /// Fills cut anywhere give the samples of one fill.
    #[test]
    fn fills_do_not_depend_on_their_cuts() {
        for kind in [
            TestSignal::SuppressedCarrier,
            TestSignal::UpperSideband,
            TestSignal::LowerSideband,
            TestSignal::Vestigial,
        ] {
            let make = || ToneSource::new(kind, 0.5, 0.6, 1000.0, -2500.0, 96_000.0).unwrap();
            let mut whole = vec![Complex32::default(); 5_000];
            make().fill(&mut whole);
            let mut cut = vec![Complex32::default(); 5_000];
            let mut source = make();
            for part in cut.chunks_mut(777) {
                source.fill(part);
            }
            assert_eq!(whole, cut, "{kind:?}");
        }
    }

    #[test]
    fn every_kind_has_the_requested_power() {
        // Whole tone periods (96 kS/s, 1 kHz, 9600 samples), so the means are exact up to f32.
        for kind in [
            TestSignal::FullCarrier,
            TestSignal::SuppressedCarrier,
            TestSignal::UpperSideband,
            TestSignal::LowerSideband,
            TestSignal::Vestigial,
        ] {
            let mut src = ToneSource::new(kind, 0.1, 0.5, 1000.0, 12_000.0, 96_000.0).unwrap();
            let mut x = vec![Complex32::default(); 9600];
            src.fill(&mut x);
            assert!((mean_power(&x) / 0.1 - 1.0).abs() < 1e-5, "{kind:?}");
        }
    }

    #[test]
    fn sidebands_sit_on_the_right_side() {
        // The phase advance per sample of an SSB line is 2π(f_c ± f_m)/fs.
        for (kind, want) in [
            (TestSignal::UpperSideband, 13_000.0),
            (TestSignal::LowerSideband, 11_000.0),
        ] {
            let mut src = ToneSource::new(kind, 1.0, 0.0, 1000.0, 12_000.0, 96_000.0).unwrap();
            let mut x = vec![Complex32::default(); 2];
            src.fill(&mut x);
            let f = f64::from((x[1] * x[0].conj()).arg()) / TAU * 96_000.0;
            assert!((f - want).abs() < 0.1, "{kind:?}: {f}");
        }
    }

    #[test]
    fn rejects_bad_parameters() {
        assert!(ToneSource::new(TestSignal::UpperSideband, 0.0, 0.0, 1e3, 0.0, 8e3).is_err());
        assert!(ToneSource::new(TestSignal::UpperSideband, 1.0, 0.0, 5e3, 0.0, 8e3).is_err());
        assert!(ToneSource::new(TestSignal::FullCarrier, 1.0, -1.0, 1e3, 0.0, 8e3).is_err());
    }
}

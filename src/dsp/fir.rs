//! Direct-form FIR filter with real taps for real or complex samples.

use crate::block::{Block, PIECE};
use crate::dsp::dot::Taps;
use crate::dsp::history::History;
use crate::dsp::kaiser::{design_lowpass, LowpassSpec};
use crate::sample::Sample;
use crate::{Error, Result};

/// An FIR filter, one output per input: `y[n] = Σ h[k]·x[n−k]`, starting from zeroed history.
/// Non-finite input samples are treated as zero.
#[derive(Debug, Clone)]
pub struct Fir<T: Sample> {
    /// The taps padded with zeros to a multiple of four (see [`Taps::padded`]).
    taps: Taps,
    num_taps: usize,
    history: History<T>,
}

/// Checks taps for any FIR-type block: at least one, all finite.
pub(crate) fn validate_taps(taps: &[f32]) -> Result<()> {
    if taps.is_empty() {
        return Err(Error::parameter(
            "filter taps",
            "[]",
            "need at least one tap",
        ));
    }
    if let Some(bad) = taps.iter().find(|h| !h.is_finite()) {
        return Err(Error::parameter(
            "filter taps",
            bad,
            "every tap must be finite",
        ));
    }
    Ok(())
}

impl<T: Sample> Fir<T> {
    /// A filter with `taps` (at least one, all finite).
    pub fn new(taps: &[f32]) -> Result<Self> {
        validate_taps(taps)?;
        let padded = Taps::padded(taps);
        Ok(Fir {
            history: History::new(padded.len(), PIECE),
            taps: padded,
            num_taps: taps.len(),
        })
    }

    /// Number of taps.
    pub fn num_taps(&self) -> usize {
        self.num_taps
    }
}

impl<T: Sample> Block for Fir<T> {
    type Input = T;
    type Output = T;

    fn process(&mut self, input: &[T], output: &mut [T]) -> (usize, usize) {
        let n = input.len().min(output.len());
        let mut done = 0;
        while done < n {
            let take = self.history.make_room().min(n - done);
            let start = self.history.len();
            self.history.push(&input[done..done + take]);
            // The run's outputs from one call (`Taps::dots_strided`: an output is the same in
            // any run, so chunking cannot change it).
            self.taps.dots_strided(
                self.history.windows(start + 1, take - 1),
                1,
                &mut output[done..done + take],
            );
            done += take;
        }
        (n, n)
    }

    fn max_output_len(&self, input_len: usize) -> usize {
        input_len
    }

    fn rate_ratio(&self) -> f64 {
        1.0
    }

    /// (taps − 1)/2: exact for the symmetric (linear-phase) taps this crate designs.
    fn delay(&self) -> f64 {
        (self.num_taps as f64 - 1.0) / 2.0
    }

    fn reset(&mut self) {
        self.history.reset();
    }
}

/// The audio low-pass used after detection: passband to `bandwidth_hz`, stopband at
/// 1.25 × bandwidth (capped at fs/2), 60 dB (common practice, no source).
pub fn audio_lowpass(bandwidth_hz: f64, sample_rate: f64) -> Result<Fir<f32>> {
    let spec = LowpassSpec {
        passband_hz: bandwidth_hz,
        stopband_hz: (1.25 * bandwidth_hz).min(sample_rate / 2.0),
        attenuation_db: 60.0,
        sample_rate,
    };
    Fir::new(&design_lowpass(&spec)?)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::check::{check_block, BlockCheck, DelayProbe};
    use crate::block::process_to_vec;
    use crate::dsp::test_util::{complex_tone, random_complex, random_real, real_tone};
    use crate::Complex32;

    /// The textbook sum y[n] = Σ h[k]·x[n−k], in f64.
    fn naive(taps: &[f32], x: &[f64]) -> Vec<f64> {
        (0..x.len())
            .map(|n| {
                (0..taps.len())
                    .filter(|&k| k <= n)
                    .map(|k| taps[k] as f64 * x[n - k])
                    .sum()
            })
            .collect()
    }

    #[test]
    fn equals_naive_filter_real_and_complex() {
        for ntaps in [1, 2, 7, 8, 9, 33, 101] {
            let taps = random_real(ntaps, ntaps as u64);
            let x = random_complex(5000, 9);
            let got = process_to_vec(&mut Fir::<Complex32>::new(&taps).unwrap(), &x);
            let re = naive(&taps, &x.iter().map(|c| c.re as f64).collect::<Vec<_>>());
            let im = naive(&taps, &x.iter().map(|c| c.im as f64).collect::<Vec<_>>());
            let xr: Vec<f32> = x.iter().map(|c| c.re).collect();
            let got_r = process_to_vec(&mut Fir::<f32>::new(&taps).unwrap(), &xr);
            // f32 accumulation of ≤ 101 terms of size ≤ 1: error well below 1e-4.
            for n in 0..x.len() {
                assert!(
                    (got[n].re as f64 - re[n]).abs() < 1e-4,
                    "taps {ntaps} n {n}"
                );
                assert!((got[n].im as f64 - im[n]).abs() < 1e-4);
                assert!((got_r[n] as f64 - re[n]).abs() < 1e-4);
            }
        }
    }

    /// A designed (symmetric) low-pass, so (taps − 1)/2 is its true group delay; probe tones
    /// in the passband (0.05 fs), 0.004 apart < 1/(2·delay) for its ~100 taps. Splits
    /// straddle the history refill at PIECE inputs.
    #[test]
    fn meets_the_block_contract() {
        let taps = design_lowpass(&LowpassSpec {
            passband_hz: 0.05,
            stopband_hz: 0.08,
            attenuation_db: 60.0,
            sample_rate: 1.0,
        })
        .unwrap();
        let x = random_complex(20_000, 4);
        let make = || Fir::<Complex32>::new(&taps).unwrap();
        let signal = |f: f64| complex_tone(20_000, f);
        check_block(&BlockCheck {
            delay_probe: Some(DelayProbe {
                signal: &signal,
                tones: [0.01, 0.014],
            }),
            ..BlockCheck::new(&make, &x)
        });
        let xr = random_real(20_000, 5);
        let make = || Fir::<f32>::new(&taps).unwrap();
        let signal = |f: f64| real_tone(20_000, f);
        check_block(&BlockCheck {
            delay_probe: Some(DelayProbe {
                signal: &signal,
                tones: [0.01, 0.014],
            }),
            ..BlockCheck::new(&make, &xr)
        });
    }

    #[test]
    fn non_finite_input_does_not_reach_output() {
        let mut fir = Fir::<f32>::new(&[0.5, 0.5]).unwrap();
        let y = process_to_vec(&mut fir, &[1.0, f32::NAN, 1.0, f32::INFINITY]);
        assert_eq!(y, vec![0.5, 0.5, 0.5, 0.5]);
        assert!(Fir::<f32>::new(&[]).is_err());
        assert!(Fir::<f32>::new(&[f32::NAN]).is_err());
    }

    #[test]
    fn audio_lowpass_passes_and_stops() {
        let mut lp = audio_lowpass(5000.0, 48_000.0).unwrap();
        let tone = |f: f64| -> Vec<f32> {
            (0..8000)
                .map(|n| (std::f64::consts::TAU * f * n as f64 / 48_000.0).sin() as f32)
                .collect()
        };
        let peak = |y: &[f32]| y[4000..].iter().fold(0.0f32, |m, v| m.max(v.abs()));
        lp.reset();
        let pass = peak(&process_to_vec(&mut lp, &tone(3000.0)));
        lp.reset();
        let stop = peak(&process_to_vec(&mut lp, &tone(7000.0)));
        // 60 dB design: passband within 0.01 of unity, stopband below −59 dB (1 dB slack).
        assert!((pass - 1.0).abs() < 0.01, "pass {pass}");
        assert!(stop < 10f32.powf(-59.0 / 20.0), "stop {stop}");
        assert!(audio_lowpass(24_000.0, 48_000.0).is_err());
    }
}

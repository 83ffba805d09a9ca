//! Polyphase decimating FIR: filters and keeps one sample in `factor`, computing only those.
//!
//! Output m is `y[m] = Σ h[k]·x[mM − k]` with zeroed history before `x[0]`, the same alignment
//! as `scipy.signal.upfirdn(h, x, 1, M)`: the first output is `h[0]·x[0]`. Each kept output is one
//! contiguous dot product over the history window (the polyphase cost of N/M multiplies per
//! input, with a SIMD-friendly inner loop).

use crate::block::{Block, PIECE};
use crate::dsp::dot::Taps;
use crate::dsp::fir::validate_taps;
use crate::dsp::history::{store_finite, History};
use crate::sample::Sample;
use crate::{Error, Result};

/// FIR low-pass followed by down-sampling by `factor`, computing only the kept outputs.
/// Non-finite input samples are treated as zero.
#[derive(Debug, Clone)]
pub struct FirDecimator<T: Sample> {
    /// The taps padded with zeros to a multiple of four (see [`Taps::padded`]).
    taps: Taps,
    num_taps: usize,
    history: History<T>,
    factor: usize,
    /// Inputs still to take before the next output is due (1..=factor).
    until_output: usize,
}

impl<T: Sample> FirDecimator<T> {
    /// A decimator by `factor` (≥ 1) with `taps` (at least one, all finite).
    pub fn new(taps: &[f32], factor: usize) -> Result<Self> {
        validate_taps(taps)?;
        if factor == 0 {
            return Err(Error::parameter(
                "decimation factor",
                0,
                "must be at least 1",
            ));
        }
        let padded = Taps::padded(taps);
        Ok(FirDecimator {
            history: History::new(padded.len(), PIECE.max(factor)),
            taps: padded,
            num_taps: taps.len(),
            factor,
            until_output: 1,
        })
    }

    /// The decimation factor.
    pub fn factor(&self) -> usize {
        self.factor
    }

    /// Number of taps.
    pub fn num_taps(&self) -> usize {
        self.num_taps
    }

    /// Exactly how many outputs the next `input_len` inputs produce from the current state.
    pub fn output_len(&self, input_len: usize) -> usize {
        if input_len < self.until_output {
            0
        } else {
            1 + (input_len - self.until_output) / self.factor
        }
    }

    /// [`Block::process`] with each run of input written into the filter's history by
    /// `through(run, slot)` instead of copied there: `through` must fill `slot` (as long as
    /// `run`) with finite samples, e.g. a [`Mixer`](crate::dsp::Mixer)'s product, so the mixed
    /// samples are stored once (callgrind on the am command: copying the mixer's output into
    /// the history cost 3 instructions per input). The outputs are those of `process` on the
    /// samples `through` wrote.
    pub fn process_through(
        &mut self,
        input: &[T],
        output: &mut [T],
        mut through: impl FnMut(&[T], &mut [T]),
    ) -> (usize, usize) {
        // Whole runs of input go into the history at once (one pass that vectorises), then
        // every output due inside the run is one dot product over its window (callgrind on
        // the am chain: a push and a bounds check per output cost 28 instructions per input).
        let mut consumed = 0;
        let mut produced = 0;
        while consumed < input.len() {
            let slots = output.len() - produced;
            let left = input.len() - consumed;
            let take = self
                .history
                .run_len(self.until_output, slots, self.factor, left);
            if take == 0 {
                break;
            }
            let start = self.history.len();
            let run = &input[consumed..consumed + take];
            self.history.push_with(take, |slot| through(run, slot));
            consumed += take;
            let stop = start + take;
            let mut end = start + self.until_output;
            // Every output due inside the run, from one call (`Taps::dots_strided`: an
            // output is the same in any run, so chunking cannot change it).
            let m = self.factor;
            if end <= stop {
                let count = (stop - end) / m + 1;
                self.taps.dots_strided(
                    self.history.windows(end, (count - 1) * m),
                    m,
                    &mut output[produced..produced + count],
                );
                produced += count;
                end += count * m;
            }
            self.until_output = end - stop;
        }
        (consumed, produced)
    }
}

impl<T: Sample> Block for FirDecimator<T> {
    type Input = T;
    type Output = T;

    fn process(&mut self, input: &[T], output: &mut [T]) -> (usize, usize) {
        self.process_through(input, output, |x, slot| store_finite(slot, x))
    }

    /// ⌈n/M⌉: reached when the next input is due for output.
    fn max_output_len(&self, input_len: usize) -> usize {
        input_len.div_ceil(self.factor)
    }

    fn rate_ratio(&self) -> f64 {
        1.0 / self.factor as f64
    }

    /// (taps − 1)/2 input samples, exact for symmetric taps.
    fn delay(&self) -> f64 {
        (self.num_taps as f64 - 1.0) / 2.0
    }

    fn reset(&mut self) {
        self.history.reset();
        self.until_output = 1;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::check::{check_block, BlockCheck, DelayProbe};
    use crate::block::process_to_vec;
    use crate::dsp::test_util::{
        assert_chunk_invariant, complex_tone, random_complex, random_real,
    };
    use crate::Complex32;

    /// Filter every sample (textbook convolution in f64), then keep every M-th from index 0.
    fn naive(taps: &[f32], x: &[Complex32], m: usize) -> Vec<(f64, f64)> {
        (0..x.len())
            .step_by(m)
            .map(|n| {
                (0..taps.len().min(n + 1)).fold((0.0, 0.0), |(re, im), k| {
                    let h = taps[k] as f64;
                    (re + h * x[n - k].re as f64, im + h * x[n - k].im as f64)
                })
            })
            .collect()
    }

    #[test]
    fn equals_filter_then_discard() {
        for (ntaps, m) in [(1, 1), (25, 5), (48, 10), (17, 2), (5, 9), (64, 3)] {
            let taps = random_real(ntaps, m as u64);
            let x = random_complex(4001, 6);
            let got = process_to_vec(&mut FirDecimator::new(&taps, m).unwrap(), &x);
            let want = naive(&taps, &x, m);
            assert_eq!(got.len(), want.len());
            // f32 accumulation of ≤ 64 terms of size ≤ 1.
            for (g, w) in got.iter().zip(&want) {
                assert!((g.re as f64 - w.0).abs() < 1e-4 && (g.im as f64 - w.1).abs() < 1e-4);
            }
        }
    }

    /// Output-limited calls (an output buffer shorter than the bound), which the shared
    /// check does not make: the decimator stops just before the next due output.
    #[test]
    fn chunk_invariant_with_short_outputs() {
        let taps = random_real(49, 7);
        let x = random_complex(20_000, 8);
        assert_chunk_invariant(|| FirDecimator::<Complex32>::new(&taps, 10).unwrap(), &x);
        let xr = random_real(20_000, 9);
        assert_chunk_invariant(|| FirDecimator::<f32>::new(&taps, 3).unwrap(), &xr);
    }

    /// A designed low-pass (passband to 0.02 of the input rate) decimating by 10; probe tones
    /// in the passband, 0.002 apart < 1/(2·delay) for its ~130 taps.
    #[test]
    fn meets_the_block_contract() {
        let taps = crate::dsp::design_lowpass(&crate::dsp::LowpassSpec {
            passband_hz: 0.02,
            stopband_hz: 0.05,
            attenuation_db: 60.0,
            sample_rate: 1.0,
        })
        .unwrap();
        let x = random_complex(40_000, 8);
        let make = || FirDecimator::<Complex32>::new(&taps, 10).unwrap();
        let signal = |f: f64| complex_tone(60_000, f);
        check_block(&BlockCheck {
            delay_probe: Some(DelayProbe {
                signal: &signal,
                tones: [0.004, 0.006],
            }),
            ..BlockCheck::new(&make, &x)
        });
    }

    #[test]
    fn output_bound_and_errors() {
        let d = FirDecimator::<f32>::new(&[1.0], 5).unwrap();
        assert_eq!(d.max_output_len(0), 0);
        assert_eq!(d.max_output_len(1), 1);
        assert_eq!(d.max_output_len(10), 2);
        assert_eq!(d.max_output_len(11), 3);
        assert!(FirDecimator::<f32>::new(&[1.0], 0).is_err());
        assert!(FirDecimator::<f32>::new(&[], 2).is_err());
    }
}

//! The one test every block and receiver passes: the [`Block`] contract, measured.
//!
//! [`check_block`] runs a block built fresh by a closure over a representative input and checks:
//! - the output is finite;
//! - the output does not depend on how the input is split (pieces of 1, 7, 1024 and seeded
//!   random sizes), bit for bit;
//! - no call writes more than `max_output_len` of its input, and a call whose output has that
//!   room consumes its whole input;
//! - `reset` returns the block to the state of a fresh one;
//! - produced/consumed over the run equals `rate_ratio`;
//! - `flush` gives exactly what feeding `flush_len` zeros gives, so a stream's output covers
//!   its input plus the delay;
//! - with a [`DelayProbe`], the group delay measured from two tones' phases equals `delay()`
//!   within half a sample (of the slower of the input and output rates).
//!
//! Allocates freely: for tests only.

use super::{process_to_vec, Block};
use crate::Complex32;
use num_complex::Complex64;
use rand::{rngs::StdRng, RngExt, SeedableRng};
use std::f64::consts::TAU;
use std::fmt::Debug;

/// An output sample the checker can read as a complex number.
pub trait ProbeSample: Copy + Default + PartialEq + Debug {
    /// The sample as a complex number (a real sample has zero imaginary part).
    fn to_c64(self) -> Complex64;
}

impl ProbeSample for f32 {
    fn to_c64(self) -> Complex64 {
        Complex64::new(self as f64, 0.0)
    }
}

impl ProbeSample for Complex32 {
    fn to_c64(self) -> Complex64 {
        Complex64::new(self.re as f64, self.im as f64)
    }
}

/// How to measure a block's delay: an input carrying a tone whose frequency, in cycles per
/// input sample, reappears at the output (a filter's input tone, or a receiver's message tone).
pub struct DelayProbe<'a, I> {
    /// The probe input for a tone at `f` cycles per input sample.
    pub signal: &'a dyn Fn(f64) -> Vec<I>,
    /// The two tone frequencies, in cycles per input sample; their spacing must be below
    /// 1/(2·delay) so the phase difference is unambiguous.
    pub tones: [f64; 2],
}

/// What [`check_block`] needs beyond the block.
pub struct BlockCheck<'a, B: Block> {
    /// Builds a fresh block.
    pub make: &'a dyn Fn() -> B,
    /// A representative input, long enough for the output to settle.
    pub input: &'a [B::Input],
    /// Interleaved output channels (1, or 2 for stereo receivers).
    pub channels: usize,
    /// Outputs by which the total count may differ from `rate_ratio` × inputs (rounding of the
    /// rate-changing stages).
    pub count_slack: usize,
    /// Measures the delay when given.
    pub delay_probe: Option<DelayProbe<'a, B::Input>>,
}

impl<'a, B: Block> BlockCheck<'a, B> {
    /// A check with one channel, a slack of two outputs and no delay probe.
    pub fn new(make: &'a dyn Fn() -> B, input: &'a [B::Input]) -> Self {
        BlockCheck {
            make,
            input,
            channels: 1,
            count_slack: 2,
            delay_probe: None,
        }
    }
}

/// Runs every check of the block contract; panics with a message naming the broken clause.
pub fn check_block<B>(check: &BlockCheck<'_, B>)
where
    B: Block,
    B::Input: Debug,
    B::Output: ProbeSample,
{
    let whole = process_to_vec(&mut (check.make)(), check.input);
    assert!(
        whole.iter().all(|y| y.to_c64().is_finite()),
        "non-finite output"
    );
    check_chunk_invariance(check, &whole);
    check_reset(check, &whole);
    check_rate(check, whole.len());
    check_flush(check, &whole);
    if let Some(probe) = &check.delay_probe {
        check_delay(check, probe);
    }
}

/// Runs `block` over `input` in pieces whose sizes cycle through `sizes`, checking the output
/// bound on every call.
fn run_in_pieces<B: Block>(block: &mut B, input: &[B::Input], sizes: &[usize]) -> Vec<B::Output> {
    let mut out = Vec::new();
    let mut at = 0;
    for &size in sizes.iter().cycle() {
        if at >= input.len() {
            break;
        }
        let n = size.max(1).min(input.len() - at);
        let room = block.max_output_len(n);
        let mut piece = vec![B::Output::default(); room];
        let (consumed, produced) = block.process(&input[at..at + n], &mut piece);
        assert_eq!(consumed, n, "a call with max_output_len room left input");
        assert!(produced <= room, "produced {produced} > bound {room}");
        out.extend_from_slice(&piece[..produced]);
        at += n;
    }
    out
}

fn check_chunk_invariance<B: Block>(check: &BlockCheck<'_, B>, whole: &[B::Output])
where
    B::Output: ProbeSample,
{
    let mut rng = StdRng::seed_from_u64(0x5eed);
    let random: Vec<usize> = (0..256).map(|_| rng.random_range(1..5000)).collect();
    for sizes in [vec![1usize, 7, 1024], vec![4095, 2], random] {
        let pieces = run_in_pieces(&mut (check.make)(), check.input, &sizes);
        assert_eq!(
            pieces.len(),
            whole.len(),
            "output count depends on chunking"
        );
        if let Some(k) = (0..whole.len()).find(|&k| pieces[k] != whole[k]) {
            panic!(
                "output {k} depends on chunking: {:?} vs {:?}",
                pieces[k], whole[k]
            );
        }
    }
}

fn check_reset<B: Block>(check: &BlockCheck<'_, B>, whole: &[B::Output])
where
    B::Output: ProbeSample,
{
    let mut block = (check.make)();
    process_to_vec(&mut block, check.input);
    block.reset();
    let again = process_to_vec(&mut block, check.input);
    assert!(again == whole, "reset does not return to the fresh state");
}

fn check_rate<B: Block>(check: &BlockCheck<'_, B>, produced: usize) {
    let block = (check.make)();
    let expected = block.rate_ratio() * check.input.len() as f64;
    let slack = (check.count_slack * check.channels) as f64;
    assert!(
        (produced as f64 - expected).abs() <= slack,
        "produced {produced} for {} inputs; rate_ratio {} expects {expected:.1}",
        check.input.len(),
        block.rate_ratio()
    );
}

fn check_flush<B: Block>(check: &BlockCheck<'_, B>, whole: &[B::Output])
where
    B::Output: ProbeSample,
{
    let mut block = (check.make)();
    let mut out = process_to_vec(&mut block, check.input);
    let mut tail = vec![B::Output::default(); block.flush_output_len()];
    let n = block.flush(&mut tail);
    out.extend_from_slice(&tail[..n]);

    let fresh = (check.make)();
    let mut padded = check.input.to_vec();
    padded.resize(check.input.len() + fresh.flush_len(), B::Input::default());
    let reference = process_to_vec(&mut (check.make)(), &padded);
    assert!(out[..whole.len()] == *whole);
    assert!(
        out == reference,
        "flush differs from feeding {} zeros",
        fresh.flush_len()
    );
    let expected = (check.input.len() as f64 + fresh.delay()) * fresh.rate_ratio();
    let slack = ((check.count_slack + 1) * check.channels) as f64 + fresh.rate_ratio();
    assert!(
        (out.len() as f64 - expected).abs() <= slack,
        "after flush {} outputs; (inputs + delay) × rate expects {expected:.1}",
        out.len()
    );
}

fn check_delay<B>(check: &BlockCheck<'_, B>, probe: &DelayProbe<'_, B::Input>)
where
    B: Block,
    B::Output: ProbeSample,
{
    let block = (check.make)();
    let per_channel_rate = block.rate_ratio() / check.channels as f64;
    let phase = |f: f64| {
        let input = (probe.signal)(f);
        let out = process_to_vec(&mut (check.make)(), &input);
        tone_phase(&out, check.channels, f / per_channel_rate)
    };
    let [f1, f2] = probe.tones;
    let mut step = phase(f1) - phase(f2);
    step -= TAU * (step / TAU).round();
    let measured = step / (TAU * (f2 - f1));
    let tolerance = 0.5 * (1.0 / per_channel_rate).max(1.0);
    assert!(
        (measured - block.delay()).abs() <= tolerance,
        "measured delay {measured:.2} input samples, delay() says {:.2} (tolerance {tolerance:.2})",
        block.delay()
    );
}

/// Phase of the tone at `f` cycles per output sample in channel 0 of `out`, over its settled
/// second half, Hann-windowed so that the tone's image and other lines do not leak in.
fn tone_phase<T: ProbeSample>(out: &[T], channels: usize, f: f64) -> f64 {
    let frames = out.len() / channels;
    let start = frames / 2;
    let len = frames - start;
    assert!(len > 16, "probe output too short");
    let mut acc = Complex64::new(0.0, 0.0);
    for k in start..frames {
        let w = 0.5 - 0.5 * (TAU * (k - start) as f64 / len as f64).cos();
        let y = out[k * channels].to_c64();
        acc += y * Complex64::from_polar(w, -TAU * f * k as f64);
    }
    assert!(acc.norm() > 0.0, "no tone at the output");
    acc.arg()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::dsp::{FirDecimator, Gain};

    fn sine(len: usize, f: f64) -> Vec<f32> {
        (0..len)
            .map(|n| (TAU * f * n as f64).cos() as f32)
            .collect()
    }

    #[test]
    fn a_decimator_passes() {
        let taps: Vec<f32> = (0..31)
            .map(|k| 1.0 / (1.0 + (k as f32 - 15.0).abs()))
            .collect();
        let make = || FirDecimator::<f32>::new(&taps, 3).unwrap();
        let input = sine(30_000, 0.01);
        let signal = |f: f64| sine(30_000, f);
        check_block(&BlockCheck {
            delay_probe: Some(DelayProbe {
                signal: &signal,
                tones: [0.01, 0.012],
            }),
            ..BlockCheck::new(&make, &input)
        });
    }

    /// A block that lies about its delay fails the check.
    #[test]
    #[should_panic(expected = "measured delay")]
    fn a_wrong_delay_is_caught() {
        struct Liar(crate::dsp::Fir<f32>);
        impl Block for Liar {
            type Input = f32;
            type Output = f32;
            fn process(&mut self, i: &[f32], o: &mut [f32]) -> (usize, usize) {
                self.0.process(i, o)
            }
            fn max_output_len(&self, n: usize) -> usize {
                n
            }
            fn rate_ratio(&self) -> f64 {
                1.0
            }
            fn delay(&self) -> f64 {
                self.0.delay() + 3.0
            }
            fn reset(&mut self) {
                self.0.reset()
            }
        }
        let taps = [0.1f32, 0.2, 0.4, 0.2, 0.1];
        let make = || Liar(crate::dsp::Fir::new(&taps).unwrap());
        let input = sine(4000, 0.02);
        let signal = |f: f64| sine(8000, f);
        check_block(&BlockCheck {
            delay_probe: Some(DelayProbe {
                signal: &signal,
                tones: [0.02, 0.03],
            }),
            ..BlockCheck::new(&make, &input)
        });
    }

    /// A block whose rate is misreported fails the check.
    #[test]
    #[should_panic(expected = "rate_ratio")]
    fn a_wrong_rate_is_caught() {
        struct Doubler(Gain);
        impl Block for Doubler {
            type Input = f32;
            type Output = f32;
            fn process(&mut self, i: &[f32], o: &mut [f32]) -> (usize, usize) {
                self.0.process(i, o)
            }
            fn max_output_len(&self, n: usize) -> usize {
                n
            }
            fn rate_ratio(&self) -> f64 {
                2.0
            }
            fn delay(&self) -> f64 {
                0.0
            }
            fn reset(&mut self) {}
        }
        let make = || Doubler(Gain::new(1.0));
        let input = sine(1000, 0.02);
        check_block(&BlockCheck::new(&make, &input));
    }
}

//! Multi-stage decimation planner: any input rate down towards the audio rate, efficiently.
//!
//! The total factor D is the largest 7-smooth integer (primes 2, 3, 5, 7) with
//! input_rate/D ≥ min_output_rate, except that a slightly smaller D giving a whole-number output
//! rate is preferred (within 3/4 of the largest; e.g. 2.048 MS/s → D = 40 → 51.2 kS/s rather than
//! D = 42 → 48761.9 S/s) so that the caller's final rational step reduces exactly.
//!
//! D is split into stages by minimising the total multiply rate, the criterion of Crochiere &
//! Rabiner, *Multirate Digital Signal Processing*, ch. 5 (which also shows the optimum puts
//! the large factors first). Each stage, at input rate r with factor M, has its passband at the
//! final passband edge fp and its stopband at r/M − fp: whatever aliases into (fp, r/M/2] is
//! removed by later stages, and nothing aliases into [0, fp]. Tap counts come from Kaiser's
//! formula (see [`crate::dsp::kaiser`]).

use crate::block::{Block, PIECE};
use crate::dsp::decimator::FirDecimator;
use crate::dsp::history::store_finite;
use crate::dsp::kaiser::{design_lowpass, kaiser_num_taps, LowpassSpec};
use crate::sample::Sample;
use crate::{Error, Result};
use std::collections::HashMap;

/// Largest denominator tried when a rate ratio is not a ratio of whole numbers.
const MAX_DENOMINATOR: u64 = 10_000;
/// Relative error allowed for such an approximation.
const RATIO_TOLERANCE: f64 = 1e-9;
/// Largest total decimation factor planned (bounds the search; 2^16 covers any SDR rate).
const MAX_TOTAL_FACTOR: usize = 1 << 16;

fn positive_rate(name: &'static str, rate: f64) -> Result<f64> {
    if rate.is_finite() && rate > 0.0 {
        Ok(rate)
    } else {
        Err(Error::parameter(name, rate, "must be positive and finite"))
    }
}

fn gcd(mut a: u64, mut b: u64) -> u64 {
    while b != 0 {
        (a, b) = (b, a % b);
    }
    a
}

/// Reduces `from_rate / to_rate` to a ratio `(up, down)` of whole numbers.
///
/// `to_rate/from_rate = up/down`. Whole-number rates are reduced exactly by their gcd; other
/// rates by the best continued-fraction convergent with down ≤ 10000 whose relative error is
/// below 1e-9, or an error if there is none.
pub fn rational_ratio(from_rate: f64, to_rate: f64) -> Result<(usize, usize)> {
    let from = positive_rate("input rate", from_rate)?;
    let to = positive_rate("output rate", to_rate)?;
    let whole = |r: f64| r.fract() == 0.0 && r < 2f64.powi(53);
    if whole(from) && whole(to) {
        let (f, t) = (from as u64, to as u64);
        let g = gcd(f, t);
        return Ok(((t / g) as usize, (f / g) as usize));
    }
    continued_fraction(to / from)
        .map(|(p, q)| (p as usize, q as usize))
        .ok_or_else(|| {
            Error::parameter(
                "output rate",
                to_rate,
                format!("no ratio to {from_rate} with a denominator ≤ {MAX_DENOMINATOR}"),
            )
        })
}

/// First convergent p/q of `x` with |p/q − x| < 1e-9·x, q ≤ MAX_DENOMINATOR.
fn continued_fraction(x: f64) -> Option<(u64, u64)> {
    let (mut p0, mut q0, mut p1, mut q1) = (0u64, 1u64, 1u64, 0u64);
    let mut rest = x;
    for _ in 0..64 {
        let a = rest.floor();
        if a > 1e15 {
            return None;
        }
        let a = a as u64;
        let (p, q) = (
            a.checked_mul(p1)?.checked_add(p0)?,
            a.checked_mul(q1)?.checked_add(q0)?,
        );
        if q > MAX_DENOMINATOR {
            return None;
        }
        if p > 0 && ((p as f64 / q as f64) - x).abs() < RATIO_TOLERANCE * x {
            return Some((p, q));
        }
        (p0, q0, p1, q1) = (p1, q1, p, q);
        let frac = rest - a as f64;
        if frac <= 0.0 {
            return None;
        }
        rest = 1.0 / frac;
    }
    None
}

/// One stage of a plan: its factor and its taps.
#[derive(Debug, Clone, PartialEq)]
pub struct DecimationStage {
    /// Decimation factor of this stage.
    pub factor: usize,
    /// Low-pass taps of this stage.
    pub taps: Vec<f32>,
}

/// A cascade of integer decimation stages from `input_rate` to the lowest rate that is still at
/// least `min_output_rate`, keeping `passband_hz` free of aliases.
#[derive(Debug, Clone, PartialEq)]
pub struct DecimationPlan {
    /// The stages in order.
    pub stages: Vec<DecimationStage>,
    /// Input rate in Hz.
    pub input_rate: f64,
    /// Output rate in Hz (input_rate / product of factors).
    pub output_rate: f64,
}

fn is_7_smooth(mut n: usize) -> bool {
    for p in [2, 3, 5, 7] {
        while n % p == 0 {
            n /= p;
        }
    }
    n == 1
}

/// The total factor D (see the module doc).
fn choose_total_factor(input_rate: f64, min_output_rate: f64) -> usize {
    // The small slack keeps e.g. 2.4e6/48e3 = 50 from rounding down to 49.
    let bound = ((input_rate / min_output_rate) * (1.0 + 1e-12)).floor();
    let bound = (bound.max(1.0) as usize).min(MAX_TOTAL_FACTOR);
    let largest = (1..=bound).rev().find(|&d| is_7_smooth(d)).unwrap_or(1);
    let whole_rate = |d: usize| (input_rate / d as f64).fract() == 0.0;
    (1..=largest)
        .rev()
        .take_while(|&d| 4 * d >= 3 * largest)
        .find(|&d| is_7_smooth(d) && whole_rate(d))
        .unwrap_or(largest)
}

/// Cost model and memo for splitting the total factor into stages.
struct Splitter {
    input_rate: f64,
    total: usize,
    passband_hz: f64,
    attenuation_db: f64,
    best: HashMap<usize, (f64, Vec<usize>)>,
}

impl Splitter {
    /// Kaiser tap count (odd) of a stage with `factor` at input rate `rate`.
    fn taps(&self, rate: f64, factor: usize) -> usize {
        let stop = rate / factor as f64 - self.passband_hz;
        kaiser_num_taps(self.attenuation_db, (stop - self.passband_hz) / rate) | 1
    }

    /// Cheapest stage list for the `remaining` factor, with cost in multiplies per input of the
    /// whole cascade. The rate at this point is fixed by `remaining`, so memoising on it is exact.
    fn split(&mut self, remaining: usize) -> (f64, Vec<usize>) {
        if remaining == 1 {
            return (0.0, Vec::new());
        }
        if let Some(hit) = self.best.get(&remaining) {
            return hit.clone();
        }
        let done = self.total / remaining;
        let rate = self.input_rate / done as f64;
        let mut best = (f64::INFINITY, Vec::new());
        for factor in (2..=remaining).filter(|f| remaining % f == 0) {
            let own = self.taps(rate, factor) as f64 / (done * factor) as f64;
            let (rest, mut stages) = self.split(remaining / factor);
            // Ties go to fewer stages (the later candidate only wins when strictly cheaper).
            if own + rest < best.0 * (1.0 - 1e-12) {
                stages.insert(0, factor);
                best = (own + rest, stages);
            }
        }
        self.best.insert(remaining, best.clone());
        best
    }
}

impl DecimationPlan {
    /// Plans the cascade.
    ///
    /// ```
    /// use amrx::dsp::{DecimationPlan, MultiStageDecimator};
    /// let plan = DecimationPlan::new(2_048_000.0, 48_000.0, 10_000.0, 70.0)?;
    /// assert_eq!(plan.output_rate, 51_200.0); // then a 15/16 rational step to 48 kS/s
    /// let block = MultiStageDecimator::<amrx::Complex32>::new(&plan)?;
    /// # Ok::<(), amrx::Error>(())
    /// ```
    ///
    /// Errors when a rate is not positive and finite, when `min_output_rate` exceeds
    /// `input_rate`, when `passband_hz` is not in (0, output_rate/2), or when the attenuation
    /// is not positive and finite.
    pub fn new(
        input_rate: f64,
        min_output_rate: f64,
        passband_hz: f64,
        attenuation_db: f64,
    ) -> Result<Self> {
        positive_rate("input rate", input_rate)?;
        positive_rate("output rate", min_output_rate)?;
        if min_output_rate > input_rate {
            return Err(Error::parameter(
                "output rate",
                min_output_rate,
                format!("exceeds the input rate {input_rate}"),
            ));
        }
        if !(attenuation_db.is_finite() && attenuation_db > 0.0) {
            return Err(Error::parameter(
                "filter attenuation",
                attenuation_db,
                "must be positive",
            ));
        }
        let total = choose_total_factor(input_rate, min_output_rate);
        let output_rate = input_rate / total as f64;
        if !(passband_hz.is_finite() && passband_hz > 0.0 && passband_hz < output_rate / 2.0) {
            return Err(Error::parameter(
                "bandwidth",
                format!("{passband_hz} Hz"),
                format!("must lie in (0, {} Hz)", output_rate / 2.0),
            ));
        }
        let mut splitter = Splitter {
            input_rate,
            total,
            passband_hz,
            attenuation_db,
            best: HashMap::new(),
        };
        let (_, factors) = splitter.split(total);
        let mut rate = input_rate;
        let mut stages = Vec::with_capacity(factors.len());
        for factor in factors {
            let spec = LowpassSpec {
                passband_hz,
                stopband_hz: rate / factor as f64 - passband_hz,
                attenuation_db,
                sample_rate: rate,
            };
            stages.push(DecimationStage {
                factor,
                taps: design_lowpass(&spec)?,
            });
            rate /= factor as f64;
        }
        Ok(DecimationPlan {
            stages,
            input_rate,
            output_rate,
        })
    }

    /// Total decimation factor.
    pub fn total_factor(&self) -> usize {
        self.stages.iter().map(|s| s.factor).product()
    }

    /// Multiplies (real taps × samples) per input sample over the whole cascade.
    pub fn macs_per_input(&self) -> f64 {
        let mut done = 1;
        let mut cost = 0.0;
        for s in &self.stages {
            done *= s.factor;
            cost += s.taps.len() as f64 / done as f64;
        }
        cost
    }
}

impl std::fmt::Display for DecimationPlan {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{} S/s", self.input_rate)?;
        let mut rate = self.input_rate;
        for s in &self.stages {
            rate /= s.factor as f64;
            write!(f, " →(÷{}, {} taps) {} S/s", s.factor, s.taps.len(), rate)?;
        }
        write!(f, "; {:.2} MAC/input", self.macs_per_input())
    }
}

/// The plan's stages as one block.
#[derive(Debug, Clone)]
pub struct MultiStageDecimator<T: Sample> {
    stages: Vec<FirDecimator<T>>,
    /// buffers[i] holds stage i's output for one chunk (all stages but the last).
    buffers: Vec<Vec<T>>,
    total_factor: usize,
}

impl<T: Sample> MultiStageDecimator<T> {
    /// Exactly how many outputs the next `input_len` inputs produce from the current state.
    pub fn output_len(&self, input_len: usize) -> usize {
        self.stages
            .iter()
            .fold(input_len, |n, stage| stage.output_len(n))
    }

    /// Builds the blocks of `plan`.
    pub fn new(plan: &DecimationPlan) -> Result<Self> {
        let stages = plan
            .stages
            .iter()
            .map(|s| FirDecimator::new(&s.taps, s.factor))
            .collect::<Result<Vec<_>>>()?;
        let mut buffers = Vec::new();
        let mut len = PIECE;
        for stage in stages.iter().take(stages.len().saturating_sub(1)) {
            len = stage.max_output_len(len);
            buffers.push(vec![T::ZERO; len]);
        }
        Ok(MultiStageDecimator {
            stages,
            buffers,
            total_factor: plan.total_factor(),
        })
    }

    /// Total decimation factor.
    pub fn factor(&self) -> usize {
        self.total_factor
    }

    /// [`Block::process`] with the first stage's input written into its history by
    /// `through` (see [`FirDecimator::process_through`]): a mixer in front of the cascade
    /// stores its product straight into the first filter's window. Without stages, `through`
    /// writes the output itself.
    pub fn process_through(
        &mut self,
        input: &[T],
        output: &mut [T],
        mut through: impl FnMut(&[T], &mut [T]),
    ) -> (usize, usize) {
        if self.stages.is_empty() {
            let n = input.len().min(output.len());
            through(&input[..n], &mut output[..n]);
            return (n, n);
        }
        let mut consumed = 0;
        let mut produced = 0;
        while consumed < input.len() {
            // Exact counts, not the ⌈n/D⌉ bound: per-piece bounds would add up to more than the
            // bound of the whole and leave input unconsumed with room to spare.
            let room = output.len() - produced;
            let mut n = PIECE.min(input.len() - consumed);
            while n > 0 && self.output_len(n) > room {
                n /= 2;
            }
            if n == 0 {
                break;
            }
            let chunk = &input[consumed..consumed + n];
            produced += self.run_chunk(chunk, &mut output[produced..], &mut through);
            consumed += n;
        }
        (consumed, produced)
    }

    /// Runs one chunk (whose outputs are known to fit) through every stage.
    fn run_chunk(
        &mut self,
        input: &[T],
        output: &mut [T],
        through: &mut impl FnMut(&[T], &mut [T]),
    ) -> usize {
        let last = self.stages.len() - 1;
        let mut len = input.len();
        for i in 0..=last {
            let (before, after) = self.buffers.split_at_mut(i);
            let dst: &mut [T] = if i == last { output } else { &mut after[0] };
            len = if i == 0 {
                self.stages[0].process_through(input, dst, &mut *through).1
            } else {
                self.stages[i].process(&before[i - 1][..len], dst).1
            };
        }
        len
    }
}

impl<T: Sample> Block for MultiStageDecimator<T> {
    type Input = T;
    type Output = T;

    fn process(&mut self, input: &[T], output: &mut [T]) -> (usize, usize) {
        if self.stages.is_empty() {
            // The stages' history would zero non-finite samples; a copy keeps them as they are.
            let n = input.len().min(output.len());
            output[..n].copy_from_slice(&input[..n]);
            return (n, n);
        }
        self.process_through(input, output, |x, slot| store_finite(slot, x))
    }

    fn max_output_len(&self, input_len: usize) -> usize {
        input_len.div_ceil(self.total_factor)
    }

    fn rate_ratio(&self) -> f64 {
        1.0 / self.total_factor as f64
    }

    /// Each stage's delay converted to input samples of the cascade.
    fn delay(&self) -> f64 {
        let mut scale = 1.0;
        let mut delay = 0.0;
        for s in &self.stages {
            delay += s.delay() * scale;
            scale *= s.factor() as f64;
        }
        delay
    }

    fn reset(&mut self) {
        self.stages.iter_mut().for_each(Block::reset);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::check::{check_block, BlockCheck, DelayProbe};
    use crate::block::process_to_vec;
    use crate::dsp::test_util::{assert_chunk_invariant, complex_tone, random_complex};
    use crate::Complex32;

    #[test]
    fn ratios() {
        assert_eq!(rational_ratio(48_000.0, 44_100.0).unwrap(), (147, 160));
        assert_eq!(rational_ratio(51_200.0, 48_000.0).unwrap(), (15, 16));
        assert_eq!(rational_ratio(48_000.0, 48_000.0).unwrap(), (1, 1));
        assert_eq!(
            rational_ratio(2_048_000.0 / 42.0, 48_000.0).unwrap(),
            (63, 64)
        );
        assert_eq!(rational_ratio(1.5, 2.0).unwrap(), (4, 3));
        assert!(rational_ratio(0.0, 1.0).is_err());
        assert!(rational_ratio(1.0, f64::NAN).is_err());
        assert!(rational_ratio(std::f64::consts::PI, 1.0).is_err());
    }

    #[test]
    fn plans_common_rates() {
        let cases = [
            (2_400_000.0, 50, 48_000.0),
            (2_048_000.0, 40, 51_200.0),
            (250_000.0, 5, 50_000.0),
            (1_920_000.0, 40, 48_000.0),
        ];
        for (rate, factor, out) in cases {
            let plan = DecimationPlan::new(rate, 48_000.0, 10_000.0, 70.0).unwrap();
            println!("{plan}");
            assert_eq!(plan.total_factor(), factor);
            assert_eq!(plan.output_rate, out);
            // Large factors first (Crochiere & Rabiner) and a small multiply rate.
            let f: Vec<usize> = plan.stages.iter().map(|s| s.factor).collect();
            assert!(f.windows(2).all(|w| w[0] >= w[1]), "{f:?}");
            assert!(plan.macs_per_input() < 16.0, "{plan}");
        }
        let none = DecimationPlan::new(48_000.0, 48_000.0, 10_000.0, 70.0).unwrap();
        assert!(none.stages.is_empty() && none.total_factor() == 1);
        assert!(DecimationPlan::new(48_000.0, 96_000.0, 1000.0, 70.0).is_err());
        assert!(DecimationPlan::new(2_400_000.0, 48_000.0, 30_000.0, 70.0).is_err());
        assert!(DecimationPlan::new(2_400_000.0, 48_000.0, 1000.0, -1.0).is_err());
    }

    /// The cascade must keep the passband flat and push every alias into it below −A.
    #[test]
    fn cascade_rejects_aliases_into_passband() {
        let (fs, fp, a) = (2_400_000.0, 10_000.0, 70.0);
        let plan = DecimationPlan::new(fs, 48_000.0, fp, a).unwrap();
        let tone_level = |f: f64| {
            let n = 1 << 19;
            let x: Vec<Complex32> = (0..n)
                .map(|i| {
                    let w = std::f64::consts::TAU * f * i as f64 / fs;
                    Complex32::new(w.cos() as f32, w.sin() as f32)
                })
                .collect();
            let y = process_to_vec(&mut MultiStageDecimator::new(&plan).unwrap(), &x);
            y[y.len() / 2..].iter().fold(0.0f32, |m, v| m.max(v.norm())) as f64
        };
        // In band: unity within Kaiser ripple summed over stages.
        assert!((tone_level(3_000.0) - 1.0).abs() < 1e-2);
        // Tones that would alias onto 3 kHz at 48 kS/s: 51 kHz, 99 kHz, 483 kHz.
        for f in [51_000.0, -45_000.0, 99_000.0, 483_000.0] {
            let db = 20.0 * tone_level(f).log10();
            assert!(db < -(a - 1.0), "{f} Hz aliases at {db:.1} dB");
        }
    }

    /// 2.4 MS/s to 48 kS/s in several stages; probe tones at 3 and 3.3 kHz, in the 10 kHz
    /// passband, 300 Hz apart: below fs/(2·delay) for a delay under 4000 input samples.
    #[test]
    fn meets_the_block_contract() {
        let fs = 2_400_000.0;
        let plan = DecimationPlan::new(fs, 48_000.0, 10_000.0, 70.0).unwrap();
        assert!(plan.stages.len() > 1, "{plan}");
        let x = random_complex(60_000, 31);
        let make = || MultiStageDecimator::<Complex32>::new(&plan).unwrap();
        let signal = |f: f64| complex_tone(600_000, f);
        check_block(&BlockCheck {
            delay_probe: Some(DelayProbe {
                signal: &signal,
                tones: [3_000.0 / fs, 3_300.0 / fs],
            }),
            ..BlockCheck::new(&make, &x)
        });
    }

    /// Output-limited calls, which the shared check does not make, and the sizes.
    #[test]
    fn chunk_invariant_with_short_outputs_and_sized() {
        let plan = DecimationPlan::new(2_400_000.0, 48_000.0, 10_000.0, 70.0).unwrap();
        let x = random_complex(60_000, 31);
        assert_chunk_invariant(|| MultiStageDecimator::<Complex32>::new(&plan).unwrap(), &x);
        let m = MultiStageDecimator::<Complex32>::new(&plan).unwrap();
        assert_eq!(m.max_output_len(60_000), 1200);
        assert!(m.delay() > 0.0);
        // Identity plan passes samples through.
        let none = DecimationPlan::new(48_000.0, 48_000.0, 10_000.0, 70.0).unwrap();
        let mut id = MultiStageDecimator::<Complex32>::new(&none).unwrap();
        assert_eq!(process_to_vec(&mut id, &x[..100]), x[..100].to_vec());
    }

    /// An output buffer of `max_output_len` takes a whole call, also when the input is longer
    /// than the internal chunk and the total factor does not divide it (2.048 MS/s ÷ 40).
    #[test]
    fn a_bounded_output_takes_the_whole_input() {
        let plan = DecimationPlan::new(2_048_000.0, 48_000.0, 5_000.0, 70.0).unwrap();
        let mut m = MultiStageDecimator::<Complex32>::new(&plan).unwrap();
        let x = random_complex(8192, 5);
        let mut total = 0;
        for _ in 0..50 {
            let mut out = vec![Complex32::default(); m.max_output_len(x.len())];
            let (consumed, produced) = m.process(&x, &mut out);
            assert_eq!(consumed, x.len());
            total += produced;
        }
        assert_eq!(total, 50 * 8192 / 40);
    }
}

//! Keeps one sideband of a de-rotated double-sideband signal, Weaver-style: shift by ∓W/2,
//! low-pass ±W/2, shift back (D. K. Weaver, Proc. IRE, 1956). Used by synchronous AM to
//! escape selective fading or a neighbour on one side.

use super::config::Sideband;
use crate::block::Block;
use crate::dsp::{design_lowpass, Fir, LowpassSpec, Mixer};
use crate::{Complex32, Result};

/// Transition band of the low-pass, as a fraction of W (within 100–500 Hz; common practice,
/// no source).
const TRANSITION: f64 = 0.1;
/// Stopband attenuation of the low-pass (common practice, no source).
const ATTENUATION_DB: f64 = 70.0;

/// One-sided selector on complex samples: (0, W] for the upper sideband, [−W, 0) for the lower.
pub struct SidebandSelector {
    down: Mixer,
    lowpass: Fir<Complex32>,
    up: Mixer,
    shifted: Vec<Complex32>,
    filtered: Vec<Complex32>,
}

impl SidebandSelector {
    /// A selector keeping `side` of a message of bandwidth `bandwidth_hz` at `rate`, taking
    /// pieces of up to `max_piece` samples.
    ///
    /// ```
    /// use amrx::demod::{config::Sideband, sideband_selector::SidebandSelector};
    /// let s = SidebandSelector::new(Sideband::Upper, 5000.0, 48_000.0, 1024).unwrap();
    /// assert!(amrx::block::Block::delay(&s) > 0.0);
    /// ```
    pub fn new(side: Sideband, bandwidth_hz: f64, rate: f64, max_piece: usize) -> Result<Self> {
        let half = 0.5 * bandwidth_hz;
        let shift = match side {
            Sideband::Upper => -half,
            Sideband::Lower => half,
        };
        let transition = (TRANSITION * bandwidth_hz).clamp(100.0, 500.0);
        let taps = design_lowpass(&LowpassSpec {
            passband_hz: half,
            stopband_hz: (half + transition).min(0.5 * rate),
            attenuation_db: ATTENUATION_DB,
            sample_rate: rate,
        })?;
        Ok(SidebandSelector {
            down: Mixer::new(shift, rate)?,
            lowpass: Fir::new(&taps)?,
            up: Mixer::new(-shift, rate)?,
            shifted: vec![Complex32::default(); max_piece.max(1)],
            filtered: vec![Complex32::default(); max_piece.max(1)],
        })
    }
}

impl Block for SidebandSelector {
    type Input = Complex32;
    type Output = Complex32;

    /// Works through the input in pieces of the `max_piece` given at construction.
    fn process(&mut self, input: &[Complex32], output: &mut [Complex32]) -> (usize, usize) {
        let n = input.len().min(output.len());
        for (x, y) in input[..n]
            .chunks(self.shifted.len())
            .zip(output[..n].chunks_mut(self.shifted.len()))
        {
            let m = x.len();
            self.down.process(x, &mut self.shifted[..m]);
            self.lowpass
                .process(&self.shifted[..m], &mut self.filtered[..m]);
            self.up.process(&self.filtered[..m], y);
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
        self.lowpass.delay()
    }

    fn reset(&mut self) {
        self.down.reset();
        self.lowpass.reset();
        self.up.reset();
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::process_in_chunks;

    fn line(freq: f64, len: usize) -> Vec<Complex32> {
        (0..len)
            .map(|n| {
                Complex32::from_polar(
                    1.0,
                    (std::f64::consts::TAU * freq * n as f64 / 48_000.0) as f32,
                )
            })
            .collect()
    }

    fn settled_power(x: &[Complex32]) -> f64 {
        let tail = &x[x.len() / 2..];
        tail.iter().map(|z| f64::from(z.norm_sqr())).sum::<f64>() / tail.len() as f64
    }

    /// A line in the kept sideband passes at unity; one in the other sideband is ≥ 60 dB down.
    #[test]
    fn keeps_one_side_only() {
        for (side, keep, drop) in [
            (Sideband::Upper, 1500.0, -1500.0),
            (Sideband::Lower, -800.0, 800.0),
        ] {
            let mut kept = SidebandSelector::new(side, 5000.0, 48_000.0, 4096).unwrap();
            let mut dropped = SidebandSelector::new(side, 5000.0, 48_000.0, 4096).unwrap();
            let pass = settled_power(&process_in_chunks(&mut kept, &line(keep, 20_000), &[4096]));
            let stop = settled_power(&process_in_chunks(
                &mut dropped,
                &line(drop, 20_000),
                &[4096],
            ));
            assert!((pass - 1.0).abs() < 1e-3, "{side:?}: pass {pass}");
            assert!(
                10.0 * (pass / stop).log10() > 60.0,
                "{side:?}: rejection {:.1} dB",
                10.0 * (pass / stop).log10()
            );
        }
    }

    /// The contract with a piece size smaller than some calls, and the delay probed on two
    /// kept lines (shift down, low-pass, shift back: a delay and a constant phase).
    #[test]
    fn meets_the_block_contract() {
        use crate::block::check::{check_block, BlockCheck, DelayProbe};
        let x = line(1234.0, 20_000);
        let upper = |f: f64| line(f * 48_000.0, 20_000);
        let make = || SidebandSelector::new(Sideband::Upper, 5000.0, 48_000.0, 1024).unwrap();
        check_block(&BlockCheck {
            delay_probe: Some(DelayProbe {
                signal: &upper,
                tones: [1000.0 / 48_000.0, 1050.0 / 48_000.0],
            }),
            ..BlockCheck::new(&make, &x)
        });
    }
}

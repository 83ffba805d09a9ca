//! Impulse blanking as front-end guards: the overload guard every receiver has, and the
//! optional noise blanker (`noise_blanker`), both [`ImpulseBlanker`]s on the IQ at the input
//! rate, ahead of the channel filter, so that an impulse is removed while it is still short.

use super::assembly::IqGuard;
use super::receiver::Measurements;
use crate::block::Block;
use crate::dsp::{BlankerSettings, ImpulseBlanker};
use crate::{Complex32, Result};

/// Which job a [`BlankingGuard`] does, which decides its settings and what it reports.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Blanking {
    /// Samples 60 dB over the running level, or non-finite: always on, reported as a warning.
    Overload,
    /// Impulses 12 dB over the running level, with guards: the user's noise blanker,
    /// reported as a count.
    NoiseBlanker,
}

/// An [`ImpulseBlanker`] in the receiver's guard chain.
pub struct BlankingGuard {
    role: Blanking,
    blanker: ImpulseBlanker,
    input_rate: f64,
}

impl BlankingGuard {
    /// The guard for `role` on IQ at `input_rate`.
    ///
    /// ```
    /// use amrx::demod::{Blanking, BlankingGuard};
    /// let guard = BlankingGuard::new(Blanking::NoiseBlanker, 2_400_000.0, 100_000.0).unwrap();
    /// ```
    /// Holes are filled with the last good sample turning at `offset_hz`, the tuned frequency.
    pub fn new(role: Blanking, input_rate: f64, offset_hz: f64) -> Result<Self> {
        let settings = match role {
            Blanking::Overload => BlankerSettings::OVERLOAD,
            Blanking::NoiseBlanker => BlankerSettings::NOISE_BLANKER,
        };
        Ok(BlankingGuard {
            role,
            blanker: ImpulseBlanker::new(settings, input_rate)?
                .holding_at(offset_hz, input_rate)?,
            input_rate,
        })
    }

    /// The blanker, for its count.
    pub fn blanker(&self) -> &ImpulseBlanker {
        &self.blanker
    }
}

impl Block for BlankingGuard {
    type Input = Complex32;
    type Output = Complex32;

    fn process(&mut self, input: &[Complex32], output: &mut [Complex32]) -> (usize, usize) {
        self.blanker.process(input, output)
    }

    fn max_output_len(&self, input_len: usize) -> usize {
        input_len
    }

    fn rate_ratio(&self) -> f64 {
        1.0
    }

    fn delay(&self) -> f64 {
        self.blanker.delay()
    }

    fn reset(&mut self) {
        self.blanker.reset();
    }
}

impl IqGuard for BlankingGuard {
    fn retune(&mut self, offset_hz: f64) {
        if let Ok(b) = self.blanker.clone().holding_at(offset_hz, self.input_rate) {
            self.blanker = b;
        }
    }

    fn report(&self, m: &mut Measurements) {
        let count = self.blanker.count();
        match self.role {
            Blanking::NoiseBlanker => {
                m.blanked_samples = Some(m.blanked_samples.unwrap_or(0) + count.blanked);
            }
            Blanking::Overload if count.detected > 0 => {
                let largest = if count.largest_ratio.is_finite() {
                    format!(
                        "{:.0} dB over the level",
                        20.0 * count.largest_ratio.log10()
                    )
                } else {
                    "not a finite number".to_string()
                };
                let n = count.detected;
                m.warnings.push(format!(
                    "front-end overload: {n} IQ sample{} ({:.3} ms) non-finite or more than 60 dB \
                     above the running signal level (largest: {largest}), blanked; the recording \
                     is clipped or corrupt there",
                    if n == 1 { "" } else { "s" },
                    count.detected as f64 / self.input_rate * 1e3,
                ));
            }
            Blanking::Overload => {}
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::check::{check_block, BlockCheck};
    use crate::dsp::test_util::random_complex;

    #[test]
    fn meets_the_block_contract() {
        // The blanker's own test probes the delay; this wrapper only forwards it.
        let mut x = random_complex(10_000, 6);
        x[4_000] = Complex32::new(1e10, 0.0);
        let make = || BlankingGuard::new(Blanking::Overload, 240_000.0, 0.0).unwrap();
        check_block(&BlockCheck::new(&make, &x));
    }

    #[test]
    fn overload_is_a_warning_and_blanking_a_count() {
        let mut x = random_complex(10_000, 6);
        x[4_000] = Complex32::new(f32::INFINITY, 0.0);
        let mut out = vec![Complex32::default(); x.len()];
        let mut guard = BlankingGuard::new(Blanking::Overload, 240_000.0, 0.0).unwrap();
        guard.process(&x, &mut out);
        let mut m = Measurements::default();
        guard.report(&mut m);
        assert!(
            m.warnings[0].contains("front-end overload"),
            "{:?}",
            m.warnings
        );
        assert_eq!(m.blanked_samples, None);
        let mut nb = BlankingGuard::new(Blanking::NoiseBlanker, 240_000.0, 0.0).unwrap();
        nb.process(&x, &mut out);
        let mut m = Measurements::default();
        nb.report(&mut m);
        assert!(m.warnings.is_empty());
        assert!(m.blanked_samples.unwrap() >= 1);
    }
}

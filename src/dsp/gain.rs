//! A fixed gain: the simplest block, and the model for the block contract.

use crate::block::SampleBlock;

/// Multiplies every sample by a constant.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Gain {
    gain: f32,
}

impl Gain {
    /// A block that scales by `gain`.
    ///
    /// ```
    /// use amrx::block::{process_to_vec, Block};
    /// let mut g = amrx::dsp::Gain::new(0.5);
    /// assert_eq!(process_to_vec(&mut g, &[2.0f32]), vec![1.0]);
    /// ```
    pub fn new(gain: f32) -> Self {
        Gain { gain }
    }

    /// The gain.
    pub fn gain(&self) -> f32 {
        self.gain
    }
}

impl SampleBlock for Gain {
    type In = f32;
    type Out = f32;

    #[inline]
    fn next(&mut self, x: f32) -> f32 {
        x * self.gain
    }

    fn sample_delay(&self) -> f64 {
        0.0
    }

    fn reset_state(&mut self) {}
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::check::{check_block, BlockCheck, DelayProbe};
    use crate::block::process_to_vec;
    use crate::dsp::test_util::real_tone;

    #[test]
    fn scales() {
        let input: Vec<f32> = (0..3000).map(|n| n as f32 - 1500.0).collect();
        let whole = process_to_vec(&mut Gain::new(-0.25), &input);
        assert_eq!(whole[0], 375.0);
        assert_eq!(whole[2999], -374.75);
    }

    /// Linear and memoryless: the probe must read a delay of 0.
    #[test]
    fn meets_the_block_contract() {
        let make = || Gain::new(-0.25);
        let input = real_tone(5000, 0.01);
        let signal = |f: f64| real_tone(8000, f);
        check_block(&BlockCheck {
            delay_probe: Some(DelayProbe {
                signal: &signal,
                tones: [0.01, 0.03],
            }),
            ..BlockCheck::new(&make, &input)
        });
    }
}

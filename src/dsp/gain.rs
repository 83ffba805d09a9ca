//! A fixed gain: the simplest block, and the model for the block contract.

use crate::block::Block;

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

impl Block for Gain {
    type Input = f32;
    type Output = f32;

    fn process(&mut self, input: &[f32], output: &mut [f32]) -> (usize, usize) {
        let n = input.len().min(output.len());
        for (y, x) in output[..n].iter_mut().zip(&input[..n]) {
            *y = x * self.gain;
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
        0.0
    }

    fn reset(&mut self) {}
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::{process_in_chunks, process_to_vec};

    #[test]
    fn scales_and_is_chunk_invariant() {
        let input: Vec<f32> = (0..3000).map(|n| n as f32 - 1500.0).collect();
        let whole = process_to_vec(&mut Gain::new(-0.25), &input);
        assert_eq!(whole[0], 375.0);
        for sizes in [vec![1usize], vec![7, 1024]] {
            assert_eq!(
                process_in_chunks(&mut Gain::new(-0.25), &input, &sizes),
                whole
            );
        }
    }
}

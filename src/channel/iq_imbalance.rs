//! The front end's DC offset and IQ imbalance ([`IqImpairment`]) as a channel block.

use super::impair::IqImpairment;
use crate::block::Block;
use crate::Complex32;

/// Applies an [`IqImpairment`] sample by sample.
///
/// ```
/// use amrx::channel::IqImbalance;
/// use amrx::channel::IqImpairment;
/// let block = IqImbalance::new(IqImpairment { gain_db: 0.5, ..Default::default() });
/// ```
#[derive(Debug, Clone, Copy)]
pub struct IqImbalance {
    impairment: IqImpairment,
}

impl IqImbalance {
    /// The block for `impairment`.
    pub fn new(impairment: IqImpairment) -> Self {
        IqImbalance { impairment }
    }
}

impl Block for IqImbalance {
    type Input = Complex32;
    type Output = Complex32;

    fn process(&mut self, input: &[Complex32], output: &mut [Complex32]) -> (usize, usize) {
        let n = input.len().min(output.len());
        output[..n].copy_from_slice(&input[..n]);
        self.impairment.apply(&mut output[..n]);
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

    #[test]
    fn image_rejection_and_chunking() {
        // A tone on a DFT bin gains an image at −f of the predicted IRR
        // (IqImpairment::image_rejection_ratio, the standard relation).
        let imp = IqImpairment {
            dc: Complex32::new(0.0, 0.0),
            gain_db: 1.0,
            phase_deg: 3.0,
        };
        let fs = 4096.0;
        let x: Vec<Complex32> = (0..4096)
            .map(|n| Complex32::from_polar(1.0, std::f32::consts::TAU * 100.0 * n as f32 / 4096.0))
            .collect();
        let y = crate::block::process_to_vec(&mut IqImbalance::new(imp), &x);
        let (want, image, _) = crate::dsp::test_util::line_amplitudes(&y, 0.0, 100.0, fs);
        let irr = 20.0 * (want / image).log10();
        assert!(
            (irr - 10.0 * imp.image_rejection_ratio().log10()).abs() < 0.1,
            "{irr}"
        );
        crate::channel::assert_chunk_invariant(|| IqImbalance::new(imp), &x);
    }
}

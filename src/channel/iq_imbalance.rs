//! The front end's DC offset and IQ imbalance ([`IqImpairment`]) as a channel block.

use super::impair::IqImpairment;
use crate::block::SampleBlock;
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
    /// The Q branch's weights, computed once.
    q_from: (f32, f32),
}

impl IqImbalance {
    /// The block for `impairment`.
    pub fn new(impairment: IqImpairment) -> Self {
        IqImbalance {
            impairment,
            q_from: impairment.q_coefficients(),
        }
    }
}

impl SampleBlock for IqImbalance {
    type In = Complex32;
    type Out = Complex32;

    #[inline]
    fn next(&mut self, x: Complex32) -> Complex32 {
        self.impairment.apply_one(self.q_from, x)
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

    #[test]
    fn image_rejection() {
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
    }

    /// Linear in (x, conj x) and memoryless: the probe, a complex tone whose image lies at
    /// the opposite frequency, must read a delay of 0.
    #[test]
    fn meets_the_block_contract() {
        let imp = IqImpairment {
            dc: Complex32::new(0.01, -0.02),
            gain_db: 1.0,
            phase_deg: 3.0,
        };
        let x = crate::dsp::test_util::random_complex(4000, 3);
        let make = || IqImbalance::new(imp);
        let signal = |f: f64| crate::dsp::test_util::complex_tone(8000, f);
        check_block(&BlockCheck {
            delay_probe: Some(DelayProbe {
                signal: &signal,
                tones: [0.05, 0.08],
            }),
            ..BlockCheck::new(&make, &x)
        });
    }
}

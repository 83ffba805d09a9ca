//! Any receiver with blind IQ-imbalance correction in front: DC blocker, then the adaptive
//! image canceller ([`IqBalancer`]), at the input rate.

use super::receiver::{Measurements, Receiver};
use crate::block::Block;
use crate::dsp::{DcBlocker, IqBalancer};
use crate::{Complex32, Result};

/// Settling time of the image canceller (common practice, no source: long against any
/// modulation, short against a recording).
pub const IQ_BALANCE_SETTLE_S: f64 = 0.05;
/// Corner of the DC blocker ahead of it: DC is not circular and would bias the canceller.
const DC_CORNER_HZ: f64 = 10.0;
/// Input samples corrected per internal step.
const PIECE: usize = 8192;

/// `inner` fed through a DC blocker and an [`IqBalancer`].
pub struct IqCorrected {
    dc: DcBlocker<Complex32>,
    balancer: IqBalancer,
    inner: Box<dyn Receiver>,
    unbiased: Vec<Complex32>,
    balanced: Vec<Complex32>,
}

impl IqCorrected {
    /// Wraps `inner`, whose input rate is `input_rate`.
    pub fn new(inner: Box<dyn Receiver>, input_rate: f64) -> Result<Self> {
        Ok(IqCorrected {
            dc: DcBlocker::new(DC_CORNER_HZ, input_rate)?,
            balancer: IqBalancer::new(IQ_BALANCE_SETTLE_S, input_rate)?,
            inner,
            unbiased: vec![Complex32::default(); PIECE],
            balanced: vec![Complex32::default(); PIECE],
        })
    }
}

impl Block for IqCorrected {
    type Input = Complex32;
    type Output = f32;

    fn process(&mut self, input: &[Complex32], output: &mut [f32]) -> (usize, usize) {
        let mut consumed = 0;
        let mut produced = 0;
        while consumed < input.len() {
            let n = PIECE.min(input.len() - consumed);
            if self.inner.max_output_len(n) > output.len() - produced {
                break;
            }
            let piece = &input[consumed..consumed + n];
            self.dc.process(piece, &mut self.unbiased[..n]);
            self.balancer
                .process(&self.unbiased[..n], &mut self.balanced[..n]);
            let (_, p) = self
                .inner
                .process(&self.balanced[..n], &mut output[produced..]);
            consumed += n;
            produced += p;
        }
        (consumed, produced)
    }

    fn max_output_len(&self, input_len: usize) -> usize {
        crate::block::pieces_bound(input_len, PIECE, |n| self.inner.max_output_len(n))
    }

    fn rate_ratio(&self) -> f64 {
        self.inner.rate_ratio()
    }

    fn delay(&self) -> f64 {
        self.inner.delay()
    }

    fn reset(&mut self) {
        self.dc.reset();
        self.balancer.reset();
        self.inner.reset();
    }
}

impl Receiver for IqCorrected {
    fn audio_channels(&self) -> usize {
        self.inner.audio_channels()
    }

    fn audio_rate(&self) -> f64 {
        self.inner.audio_rate()
    }

    fn bandwidth_hz(&self) -> f64 {
        self.inner.bandwidth_hz()
    }

    fn measurements(&self) -> Measurements {
        self.inner.measurements()
    }
}

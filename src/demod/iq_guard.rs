//! Blind IQ-imbalance correction as a front-end guard: DC blocker, then the adaptive image
//! canceller ([`IqBalancer`]), on the IQ at the input rate.

use super::assembly::IqGuard;
use crate::block::Block;
use crate::dsp::{DcBlocker, IqBalancer};
use crate::{Complex32, Result};

/// Settling time of the balancer's adaptation, in seconds (common practice, no source).
pub const IQ_BALANCE_SETTLE_S: f64 = 0.05;
/// Corner of the DC blocker ahead of the balancer (common practice, no source).
const DC_CORNER_HZ: f64 = 10.0;

/// DC removal and blind IQ balancing, one sample in, one out.
pub struct IqBalanceGuard {
    dc: DcBlocker<Complex32>,
    balancer: IqBalancer,
}

impl IqBalanceGuard {
    /// A guard for IQ at `input_rate`.
    ///
    /// ```
    /// let guard = amrx::demod::IqBalanceGuard::new(2_400_000.0).unwrap();
    /// ```
    pub fn new(input_rate: f64) -> Result<Self> {
        Ok(IqBalanceGuard {
            dc: DcBlocker::new(DC_CORNER_HZ, input_rate)?,
            balancer: IqBalancer::new(IQ_BALANCE_SETTLE_S, input_rate)?,
        })
    }
}

impl Block for IqBalanceGuard {
    type Input = Complex32;
    type Output = Complex32;

    /// The DC blocker writes `output`; the balancer then works on it in place.
    fn process(&mut self, input: &[Complex32], output: &mut [Complex32]) -> (usize, usize) {
        let n = input.len().min(output.len());
        self.dc.process(&input[..n], &mut output[..n]);
        for y in &mut output[..n] {
            *y = self.balancer.next_sample(*y);
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

    fn reset(&mut self) {
        self.dc.reset();
        self.balancer.reset();
    }
}

impl IqGuard for IqBalanceGuard {}

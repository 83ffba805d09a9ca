//! Multi-stage decimation planner: any input rate down towards the audio rate, efficiently.

use crate::block::Block;
use crate::sample::Sample;
use crate::Result;

/// Reduces `from_rate / to_rate` to a ratio `(up, down)` of whole numbers.
pub fn rational_ratio(from_rate: f64, to_rate: f64) -> Result<(usize, usize)> {
    let _ = (from_rate, to_rate);
    todo!()
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

impl DecimationPlan {
    /// Plans the cascade.
    pub fn new(
        input_rate: f64,
        min_output_rate: f64,
        passband_hz: f64,
        attenuation_db: f64,
    ) -> Result<Self> {
        let _ = (input_rate, min_output_rate, passband_hz, attenuation_db);
        todo!()
    }
    /// Total decimation factor.
    pub fn total_factor(&self) -> usize {
        self.stages.iter().map(|s| s.factor).product()
    }
}

/// The plan's stages as one block.
#[derive(Debug, Clone)]
pub struct MultiStageDecimator<T: Sample> {
    _t: std::marker::PhantomData<T>,
}

impl<T: Sample> MultiStageDecimator<T> {
    /// Builds the blocks of `plan`.
    pub fn new(plan: &DecimationPlan) -> Result<Self> {
        let _ = plan;
        todo!()
    }
}

impl<T: Sample> Block for MultiStageDecimator<T> {
    type Input = T;
    type Output = T;
    fn process(&mut self, input: &[T], output: &mut [T]) -> (usize, usize) {
        let _ = (input, output);
        todo!()
    }
    fn max_output_len(&self, input_len: usize) -> usize {
        let _ = input_len;
        todo!()
    }
    fn reset(&mut self) {
        todo!()
    }
}

//! The audio end every mode shares: DC removal, then the audio low-pass and resampling from
//! the detection rate to the audio rate.

use super::front_end::FILTER_ATTENUATION_DB;
use crate::block::{pieces_bound, Block, PieceWise};
use crate::dsp::{DcBlocker, RationalResampler};
use crate::{Error, Result};

/// Corner of the DC blocker after detection (common practice, no source: below the lowest audio
/// of interest, settling in tens of milliseconds).
pub const AUDIO_DC_CORNER_HZ: f64 = 10.0;

/// DC blocker → audio low-pass at the bandwidth → resampling to the audio rate.
pub struct AudioStage {
    dc: DcBlocker<f32>,
    resampler: RationalResampler<f32>,
    scratch: Vec<f32>,
    audio_rate: f64,
}

impl AudioStage {
    /// An audio stage from `detection_rate` to `audio_rate` passing up to `bandwidth_hz`, for
    /// pieces of up to `max_piece` samples.
    pub fn new(
        detection_rate: f64,
        audio_rate: f64,
        bandwidth_hz: f64,
        max_piece: usize,
    ) -> Result<Self> {
        validate_audio(audio_rate, bandwidth_hz)?;
        Ok(AudioStage {
            dc: DcBlocker::new(AUDIO_DC_CORNER_HZ, detection_rate)?,
            resampler: RationalResampler::design(
                detection_rate,
                audio_rate,
                bandwidth_hz,
                FILTER_ATTENUATION_DB,
            )?,
            scratch: vec![0.0; max_piece],
            audio_rate,
        })
    }

    /// Audio rate in Hz.
    pub fn audio_rate(&self) -> f64 {
        self.audio_rate
    }
}

impl PieceWise for AudioStage {
    type In = f32;
    type Out = f32;

    fn piece_output_len(&self, n: usize) -> usize {
        self.resampler.max_output_len(n)
    }

    fn piece_len(&self) -> usize {
        self.scratch.len()
    }

    fn process_piece(&mut self, input: &[f32], output: &mut [f32]) -> usize {
        let n = input.len();
        self.dc.process(input, &mut self.scratch[..n]);
        self.resampler.process(&self.scratch[..n], output).1
    }
}

impl Block for AudioStage {
    type Input = f32;
    type Output = f32;

    /// Works through the input in pieces of the `max_piece` given at construction.
    fn process(&mut self, input: &[f32], output: &mut [f32]) -> (usize, usize) {
        self.process_pieces(input, output)
    }

    fn max_output_len(&self, input_len: usize) -> usize {
        pieces_bound(input_len, self.scratch.len(), |n| {
            self.resampler.max_output_len(n)
        })
    }

    fn rate_ratio(&self) -> f64 {
        self.resampler.rate_ratio()
    }

    fn delay(&self) -> f64 {
        self.resampler.delay()
    }

    fn reset(&mut self) {
        self.dc.reset();
        self.resampler.reset();
    }
}

/// Checks audio rate and bandwidth together.
pub fn validate_audio(audio_rate: f64, bandwidth_hz: f64) -> Result<()> {
    if !(audio_rate.is_finite() && (1000.0..=384_000.0).contains(&audio_rate)) {
        return Err(Error::parameter(
            "audio_rate",
            audio_rate,
            "must be between 1000 and 384000 Hz",
        ));
    }
    if !(bandwidth_hz.is_finite() && bandwidth_hz > 0.0) {
        return Err(Error::parameter(
            "bandwidth_hz",
            bandwidth_hz,
            "must be a positive number of Hz",
        ));
    }
    if bandwidth_hz >= 0.45 * audio_rate {
        return Err(Error::parameter(
            "bandwidth_hz",
            bandwidth_hz,
            format!(
                "must be below 0.45 × the audio rate ({} Hz)",
                0.45 * audio_rate
            ),
        ));
    }
    Ok(())
}

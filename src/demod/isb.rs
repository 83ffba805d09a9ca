//! Independent sideband (B8E): both sidebands of one carrier, detected separately, to stereo.
//!
//! Chain: [`ChannelFrontEnd`] (channel ±W) → an SSB detector per sideband (same method) → an
//! [`Agc`] per sideband → an [`AudioStage`] per sideband → interleaved frames [left, right],
//! left = lower sideband, right = upper sideband.

use super::audio_stage::{validate_audio, AudioStage};
use super::config::{Sideband, SsbMethod};
use super::front_end::{validate_tuning, ChannelFrontEnd, FrontEndConfig, CHUNK};
use super::pieces::Pieces;
use super::receiver::{Measurements, Receiver};
use super::ssb::{ssb_detector, SsbDetector};
use crate::block::Block;
use crate::dsp::{Agc, AgcSettings};
use crate::{Complex32, Result};

/// Settings of an ISB receiver.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct IsbConfig {
    /// IQ sample rate in Hz.
    pub input_rate: f64,
    /// Carrier (reference) frequency relative to the recording centre, in Hz.
    pub offset_hz: f64,
    /// Audio bandwidth W of each sideband in Hz.
    pub bandwidth_hz: f64,
    /// Output audio rate in Hz.
    pub audio_rate: f64,
    /// Phasing or Weaver, for both sidebands.
    pub method: SsbMethod,
    /// Gain control, applied to each sideband independently.
    pub agc: AgcSettings,
}

impl IsbConfig {
    /// Default bandwidth per sideband, 3 kHz (common practice, no source).
    pub const DEFAULT_BANDWIDTH_HZ: f64 = 3000.0;

    /// Settings with the defaults (3 kHz per sideband, 48 kHz audio, speech AGC).
    pub fn new(input_rate: f64, offset_hz: f64) -> Self {
        IsbConfig {
            input_rate,
            offset_hz,
            bandwidth_hz: Self::DEFAULT_BANDWIDTH_HZ,
            audio_rate: 48_000.0,
            method: SsbMethod::default(),
            agc: AgcSettings::SPEECH,
        }
    }

    /// Checks that the settings can be honoured, naming the offending option.
    pub fn validate(&self) -> Result<()> {
        validate_tuning(self.input_rate, self.offset_hz, self.bandwidth_hz)?;
        validate_audio(self.audio_rate, self.bandwidth_hz)
    }

    fn front_end(&self) -> FrontEndConfig {
        FrontEndConfig {
            input_rate: self.input_rate,
            offset_hz: self.offset_hz,
            channel_hz: self.bandwidth_hz,
            min_detection_rate: self.audio_rate,
        }
    }
}

/// One sideband's path after the front end.
struct SidebandPath {
    detector: SsbDetector,
    agc: Agc,
    audio: AudioStage,
    detected: Vec<f32>,
    out: Vec<f32>,
}

impl SidebandPath {
    fn new(config: &IsbConfig, sideband: Sideband, rate: f64, mid: usize) -> Result<Self> {
        let audio = AudioStage::new(rate, config.audio_rate, config.bandwidth_hz, mid)?;
        let out = vec![0.0; audio.max_output_len(mid)];
        Ok(SidebandPath {
            detector: ssb_detector(config.method, sideband, config.bandwidth_hz, rate)?,
            agc: Agc::new(config.agc, rate)?,
            audio,
            detected: vec![0.0; mid],
            out,
        })
    }

    /// Detects `channel` into `self.out`; returns the audio samples written.
    fn run(&mut self, channel: &[Complex32]) -> usize {
        let n = channel.len();
        self.detector.process(channel, &mut self.detected[..n]);
        for x in self.detected[..n].iter_mut() {
            *x = self.agc.next_sample(*x);
        }
        self.audio.process(&self.detected[..n], &mut self.out).1
    }

    fn reset(&mut self) {
        self.detector.reset();
        self.agc.reset();
        self.audio.reset();
    }
}

/// Independent-sideband receiver: stereo out, left = lower, right = upper sideband.
pub struct IsbReceiver {
    config: IsbConfig,
    front: ChannelFrontEnd,
    lower: SidebandPath,
    upper: SidebandPath,
    channel: Vec<Complex32>,
}

impl IsbReceiver {
    /// Builds the receiver for `config`.
    ///
    /// ```
    /// use amrx::demod::{IsbConfig, IsbReceiver, Receiver};
    /// let rx = IsbReceiver::new(IsbConfig::new(2_400_000.0, 50_000.0)).unwrap();
    /// assert_eq!(rx.audio_channels(), 2);
    /// ```
    pub fn new(config: IsbConfig) -> Result<Self> {
        config.validate()?;
        let front = ChannelFrontEnd::new(config.front_end())?;
        let rate = front.detection_rate();
        let mid = front.max_output_len(CHUNK);
        Ok(IsbReceiver {
            lower: SidebandPath::new(&config, Sideband::Lower, rate, mid)?,
            upper: SidebandPath::new(&config, Sideband::Upper, rate, mid)?,
            channel: vec![Complex32::default(); mid],
            front,
            config,
        })
    }

    /// The rate at which the sidebands are detected, in Hz.
    pub fn detection_rate(&self) -> f64 {
        self.front.detection_rate()
    }

    /// The settings.
    pub fn config(&self) -> &IsbConfig {
        &self.config
    }
}

impl Pieces for IsbReceiver {
    /// Interleaved outputs of one piece of `n ≤ CHUNK` inputs, at most.
    fn piece_bound(&self, n: usize) -> usize {
        2 * self
            .upper
            .audio
            .max_output_len(self.front.max_output_len(n))
    }

    fn process_piece(&mut self, input: &[Complex32], output: &mut [f32]) -> usize {
        let (_, n) = self.front.process(input, &mut self.channel);
        let left = self.lower.run(&self.channel[..n]);
        let right = self.upper.run(&self.channel[..n]);
        // Identical resamplers fed identical counts stay in step.
        debug_assert_eq!(left, right);
        let frames = left.min(right);
        for (k, frame) in output[..2 * frames].chunks_exact_mut(2).enumerate() {
            frame[0] = self.lower.out[k];
            frame[1] = self.upper.out[k];
        }
        2 * frames
    }
}

impl Block for IsbReceiver {
    type Input = Complex32;
    type Output = f32;

    fn process(&mut self, input: &[Complex32], output: &mut [f32]) -> (usize, usize) {
        self.process_pieces(input, output)
    }

    /// Counts interleaved samples (two per frame).
    fn max_output_len(&self, input_len: usize) -> usize {
        self.pieces_output_len(input_len)
    }

    fn rate_ratio(&self) -> f64 {
        2.0 * self.config.audio_rate / self.config.input_rate
    }

    fn delay(&self) -> f64 {
        let factor = self.config.input_rate / self.detection_rate();
        self.front.delay() + (self.upper.detector.delay() + self.upper.audio.delay()) * factor
    }

    fn reset(&mut self) {
        self.front.reset();
        self.lower.reset();
        self.upper.reset();
    }
}

impl Receiver for IsbReceiver {
    fn audio_channels(&self) -> usize {
        2
    }

    fn audio_rate(&self) -> f64 {
        self.config.audio_rate
    }

    fn bandwidth_hz(&self) -> f64 {
        self.config.bandwidth_hz
    }

    /// Nothing about a carrier is claimed (ISB carries none to lock to here).
    fn measurements(&self) -> Measurements {
        Measurements::default()
    }
}

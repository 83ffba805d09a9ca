//! Suppressed-carrier double sideband (DSB-SC) by coherent detection against a Costas loop.
//!
//! Chain: [`ChannelFrontEnd`] (channel ±W) → [`CarrierAcquisition`] (the squared signal's line
//! at twice the carrier, halved) driving a [`CostasLoop`] → audio = Re(de-rotated) → [`Agc`]
//! → [`AudioStage`].
//!
//! Coherent detection of DSB-SC: with the reference in phase, Re(y) = A·m(t) plus the in-phase
//! noise component only (Haykin, Communication Systems, ch. 2: figure of merit 1). The Costas
//! loop cannot tell 0 from 180°, so the audio may come out inverted; that is inaudible.
//!
//! No CNR is reported: there is no carrier to measure against (a signal-to-noise estimate
//! would need the message's spectrum, which DSB-SC does not constrain).

use super::audio_stage::{validate_audio, AudioStage};
use super::config::ReceiverConfig;
use super::front_end::{validate_tuning, ChannelFrontEnd, FrontEndConfig, CHUNK};
use super::pieces::Pieces;
use super::receiver::{Measurements, Receiver};
use crate::block::Block;
use crate::dsp::{Agc, AgcSettings};
use crate::sync::{CarrierAcquisition, CarrierKind, CostasLoop, PllConfig};
use crate::{Complex32, Result};

/// The suppressed carrier is searched for within this far of the tuned frequency, at most (half
/// the bandwidth when that is smaller; common practice, no source).
pub const CARRIER_SEARCH_HZ: f64 = 1000.0;

/// Settings of a DSB-SC receiver.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DsbConfig {
    /// IQ sample rate in Hz.
    pub input_rate: f64,
    /// Suppressed-carrier frequency relative to the recording centre, in Hz.
    pub offset_hz: f64,
    /// Audio (message) bandwidth W in Hz; the channel filter passes ±W.
    pub bandwidth_hz: f64,
    /// Output audio rate in Hz.
    pub audio_rate: f64,
    /// One-sided loop noise bandwidth B_L in Hz.
    pub loop_bandwidth_hz: f64,
    /// Loop damping ζ.
    pub loop_damping: f64,
    /// Gain control on the detected audio.
    pub agc: AgcSettings,
}

impl DsbConfig {
    /// Default audio bandwidth, 3 kHz for speech (common practice, no source).
    pub const DEFAULT_BANDWIDTH_HZ: f64 = 3000.0;
    /// Default loop bandwidth (common practice, no source).
    pub const DEFAULT_LOOP_BANDWIDTH_HZ: f64 = 30.0;
    /// Default gain control: speech AGC, as the level of DSB-SC follows the message alone.
    pub const DEFAULT_AGC: AgcSettings = AgcSettings::SPEECH;

    /// Settings with every default: ζ = 1/√2, speech AGC, 48 kHz audio.
    pub fn new(input_rate: f64, offset_hz: f64) -> Self {
        DsbConfig {
            input_rate,
            offset_hz,
            bandwidth_hz: Self::DEFAULT_BANDWIDTH_HZ,
            audio_rate: 48_000.0,
            loop_bandwidth_hz: Self::DEFAULT_LOOP_BANDWIDTH_HZ,
            loop_damping: std::f64::consts::FRAC_1_SQRT_2,
            agc: Self::DEFAULT_AGC,
        }
    }

    /// The settings from the shared receiver options, defaults where unset.
    pub fn from_options(config: &ReceiverConfig) -> Self {
        let o = &config.options;
        let defaults = Self::new(config.input_rate, config.offset_hz);
        DsbConfig {
            bandwidth_hz: o.bandwidth_hz.unwrap_or(Self::DEFAULT_BANDWIDTH_HZ),
            audio_rate: o.audio_rate,
            loop_bandwidth_hz: o
                .loop_settings
                .bandwidth_hz
                .unwrap_or(defaults.loop_bandwidth_hz),
            loop_damping: o.loop_settings.damping.unwrap_or(defaults.loop_damping),
            agc: o.agc.unwrap_or(Self::DEFAULT_AGC),
            ..defaults
        }
    }

    fn search_hz(&self) -> f64 {
        CARRIER_SEARCH_HZ.min(0.5 * self.bandwidth_hz)
    }
}

/// DSB-SC receiver.
pub struct DsbReceiver {
    config: DsbConfig,
    front: ChannelFrontEnd,
    carrier: CarrierAcquisition<CostasLoop>,
    agc: Agc,
    audio: AudioStage,
    channel: Vec<Complex32>,
    derotated: Vec<Complex32>,
    detected: Vec<f32>,
}

impl DsbReceiver {
    /// Builds the receiver; bad tuning, audio or loop settings are errors naming the option.
    ///
    /// ```
    /// use amrx::demod::{DsbConfig, DsbReceiver};
    /// let rx = DsbReceiver::new(DsbConfig::new(2_400_000.0, 40_000.0)).unwrap();
    /// assert_eq!(rx.detection_rate(), 48_000.0);
    /// ```
    pub fn new(config: DsbConfig) -> Result<Self> {
        validate_tuning(config.input_rate, config.offset_hz, config.bandwidth_hz)?;
        validate_audio(config.audio_rate, config.bandwidth_hz)?;
        let front = ChannelFrontEnd::new(FrontEndConfig {
            input_rate: config.input_rate,
            offset_hz: config.offset_hz,
            channel_hz: config.bandwidth_hz,
            min_detection_rate: config.audio_rate,
        })?;
        let rate = front.detection_rate();
        let costas = CostasLoop::new(PllConfig {
            sample_rate: rate,
            loop_bandwidth_hz: config.loop_bandwidth_hz,
            damping: config.loop_damping,
            initial_frequency_hz: 0.0,
        })?;
        let kind = CarrierKind::Suppressed;
        let mid = front.max_output_len(CHUNK);
        Ok(DsbReceiver {
            carrier: CarrierAcquisition::new(costas, kind, config.search_hz(), rate)?,
            agc: Agc::new(config.agc, rate)?,
            audio: AudioStage::new(rate, config.audio_rate, config.bandwidth_hz, mid)?,
            channel: vec![Complex32::default(); mid],
            derotated: vec![Complex32::default(); mid],
            detected: vec![0.0; mid],
            front,
            config,
        })
    }

    /// The rate at which the channel is filtered and the carrier tracked, in Hz.
    pub fn detection_rate(&self) -> f64 {
        self.front.detection_rate()
    }

    /// The settings.
    pub fn config(&self) -> &DsbConfig {
        &self.config
    }

    /// The Costas loop.
    pub fn carrier_loop(&self) -> &CostasLoop {
        self.carrier.carrier_loop()
    }

    /// The carrier acquisition in front of the loop.
    pub fn acquisition(&self) -> &CarrierAcquisition<CostasLoop> {
        &self.carrier
    }
}

impl Pieces for DsbReceiver {
    fn piece_bound(&self, n: usize) -> usize {
        self.audio.max_output_len(self.front.max_output_len(n))
    }

    fn process_piece(&mut self, input: &[Complex32], output: &mut [f32]) -> usize {
        let (_, n) = self.front.process(input, &mut self.channel);
        self.carrier
            .process(&self.channel[..n], &mut self.derotated[..n]);
        for (d, y) in self.detected[..n].iter_mut().zip(&self.derotated[..n]) {
            *d = self.agc.next_sample(y.re);
        }
        self.audio.process(&self.detected[..n], output).1
    }
}

impl Block for DsbReceiver {
    type Input = Complex32;
    type Output = f32;

    fn process(&mut self, input: &[Complex32], output: &mut [f32]) -> (usize, usize) {
        self.process_pieces(input, output)
    }

    fn max_output_len(&self, input_len: usize) -> usize {
        self.pieces_output_len(input_len)
    }

    fn rate_ratio(&self) -> f64 {
        self.config.audio_rate / self.config.input_rate
    }

    fn delay(&self) -> f64 {
        let factor = self.config.input_rate / self.detection_rate();
        self.front.delay() + self.audio.delay() * factor
    }

    fn reset(&mut self) {
        // Rebuilding cannot fail: the same settings built this receiver.
        if let Ok(fresh) = DsbReceiver::new(self.config) {
            *self = fresh;
        }
    }
}

impl Receiver for DsbReceiver {
    fn audio_channels(&self) -> usize {
        1
    }

    fn audio_rate(&self) -> f64 {
        self.config.audio_rate
    }

    fn bandwidth_hz(&self) -> f64 {
        self.config.bandwidth_hz
    }

    fn measurements(&self) -> Measurements {
        let costas = self.carrier_loop();
        let locked = costas.is_locked();
        let mut m = Measurements {
            carrier_offset_hz: Some(self.config.offset_hz + costas.frequency_hz()),
            locked: Some(locked),
            ..Measurements::default()
        };
        if !locked {
            m.warnings.push(format!(
                "carrier loop did not lock (lock metric {:.2}, needs 0.5): no suppressed carrier within ±{} Hz of the tuned frequency, or too weak; the audio is not usable",
                costas.lock_metric(),
                self.config.search_hz()
            ));
        }
        m
    }
}

//! Full-carrier AM (A3E) by envelope detection, from IQ at any rate to audio.
//!
//! Chain: [`ChannelFrontEnd`] (centre-spike removal, tuning, decimation, channel filter ±B) →
//! [`EnvelopeDetector`] → [`AudioStage`] (DC blocker removes the carrier, audio low-pass and
//! resampling). Meters tap the front end's spectrum (carrier frequency, CNR) and the envelope
//! (modulation depth).

use super::audio_stage::{validate_audio, AudioStage};
use super::envelope::EnvelopeDetector;
use super::front_end::{validate_tuning, ChannelFrontEnd, FrontEndConfig, CHUNK};
use super::pieces::Pieces;
use super::receiver::{Measurements, Receiver};
use crate::block::Block;
use crate::dsp::{Agc, AgcSettings};
use crate::measure::ModulationMeter;
use crate::{Complex32, Result};

/// Negative modulation at or beyond which the envelope detector distorts.
const OVERMODULATION_NEGATIVE: f64 = 0.99;
/// The envelope detector's threshold by the 1 % rule: P(noise envelope > A_c) = e^(−ρ) = 0.01,
/// ρ = ln 100 ≈ 6.6 dB (Haykin, Communication Systems, ch. 2, threshold effect).
const ENVELOPE_THRESHOLD_CNR_DB: f64 = 6.6;
/// The carrier is searched for within this far of the tuned frequency, at most (half the
/// bandwidth when that is smaller; common practice, no source).
const CARRIER_SEARCH_HZ: f64 = 2000.0;

/// Settings of a full-carrier AM receiver.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AmConfig {
    /// IQ sample rate in Hz.
    pub input_rate: f64,
    /// Carrier frequency relative to the recording centre, in Hz.
    pub offset_hz: f64,
    /// Audio (message) bandwidth in Hz; the channel filter passes ±bandwidth.
    pub bandwidth_hz: f64,
    /// Output audio rate in Hz.
    pub audio_rate: f64,
    /// Gain control on the detected envelope before the carrier is removed, so an automatic
    /// setting follows the carrier level (classic carrier-derived AGC); off by default.
    pub agc: AgcSettings,
}

impl AmConfig {
    /// Default audio bandwidth for broadcast AM, 5 kHz (common practice, no source).
    pub const DEFAULT_BANDWIDTH_HZ: f64 = 5000.0;
    /// Default audio rate, 48 kHz.
    pub const DEFAULT_AUDIO_RATE: f64 = 48000.0;

    /// Settings with the default bandwidth and audio rate.
    pub fn new(input_rate: f64, offset_hz: f64) -> Self {
        AmConfig {
            input_rate,
            offset_hz,
            bandwidth_hz: Self::DEFAULT_BANDWIDTH_HZ,
            audio_rate: Self::DEFAULT_AUDIO_RATE,
            agc: AgcSettings::OFF,
        }
    }

    /// Checks that the settings can be honoured, naming the offending option.
    pub fn validate(&self) -> Result<()> {
        validate_tuning(self.input_rate, self.offset_hz, self.bandwidth_hz)?;
        validate_audio(self.audio_rate, self.bandwidth_hz)
    }

    /// The shared front end's settings for this receiver.
    pub fn front_end(&self) -> FrontEndConfig {
        FrontEndConfig {
            input_rate: self.input_rate,
            offset_hz: self.offset_hz,
            channel_hz: self.bandwidth_hz,
            min_detection_rate: self.audio_rate,
        }
    }
}

/// Full-carrier AM receiver by envelope detection.
pub struct AmReceiver {
    config: AmConfig,
    front: ChannelFrontEnd,
    envelope: EnvelopeDetector,
    agc: Agc,
    audio: AudioStage,
    meter: ModulationMeter,
    /// Envelope samples still to skip before metering: the filters' start-up transient would
    /// otherwise read as deep negative modulation.
    settling: usize,
    channel: Vec<Complex32>,
    detected: Vec<f32>,
    levelled: Vec<f32>,
}

impl AmReceiver {
    /// Builds the receiver for `config`.
    ///
    /// ```
    /// use amrx::demod::{AmConfig, AmReceiver};
    /// let rx = AmReceiver::new(AmConfig::new(2_400_000.0, -25_000.0)).unwrap();
    /// assert_eq!(rx.detection_rate(), 48_000.0);
    /// ```
    pub fn new(config: AmConfig) -> Result<Self> {
        config.validate()?;
        let front = ChannelFrontEnd::new(config.front_end())?;
        let rate = front.detection_rate();
        let mid = front.max_output_len(CHUNK);
        Ok(AmReceiver {
            audio: AudioStage::new(rate, config.audio_rate, config.bandwidth_hz, mid)?,
            meter: ModulationMeter::new(rate),
            settling: front.settling_samples(),
            envelope: EnvelopeDetector::new(),
            agc: Agc::new(config.agc, rate)?,
            levelled: vec![0.0; mid],
            channel: vec![Complex32::default(); mid],
            detected: vec![0.0; mid],
            front,
            config,
        })
    }

    /// The rate at which the channel is filtered and the envelope detected, in Hz.
    pub fn detection_rate(&self) -> f64 {
        self.front.detection_rate()
    }

    /// The settings.
    pub fn config(&self) -> &AmConfig {
        &self.config
    }

    fn carrier_measurements(&self, m: &mut Measurements) {
        let search = (0.5 * self.config.bandwidth_hz).min(CARRIER_SEARCH_HZ);
        match self.front.find_carrier(search) {
            Some(peak) => {
                m.carrier_offset_hz = Some(self.config.offset_hz + peak.frequency_hz);
                m.cnr_db = self.front.cnr_db(&peak, self.config.bandwidth_hz);
                if let Some(cnr) = m.cnr_db.filter(|&c| c < ENVELOPE_THRESHOLD_CNR_DB) {
                    m.warnings.push(format!(
                        "CNR {cnr:.1} dB is below the envelope detector's threshold (about {ENVELOPE_THRESHOLD_CNR_DB} dB): expect noise capture"
                    ));
                }
            }
            None if self.front.spectrum().frames() > 0 => m.warnings.push(format!(
                "no carrier found within ±{search} Hz of the tuned frequency"
            )),
            None => m
                .warnings
                .push("too few samples to measure the carrier".to_string()),
        }
    }
}

impl Pieces for AmReceiver {
    /// Most outputs one piece of `n ≤ CHUNK` inputs can give.
    fn piece_bound(&self, n: usize) -> usize {
        self.audio.max_output_len(self.front.max_output_len(n))
    }

    /// Runs one piece of at most [`CHUNK`] inputs through every stage; returns outputs written.
    fn process_piece(&mut self, input: &[Complex32], output: &mut [f32]) -> usize {
        let (_, n) = self.front.process(input, &mut self.channel);
        self.envelope
            .process(&self.channel[..n], &mut self.detected[..n]);
        let skip = self.settling.min(n);
        self.settling -= skip;
        self.meter.push(&self.detected[skip..n]);
        self.agc
            .process(&self.detected[..n], &mut self.levelled[..n]);
        self.audio.process(&self.levelled[..n], output).1
    }
}

impl Block for AmReceiver {
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
        self.front.reset();
        self.agc.reset();
        self.audio.reset();
        self.meter = ModulationMeter::new(self.detection_rate());
        self.settling = self.front.settling_samples();
    }
}

impl Receiver for AmReceiver {
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
        let mut m = Measurements::default();
        self.carrier_measurements(&mut m);
        m.modulation_depth = self.meter.depth();
        if let Some(depth) = m
            .modulation_depth
            .filter(|d| d.negative >= OVERMODULATION_NEGATIVE)
        {
            m.warnings.push(format!(
                "overmodulation: negative peaks reach {:.0} %; the envelope detector distorts",
                100.0 * depth.negative
            ));
        }
        m
    }
}

//! Full-carrier AM (A3E) by envelope detection, from IQ at any rate to audio.
//!
//! Chain: [DC blocker when the hardware's centre spike lies in the channel] → mixer (tune the
//! carrier to 0 Hz) → multi-stage decimation → channel filter (±bandwidth) → envelope detector →
//! DC blocker (removes the carrier) → audio low-pass and resampling to the audio rate.
//! Meters tap the channel (spectrum: carrier frequency and CNR) and the envelope (modulation
//! depth).

use super::envelope::EnvelopeDetector;
use super::receiver::{Measurements, Receiver};
use crate::block::{pieces_bound, Block};
use crate::dsp::{
    design_lowpass, DcBlocker, DecimationPlan, Fir, LowpassSpec, Mixer, MultiStageDecimator,
    RationalResampler,
};
use crate::measure::{estimate_cnr_db_within, find_carrier, ModulationMeter, PowerSpectrum};
use crate::{Complex32, Error, Result};

/// How far beyond the channel the decimation keeps the spectrum flat, in bandwidths.
const NOISE_VIEW: f64 = 2.0;
/// Input samples processed per internal step; sizes every internal buffer.
const CHUNK: usize = 8192;
/// Stopband attenuation of the decimation and audio filters (common practice, no source).
const FILTER_ATTENUATION_DB: f64 = 70.0;
/// Negative modulation at or beyond which the envelope detector distorts.
const OVERMODULATION_NEGATIVE: f64 = 0.99;
/// The envelope detector's threshold by the 1 % rule: P(noise envelope > A_c) = e^(−ρ) = 0.01,
/// ρ = ln 100 ≈ 6.6 dB (Haykin, Communication Systems, ch. 2, threshold effect).
const ENVELOPE_THRESHOLD_CNR_DB: f64 = 6.6;

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
        }
    }

    /// Checks that the settings can be honoured, naming the offending option.
    pub fn validate(&self) -> Result<()> {
        validate_channel(
            self.input_rate,
            self.offset_hz,
            self.bandwidth_hz,
            self.audio_rate,
        )
    }

    /// The rate the channel is filtered and detected at: at least the audio rate, and room for
    /// the noise view (±[`NOISE_VIEW`] × bandwidth) with its transition band, so the envelope's
    /// harmonics do not alias either (common practice, no source).
    fn min_detection_rate(&self) -> f64 {
        self.audio_rate
            .max(3.0 * NOISE_VIEW * self.bandwidth_hz)
            .min(self.input_rate)
    }

    /// The flat band of the decimation cascade: wider than the channel, so the spectrum shows
    /// the noise floor beside the signal for the CNR estimate.
    fn noise_view_hz(&self) -> f64 {
        NOISE_VIEW * self.bandwidth_hz
    }
}

/// Checks input rate, tuning offset, bandwidth and audio rate together; shared by every mode.
pub fn validate_channel(
    input_rate: f64,
    offset_hz: f64,
    bandwidth_hz: f64,
    audio_rate: f64,
) -> Result<()> {
    if !(input_rate.is_finite() && input_rate > 0.0) {
        return Err(Error::parameter(
            "--rate",
            input_rate,
            "the sample rate must be a positive number of Hz",
        ));
    }
    let nyquist = input_rate / 2.0;
    if !offset_hz.is_finite() || offset_hz.abs() >= nyquist {
        return Err(Error::parameter(
            "--offset",
            offset_hz,
            format!("outside ±rate/2 (±{nyquist} Hz) of the recording"),
        ));
    }
    if !(audio_rate.is_finite() && (1000.0..=384_000.0).contains(&audio_rate)) {
        return Err(Error::parameter(
            "--audio-rate",
            audio_rate,
            "must be between 1000 and 384000 Hz",
        ));
    }
    if !(bandwidth_hz.is_finite() && bandwidth_hz > 0.0) {
        return Err(Error::parameter(
            "--bandwidth",
            bandwidth_hz,
            "must be a positive number of Hz",
        ));
    }
    if bandwidth_hz >= 0.45 * audio_rate {
        return Err(Error::parameter(
            "--bandwidth",
            bandwidth_hz,
            format!(
                "must be below 0.45 × the audio rate ({} Hz)",
                0.45 * audio_rate
            ),
        ));
    }
    if offset_hz.abs() + bandwidth_hz >= 0.9 * nyquist {
        return Err(Error::parameter(
            "--bandwidth",
            bandwidth_hz,
            format!("the channel (offset ± bandwidth) does not fit inside 90 % of ±rate/2 (±{nyquist} Hz)"),
        ));
    }
    Ok(())
}

/// Full-carrier AM receiver by envelope detection.
pub struct AmReceiver {
    config: AmConfig,
    detection_rate: f64,
    input_dc: Option<DcBlocker<Complex32>>,
    mixer: Mixer,
    decimator: MultiStageDecimator<Complex32>,
    channel: Fir<Complex32>,
    envelope: EnvelopeDetector,
    carrier_dc: DcBlocker<f32>,
    audio: RationalResampler<f32>,
    spectrum: PowerSpectrum,
    meter: ModulationMeter,
    /// Envelope samples still to skip before metering: the filters' start-up transient would
    /// otherwise read as deep negative modulation.
    settling: usize,
    buffers: Buffers,
}

/// Scratch between the stages, sized once for [`CHUNK`] inputs.
struct Buffers {
    unspiked: Vec<Complex32>,
    tuned: Vec<Complex32>,
    decimated: Vec<Complex32>,
    filtered: Vec<Complex32>,
    envelope: Vec<f32>,
    message: Vec<f32>,
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
        let plan = DecimationPlan::new(
            config.input_rate,
            config.min_detection_rate(),
            config.noise_view_hz(),
            FILTER_ATTENUATION_DB,
        )?;
        let detection_rate = plan.output_rate;
        let decimator = MultiStageDecimator::new(&plan)?;
        let channel = Fir::new(&channel_taps(config.bandwidth_hz, detection_rate)?)?;
        let audio = RationalResampler::design(
            detection_rate,
            config.audio_rate,
            config.bandwidth_hz,
            FILTER_ATTENUATION_DB,
        )?;
        let buffers = Buffers::new(&decimator);
        let mut receiver = AmReceiver {
            input_dc: centre_spike_blocker(&config)?,
            mixer: Mixer::new(-config.offset_hz, config.input_rate)?,
            decimator,
            channel,
            envelope: EnvelopeDetector::new(),
            carrier_dc: DcBlocker::new(CARRIER_DC_CORNER_HZ, detection_rate)?,
            audio,
            spectrum: PowerSpectrum::new(spectrum_len(detection_rate), detection_rate)?,
            meter: ModulationMeter::new(detection_rate),
            settling: 0,
            buffers,
            detection_rate,
            config,
        };
        receiver.settling = receiver.settling_samples();
        Ok(receiver)
    }

    /// The rate at which the channel is filtered and the envelope detected, in Hz.
    pub fn detection_rate(&self) -> f64 {
        self.detection_rate
    }

    /// The settings.
    pub fn config(&self) -> &AmConfig {
        &self.config
    }

    /// Envelope samples until the filters ahead of the detector have settled: twice their
    /// delay, plus five time constants of the centre-spike blocker when it is in use.
    fn settling_samples(&self) -> usize {
        let factor = self.config.input_rate / self.detection_rate;
        let filters = self.decimator.delay() / factor + self.channel.delay();
        let spike = if self.input_dc.is_some() {
            5.0 * self.detection_rate / (std::f64::consts::TAU * CARRIER_DC_CORNER_HZ)
        } else {
            0.0
        };
        (2.0 * filters + spike).ceil() as usize
    }

    /// Most outputs one piece of `n ≤ CHUNK` inputs can give.
    fn piece_bound(&self, n: usize) -> usize {
        self.audio.max_output_len(self.decimator.max_output_len(n))
    }

    /// Runs one piece of at most [`CHUNK`] inputs through every stage; returns outputs written.
    fn process_piece(&mut self, input: &[Complex32], output: &mut [f32]) -> usize {
        let b = &mut self.buffers;
        let input = match self.input_dc.as_mut() {
            Some(dc) => {
                dc.process(input, &mut b.unspiked[..input.len()]);
                &b.unspiked[..input.len()]
            }
            None => input,
        };
        let tuned = &mut b.tuned[..input.len()];
        self.mixer.process(input, tuned);
        let (_, n) = self.decimator.process(tuned, &mut b.decimated);
        let decimated = &b.decimated[..n];
        self.spectrum.push(decimated);
        self.channel.process(decimated, &mut b.filtered[..n]);
        self.envelope
            .process(&b.filtered[..n], &mut b.envelope[..n]);
        let skip = self.settling.min(n);
        self.settling -= skip;
        self.meter.push(&b.envelope[skip..n]);
        self.carrier_dc
            .process(&b.envelope[..n], &mut b.message[..n]);
        self.audio.process(&b.message[..n], output).1
    }

    fn carrier_measurements(&self, m: &mut Measurements) {
        let search = (0.5 * self.config.bandwidth_hz).min(2000.0);
        match find_carrier(&self.spectrum, 0.0, search) {
            Some(peak) => {
                m.carrier_offset_hz = Some(self.config.offset_hz + peak.frequency_hz);
                let flat = self.config.noise_view_hz().min(0.5 * self.detection_rate);
                let cnr =
                    estimate_cnr_db_within(&self.spectrum, &peak, self.config.bandwidth_hz, flat);
                if cnr.is_finite() {
                    m.cnr_db = Some(cnr);
                    if cnr < ENVELOPE_THRESHOLD_CNR_DB {
                        m.warnings.push(format!(
                            "CNR {cnr:.1} dB is below the envelope detector's threshold (about {ENVELOPE_THRESHOLD_CNR_DB} dB): expect noise capture"
                        ));
                    }
                }
            }
            None if self.spectrum.frames() > 0 => m.warnings.push(format!(
                "no carrier found within ±{search} Hz of the tuned frequency"
            )),
            None => m
                .warnings
                .push("too few samples to measure the carrier".to_string()),
        }
    }
}

/// Corner of the DC blocker that removes the carrier after detection (common practice, no
/// source: below the lowest audio of interest, short enough to settle in tens of ms).
const CARRIER_DC_CORNER_HZ: f64 = 10.0;

/// The centre spike of a direct-conversion front end only needs removing when it lands inside
/// the channel; a carrier within 100 Hz of the centre would be removed with it, so then not.
fn centre_spike_blocker(config: &AmConfig) -> Result<Option<DcBlocker<Complex32>>> {
    let offset = config.offset_hz.abs();
    if offset >= 100.0 && offset <= 2.0 * config.bandwidth_hz {
        Ok(Some(DcBlocker::new(
            CARRIER_DC_CORNER_HZ,
            config.input_rate,
        )?))
    } else {
        Ok(None)
    }
}

/// The channel filter: pass ±bandwidth, stop from 1.3 × bandwidth (common practice, no source).
fn channel_taps(bandwidth_hz: f64, rate: f64) -> Result<Vec<f32>> {
    let stop = (1.3 * bandwidth_hz).min(0.49 * rate);
    design_lowpass(&LowpassSpec {
        passband_hz: bandwidth_hz,
        stopband_hz: stop,
        attenuation_db: 60.0,
        sample_rate: rate,
    })
}

/// Spectrum length giving bins of about 10 Hz or finer, within 1024..=16384.
fn spectrum_len(rate: f64) -> usize {
    ((rate / 10.0).ceil() as usize)
        .next_power_of_two()
        .clamp(1024, 16384)
}

impl Buffers {
    fn new(decimator: &MultiStageDecimator<Complex32>) -> Self {
        let mid = decimator.max_output_len(CHUNK);
        Buffers {
            unspiked: vec![Complex32::default(); CHUNK],
            tuned: vec![Complex32::default(); CHUNK],
            decimated: vec![Complex32::default(); mid],
            filtered: vec![Complex32::default(); mid],
            envelope: vec![0.0; mid],
            message: vec![0.0; mid],
        }
    }
}

impl Block for AmReceiver {
    type Input = Complex32;
    type Output = f32;

    fn process(&mut self, input: &[Complex32], output: &mut [f32]) -> (usize, usize) {
        let mut consumed = 0;
        let mut produced = 0;
        while consumed < input.len() {
            let n = CHUNK.min(input.len() - consumed);
            if self.piece_bound(n) > output.len() - produced {
                break;
            }
            produced += self.process_piece(&input[consumed..consumed + n], &mut output[produced..]);
            consumed += n;
        }
        (consumed, produced)
    }

    fn max_output_len(&self, input_len: usize) -> usize {
        pieces_bound(input_len, CHUNK, |n| self.piece_bound(n))
    }

    fn delay(&self) -> f64 {
        let factor = self.config.input_rate / self.detection_rate;
        self.decimator.delay() + (self.channel.delay() + self.audio.delay()) * factor
    }

    fn reset(&mut self) {
        if let Some(dc) = self.input_dc.as_mut() {
            dc.reset();
        }
        self.mixer.reset();
        self.decimator.reset();
        self.channel.reset();
        self.carrier_dc.reset();
        self.audio.reset();
        if let Ok(fresh) =
            PowerSpectrum::new(spectrum_len(self.detection_rate), self.detection_rate)
        {
            self.spectrum = fresh;
        }
        self.meter = ModulationMeter::new(self.detection_rate);
        self.settling = self.settling_samples();
    }
}

impl Receiver for AmReceiver {
    fn audio_channels(&self) -> usize {
        1
    }

    fn audio_rate(&self) -> f64 {
        self.config.audio_rate
    }

    fn measurements(&self) -> Measurements {
        let mut m = Measurements::default();
        self.carrier_measurements(&mut m);
        m.modulation_depth = self.meter.depth();
        if let Some(depth) = m.modulation_depth {
            if depth.negative >= OVERMODULATION_NEGATIVE {
                m.warnings.push(format!(
                    "overmodulation: negative peaks reach {:.0} %; the envelope detector distorts",
                    100.0 * depth.negative
                ));
            }
        }
        m
    }
}

//! The receive front end: the [`FrontEnd`] seam every detector is fed through, and the tuner
//! every mode uses today ([`ChannelFrontEnd`]): centre-spike removal, tuning, decimation to the
//! detection rate, the channel filter, and the spectrum that carrier and CNR are measured on.

use super::config::ModeSettings;
use crate::block::{pieces_bound, Block, PieceWise, PIECE};
use crate::dsp::{
    design_lowpass, DcBlocker, DecimationPlan, Fir, LowpassSpec, Mixer, MultiStageDecimator,
};
use crate::measure::{estimate_cnr_db_within, find_carrier, CarrierPeak, PowerSpectrum};
use crate::{Complex32, Error, Result};

/// Stopband attenuation of the decimation and audio filters (common practice, no source).
pub const FILTER_ATTENUATION_DB: f64 = 70.0;
/// How far beyond the channel the decimation keeps the spectrum flat, in channel widths.
const NOISE_VIEW: f64 = 2.0;
/// Corner of the centre-spike blocker (common practice, no source).
const SPIKE_CORNER_HZ: f64 = 10.0;

/// What a detector is fed by: complex baseband at the detection rate with the tuned frequency
/// at 0 Hz, plus the spectrum carrier and CNR are measured on. A tuner over a recording and
/// one output of a channelizer are both front ends; the detector cannot tell which fed it.
pub trait FrontEnd: Block<Input = Complex32, Output = Complex32> + Send {
    /// The rate the channel comes out at, in Hz.
    fn detection_rate(&self) -> f64;
    /// The tuned frequency relative to the recording centre, in Hz.
    fn offset_hz(&self) -> f64;
    /// Retunes while running, phase-continuously (no click); the spectrum starts again.
    fn set_offset(&mut self, offset_hz: f64) -> Result<()>;
    /// The averaged spectrum of the tuned signal around the channel, at the detection rate.
    fn spectrum(&self) -> &PowerSpectrum;
    /// The half-width of the band the spectrum is flat over (noise is read there), in Hz.
    fn flat_band_hz(&self) -> f64;
    /// Output samples until the filters have settled.
    fn settling_samples(&self) -> usize;

    /// The last piece's samples before the channel filter (the wide view the measurement
    /// stage reads carrier and noise from), as many as the piece's output; empty for a front
    /// end without one.
    fn wide_view(&self) -> &[Complex32] {
        &[]
    }

    /// Two-sided noise bandwidth of the channel filter in Hz: the noise power reaching the
    /// detector is N0 times this.
    fn channel_noise_bandwidth_hz(&self) -> f64;

    /// The strongest spectral line within ±`search_hz` of `around_hz` (channel frequency).
    fn find_carrier_near(&self, around_hz: f64, search_hz: f64) -> Option<CarrierPeak> {
        find_carrier(self.spectrum(), around_hz, search_hz)
    }

    /// Carrier over noise in 2 × `message_bandwidth_hz`, in dB, noise from the flat band.
    fn cnr_db(&self, carrier: &CarrierPeak, message_bandwidth_hz: f64) -> Option<f64> {
        let cnr = estimate_cnr_db_within(
            self.spectrum(),
            carrier,
            message_bandwidth_hz,
            self.flat_band_hz(),
        );
        cnr.is_finite().then_some(cnr)
    }
}

/// Settings of the front end.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FrontEndConfig {
    /// IQ sample rate in Hz.
    pub input_rate: f64,
    /// Carrier (or suppressed-carrier reference) frequency relative to the recording centre.
    pub offset_hz: f64,
    /// The channel filter passes ±`channel_hz` around the tuned frequency.
    pub channel_hz: f64,
    /// Lowest acceptable detection rate (usually the audio rate).
    pub min_detection_rate: f64,
}

impl FrontEndConfig {
    /// The tuner for a mode's settings: the channel filter passes ±bandwidth, the detection
    /// rate is at least the audio rate.
    pub fn for_mode(settings: &ModeSettings) -> Self {
        FrontEndConfig {
            input_rate: settings.input_rate,
            offset_hz: settings.offset_hz,
            channel_hz: settings.bandwidth_hz,
            min_detection_rate: settings.audio_rate,
        }
    }
}

/// Tune, decimate and channel-filter: complex baseband at the input rate in, the channel at the
/// detection rate out, with the tuned frequency at 0 Hz.
pub struct ChannelFrontEnd {
    config: FrontEndConfig,
    detection_rate: f64,
    spike: Option<DcBlocker<Complex32>>,
    mixer: Mixer,
    decimator: MultiStageDecimator<Complex32>,
    channel: Fir<Complex32>,
    spectrum: PowerSpectrum,
    noise_bandwidth_hz: f64,
    last_len: usize,
    unspiked: Vec<Complex32>,
    decimated: Vec<Complex32>,
}

impl ChannelFrontEnd {
    /// Builds the front end; the tuning offset must lie inside ±rate/2 with the channel.
    ///
    /// ```
    /// use amrx::demod::front_end::{ChannelFrontEnd, FrontEnd, FrontEndConfig};
    /// let fe = ChannelFrontEnd::new(FrontEndConfig {
    ///     input_rate: 2_400_000.0,
    ///     offset_hz: 100_000.0,
    ///     channel_hz: 5_000.0,
    ///     min_detection_rate: 48_000.0,
    /// })
    /// .unwrap();
    /// assert_eq!(fe.detection_rate(), 48_000.0);
    /// ```
    pub fn new(config: FrontEndConfig) -> Result<Self> {
        validate_tuning(config.input_rate, config.offset_hz, config.channel_hz)?;
        let min_rate = config
            .min_detection_rate
            .max(3.0 * NOISE_VIEW * config.channel_hz)
            .min(config.input_rate);
        let view = (NOISE_VIEW * config.channel_hz).min(0.45 * min_rate);
        let plan = DecimationPlan::new(config.input_rate, min_rate, view, FILTER_ATTENUATION_DB)?;
        let detection_rate = plan.output_rate;
        let decimator = MultiStageDecimator::new(&plan)?;
        let mid = decimator.max_output_len(PIECE);
        let taps = channel_taps(config.channel_hz, detection_rate)?;
        Ok(ChannelFrontEnd {
            spike: centre_spike_blocker(&config)?,
            mixer: Mixer::new(-config.offset_hz, config.input_rate)?,
            noise_bandwidth_hz: noise_bandwidth(&taps, detection_rate),
            last_len: 0,
            channel: Fir::new(&taps)?,
            spectrum: PowerSpectrum::new(spectrum_len(detection_rate), detection_rate)?,
            decimator,
            detection_rate,
            config,
            unspiked: vec![Complex32::default(); PIECE],
            decimated: vec![Complex32::default(); mid],
        })
    }

    /// The settings.
    pub fn config(&self) -> &FrontEndConfig {
        &self.config
    }

    /// Exactly how many outputs the next `input_len` inputs give from the current state.
    pub fn output_len(&self, input_len: usize) -> usize {
        self.decimator.output_len(input_len)
    }
}

impl PieceWise for ChannelFrontEnd {
    type In = Complex32;
    type Out = Complex32;

    fn piece_output_len(&self, n: usize) -> usize {
        self.output_len(n)
    }

    fn process_piece(&mut self, input: &[Complex32], output: &mut [Complex32]) -> usize {
        let input = match self.spike.as_mut() {
            Some(dc) => {
                dc.process(input, &mut self.unspiked[..input.len()]);
                &self.unspiked[..input.len()]
            }
            None => input,
        };
        // The mixer writes its (finite) product straight into the first decimating filter's
        // window.
        let mixer = &mut self.mixer;
        let (_, n) = self
            .decimator
            .process_through(input, &mut self.decimated, |x, slot| {
                mixer.process(x, slot);
            });
        self.spectrum.push(&self.decimated[..n]);
        self.channel.process(&self.decimated[..n], &mut output[..n]);
        self.last_len = n;
        n
    }
}

impl Block for ChannelFrontEnd {
    type Input = Complex32;
    type Output = Complex32;

    fn process(&mut self, input: &[Complex32], output: &mut [Complex32]) -> (usize, usize) {
        self.process_pieces(input, output)
    }

    fn max_output_len(&self, input_len: usize) -> usize {
        pieces_bound(input_len, PIECE, |n| self.decimator.max_output_len(n))
    }

    fn rate_ratio(&self) -> f64 {
        self.detection_rate / self.config.input_rate
    }

    fn delay(&self) -> f64 {
        let factor = self.config.input_rate / self.detection_rate;
        self.decimator.delay() + self.channel.delay() * factor
    }

    fn reset(&mut self) {
        if let Some(dc) = self.spike.as_mut() {
            dc.reset();
        }
        self.mixer.reset();
        self.config.offset_hz = -self.mixer.frequency();
        self.decimator.reset();
        self.channel.reset();
        self.spectrum.reset();
        self.last_len = 0;
    }
}

impl FrontEnd for ChannelFrontEnd {
    fn detection_rate(&self) -> f64 {
        self.detection_rate
    }

    fn offset_hz(&self) -> f64 {
        self.config.offset_hz
    }

    /// The new channel must fit as the first did; the centre-spike blocker stays as it was
    /// chosen at construction.
    fn set_offset(&mut self, offset_hz: f64) -> Result<()> {
        let c = &self.config;
        validate_tuning(c.input_rate, offset_hz, c.channel_hz)?;
        self.mixer.set_frequency(-offset_hz)?;
        self.config.offset_hz = offset_hz;
        self.spectrum.reset();
        Ok(())
    }

    fn spectrum(&self) -> &PowerSpectrum {
        &self.spectrum
    }

    fn wide_view(&self) -> &[Complex32] {
        &self.decimated[..self.last_len]
    }

    fn channel_noise_bandwidth_hz(&self) -> f64 {
        self.noise_bandwidth_hz
    }

    fn flat_band_hz(&self) -> f64 {
        (NOISE_VIEW * self.config.channel_hz).min(0.45 * self.detection_rate)
    }

    /// Twice the filters' delay, plus five time constants of the centre-spike blocker when
    /// it is in use.
    fn settling_samples(&self) -> usize {
        let factor = self.config.input_rate / self.detection_rate;
        let filters = self.decimator.delay() / factor + self.channel.delay();
        let spike = if self.spike.is_some() {
            5.0 * self.detection_rate / (std::f64::consts::TAU * SPIKE_CORNER_HZ)
        } else {
            0.0
        };
        (2.0 * filters + spike).ceil() as usize
    }
}

/// Equivalent noise bandwidth of a FIR at `rate`: rate·Σh²/(Σh)² (F. J. Harris, "On the use
/// of windows for harmonic analysis with the DFT", Proc. IEEE 66, 1978, ENBW).
fn noise_bandwidth(taps: &[f32], rate: f64) -> f64 {
    let sum: f64 = taps.iter().map(|&h| f64::from(h)).sum();
    let energy: f64 = taps.iter().map(|&h| f64::from(h) * f64::from(h)).sum();
    rate * energy / (sum * sum)
}

/// Checks input rate and tuning: the offset inside ±rate/2 and the channel inside 90 % of it.
pub fn validate_tuning(input_rate: f64, offset_hz: f64, channel_hz: f64) -> Result<()> {
    if !(input_rate.is_finite() && input_rate > 0.0) {
        return Err(Error::parameter(
            "input_rate",
            input_rate,
            "the sample rate must be a positive number of Hz",
        ));
    }
    let nyquist = input_rate / 2.0;
    if !offset_hz.is_finite() || offset_hz.abs() >= nyquist {
        return Err(Error::parameter(
            "offset_hz",
            offset_hz,
            format!("outside ±rate/2 (±{nyquist} Hz) of the recording"),
        ));
    }
    if !(channel_hz.is_finite() && channel_hz > 0.0) {
        return Err(Error::parameter(
            "bandwidth_hz",
            channel_hz,
            "must be a positive number of Hz",
        ));
    }
    if offset_hz.abs() + channel_hz >= 0.9 * nyquist {
        return Err(Error::parameter(
            "bandwidth_hz",
            channel_hz,
            format!("the channel (offset ± bandwidth) does not fit inside 90 % of ±rate/2 (±{nyquist} Hz)"),
        ));
    }
    Ok(())
}

/// The centre spike of a direct-conversion front end only needs removing when it lands inside
/// the channel; a carrier within 100 Hz of the centre would be removed with it, so then not.
fn centre_spike_blocker(config: &FrontEndConfig) -> Result<Option<DcBlocker<Complex32>>> {
    let offset = config.offset_hz.abs();
    if offset >= 100.0 && offset <= 2.0 * config.channel_hz {
        Ok(Some(DcBlocker::new(SPIKE_CORNER_HZ, config.input_rate)?))
    } else {
        Ok(None)
    }
}

/// The channel filter: pass ±channel, stop from 1.3 × channel (common practice, no source).
fn channel_taps(channel_hz: f64, rate: f64) -> Result<Vec<f32>> {
    let pass = channel_hz.min(0.45 * rate);
    design_lowpass(&LowpassSpec {
        passband_hz: pass,
        stopband_hz: (1.3 * pass).min(0.5 * rate),
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::process_to_vec;

    fn config() -> FrontEndConfig {
        FrontEndConfig {
            input_rate: 960_000.0,
            offset_hz: -123_456.0,
            channel_hz: 5_000.0,
            min_detection_rate: 48_000.0,
        }
    }

    fn tone(freq: f64, len: usize) -> Vec<Complex32> {
        (0..len)
            .map(|n| {
                Complex32::from_polar(
                    0.5,
                    (std::f64::consts::TAU * freq * n as f64 / 960_000.0) as f32,
                )
            })
            .collect()
    }

    #[test]
    fn a_line_at_the_offset_comes_out_at_zero_hertz() {
        let mut fe = ChannelFrontEnd::new(config()).unwrap();
        let out = process_to_vec(&mut fe, &tone(-123_456.0 + 700.0, 192_000));
        assert_eq!(out.len(), 9600);
        let peak = fe.find_carrier_near(0.0, 2000.0).unwrap();
        assert!((peak.frequency_hz - 700.0).abs() < 0.5, "{peak:?}");
        // 0.5 amplitude, unity passband gain: the settled output keeps |y| = 0.5.
        let worst = out[2000..]
            .iter()
            .map(|y| (y.norm() - 0.5).abs())
            .fold(0.0f32, f32::max);
        assert!(worst < 1e-3, "ripple {worst}");
    }

    #[test]
    fn a_line_outside_the_channel_is_rejected() {
        let mut fe = ChannelFrontEnd::new(config()).unwrap();
        let out = process_to_vec(&mut fe, &tone(-123_456.0 + 9_000.0, 192_000));
        let worst = out[2000..].iter().map(|y| y.norm()).fold(0.0f32, f32::max);
        assert!(worst < 0.5e-3, "leak {worst} (60 dB below 0.5)");
    }

    /// The contract, with the delay probed on two lines inside the channel.
    #[test]
    fn meets_the_block_contract() {
        use crate::block::check::{check_block, BlockCheck, DelayProbe};
        let x = tone(-120_000.0, 100_000);
        let line = |f: f64| tone(-123_456.0 + f * 960_000.0, 192_000);
        let make = || ChannelFrontEnd::new(config()).unwrap();
        check_block(&BlockCheck {
            delay_probe: Some(DelayProbe {
                signal: &line,
                tones: [1000.0 / 960_000.0, 1100.0 / 960_000.0],
            }),
            ..BlockCheck::new(&make, &x)
        });
    }

    /// The audio stage's contract: DC removal, low-pass and 51.2 → 48 kHz, with the delay
    /// probed in the audio band where the DC blocker's own phase is negligible.
    #[test]
    fn audio_stage_meets_the_block_contract() {
        use crate::block::check::{check_block, BlockCheck, DelayProbe};
        use crate::demod::AudioStage;
        let sine = |f: f64| -> Vec<f32> {
            (0..40_000)
                .map(|n| (std::f64::consts::TAU * f * n as f64).sin() as f32 + 0.3)
                .collect()
        };
        let x = sine(0.05);
        let make = || AudioStage::new(51_200.0, 48_000.0, 5_000.0, 4096).unwrap();
        check_block(&BlockCheck {
            delay_probe: Some(DelayProbe {
                signal: &sine,
                tones: [2000.0 / 51_200.0, 2100.0 / 51_200.0],
            }),
            ..BlockCheck::new(&make, &x)
        });
    }
}

//! Vestigial sideband (C3F): the upper sideband to W, a vestige of width f_v below the
//! carrier, and the carrier, by coherent detection through a Nyquist-slope filter.
//!
//! Chain: [`ChannelFrontEnd`] (channel ±W) → carrier lock (a PLL de-rotates the signal so the
//! carrier sits on the positive real axis) → Nyquist-slope detector → [`Agc`] →
//! [`AudioStage`] (the DC blocker removes the carrier).
//!
//! The receiver filter is H(f) = ½·(1 + S(f)) with S odd: S(f) = f/f_v for |f| < f_v and
//! sgn(f) beyond, so H(0) = ½ and H(f) + H(−f) = 1 across the vestige, the Nyquist-slope
//! condition for distortion-free VSB detection (S. Haykin, *Communication Systems*, ch. 2,
//! vestigial sideband modulation). Audio = 2·Re(H∗x) = I(t−D) − (a∗Q)(t), where a is the real
//! antisymmetric FIR whose amplitude (see [`antisymmetric_amplitude`](crate::dsp::hilbert::antisymmetric_amplitude))
//! is S: the phasing structure with a slow Hilbert transformer. The arrangement tested is the
//! classic one: the transmitter passes the vestige flat and the receiver provides the slope.

use super::audio_stage::{validate_audio, AudioStage};
use super::config::{LoopSettings, Sideband};
use super::front_end::{validate_tuning, ChannelFrontEnd, FrontEndConfig, CHUNK};
use super::pieces::Pieces;
use super::receiver::{Measurements, Receiver};
use super::ssb::DEFAULT_LOCK_BANDWIDTH_HZ;
use super::PhasingDetector;
use crate::block::Block;
use crate::dsp::hilbert::windowed_antisymmetric;
use crate::dsp::{kaiser_beta, kaiser_num_taps, Agc, AgcSettings};
use crate::measure::find_carrier;
use crate::sync::carrier_lock::CarrierLock;
use crate::{Complex32, Error, Result};
use std::f64::consts::PI;

/// Window attenuation of the slope filter design (common practice, no source).
const SLOPE_ATTENUATION_DB: f64 = 60.0;
/// Half-width of the spectrum search around the loop's frequency for the CNR, in Hz.
const CARRIER_SEARCH_HZ: f64 = 20.0;

/// Taps of the real antisymmetric FIR a whose amplitude is the odd slope S(f) = f/f_v for
/// |f| < f_v, sgn(f) beyond. Ideal response: `a[m] = 2∫₀^½ S(f)·sin(2πfm) df
/// = 2·sin(kv)/(v·k²) − 2·cos(πm)/k` with k = 2πm, v = f_v/fs (`a[0] = 0`), Kaiser-windowed;
/// the window's main lobe is sized to f_v/2 so it rounds only the slope's corners.
pub fn nyquist_slope_taps(vestige_hz: f64, sample_rate: f64) -> Result<Vec<f32>> {
    if !(vestige_hz.is_finite() && vestige_hz > 0.0 && vestige_hz < 0.25 * sample_rate) {
        return Err(Error::parameter(
            "--vestige",
            vestige_hz,
            format!("must lie in (0, {} Hz)", 0.25 * sample_rate),
        ));
    }
    let v = vestige_hz / sample_rate;
    let n = kaiser_num_taps(SLOPE_ATTENUATION_DB, 0.5 * v) | 1;
    let ideal = |m: i64| {
        if m == 0 {
            return 0.0;
        }
        let k = 2.0 * PI * m as f64;
        2.0 * (k * v).sin() / (v * k * k) - 2.0 * (PI * m as f64).cos() / k
    };
    Ok(windowed_antisymmetric(
        n,
        kaiser_beta(SLOPE_ATTENUATION_DB),
        ideal,
    ))
}

/// Settings of a VSB receiver.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct VsbConfig {
    /// IQ sample rate in Hz.
    pub input_rate: f64,
    /// Carrier frequency relative to the recording centre, in Hz.
    pub offset_hz: f64,
    /// Upper-sideband audio bandwidth W in Hz.
    pub bandwidth_hz: f64,
    /// Vestige width f_v below the carrier, in Hz.
    pub vestige_hz: f64,
    /// Output audio rate in Hz.
    pub audio_rate: f64,
    /// Gain control at the detection rate.
    pub agc: AgcSettings,
    /// Carrier-loop overrides.
    pub loop_settings: LoopSettings,
}

impl VsbConfig {
    /// Default bandwidth W, 4 kHz (common practice, no source).
    pub const DEFAULT_BANDWIDTH_HZ: f64 = 4000.0;
    /// Default vestige, 750 Hz (common practice, no source).
    pub const DEFAULT_VESTIGE_HZ: f64 = 750.0;

    /// Settings with the defaults (4 kHz, 750 Hz vestige, 48 kHz audio, slow AGC, 10 Hz loop).
    pub fn new(input_rate: f64, offset_hz: f64) -> Self {
        VsbConfig {
            input_rate,
            offset_hz,
            bandwidth_hz: Self::DEFAULT_BANDWIDTH_HZ,
            vestige_hz: Self::DEFAULT_VESTIGE_HZ,
            audio_rate: 48_000.0,
            agc: AgcSettings::SLOW,
            loop_settings: LoopSettings::default(),
        }
    }

    /// Checks that the settings can be honoured, naming the offending option.
    pub fn validate(&self) -> Result<()> {
        validate_tuning(self.input_rate, self.offset_hz, self.bandwidth_hz)?;
        validate_audio(self.audio_rate, self.bandwidth_hz)?;
        if !(self.vestige_hz.is_finite()
            && self.vestige_hz > 0.0
            && self.vestige_hz < self.bandwidth_hz)
        {
            return Err(Error::parameter(
                "--vestige",
                self.vestige_hz,
                "must be positive and below the bandwidth",
            ));
        }
        Ok(())
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

/// Vestigial-sideband receiver with carrier PLL and Nyquist-slope detection.
pub struct VsbReceiver {
    config: VsbConfig,
    front: ChannelFrontEnd,
    lock: CarrierLock,
    detector: PhasingDetector,
    agc: Agc,
    audio: AudioStage,
    channel: Vec<Complex32>,
    detected: Vec<f32>,
}

impl VsbReceiver {
    /// Builds the receiver for `config`.
    ///
    /// ```
    /// use amrx::demod::{VsbConfig, VsbReceiver};
    /// let rx = VsbReceiver::new(VsbConfig::new(2_400_000.0, 100_000.0)).unwrap();
    /// assert_eq!(rx.detection_rate(), 48_000.0);
    /// ```
    pub fn new(config: VsbConfig) -> Result<Self> {
        config.validate()?;
        let front = ChannelFrontEnd::new(config.front_end())?;
        let rate = front.detection_rate();
        let mid = front.max_output_len(CHUNK);
        let taps = nyquist_slope_taps(config.vestige_hz, rate)?;
        Ok(VsbReceiver {
            lock: CarrierLock::new(
                rate,
                &config.loop_settings,
                DEFAULT_LOCK_BANDWIDTH_HZ,
                false,
            )?,
            // 2·Re(½(x + j·a∗x)) = I − a∗Q: the upper-sideband sign, scale 1.
            detector: PhasingDetector::from_taps(&taps, Sideband::Upper, 1.0)?,
            agc: Agc::new(config.agc, rate)?,
            audio: AudioStage::new(rate, config.audio_rate, config.bandwidth_hz, mid)?,
            channel: vec![Complex32::default(); mid],
            detected: vec![0.0; mid],
            front,
            config,
        })
    }

    /// The detection rate in Hz.
    pub fn detection_rate(&self) -> f64 {
        self.front.detection_rate()
    }

    /// The settings.
    pub fn config(&self) -> &VsbConfig {
        &self.config
    }
}

impl Pieces for VsbReceiver {
    fn piece_bound(&self, n: usize) -> usize {
        self.audio.max_output_len(self.front.max_output_len(n))
    }

    fn process_piece(&mut self, input: &[Complex32], output: &mut [f32]) -> usize {
        let (_, n) = self.front.process(input, &mut self.channel);
        self.lock.process_in_place(&mut self.channel[..n]);
        self.detector
            .process(&self.channel[..n], &mut self.detected[..n]);
        for x in self.detected[..n].iter_mut() {
            *x = self.agc.next_sample(*x);
        }
        self.audio.process(&self.detected[..n], output).1
    }
}

impl Block for VsbReceiver {
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
        self.front.delay() + (self.detector.delay() + self.audio.delay()) * factor
    }

    fn reset(&mut self) {
        self.front.reset();
        self.lock.reset();
        self.detector.reset();
        self.agc.reset();
        self.audio.reset();
    }
}

impl Receiver for VsbReceiver {
    fn audio_channels(&self) -> usize {
        1
    }

    fn audio_rate(&self) -> f64 {
        self.config.audio_rate
    }

    fn bandwidth_hz(&self) -> f64 {
        self.config.bandwidth_hz
    }

    /// The lock verdict; once locked, the tracked carrier frequency and its CNR.
    fn measurements(&self) -> Measurements {
        let mut m = Measurements {
            locked: Some(self.lock.is_locked()),
            ..Measurements::default()
        };
        match self.lock.frequency_hz() {
            Some(f) if self.lock.is_locked() => {
                m.carrier_offset_hz = Some(self.config.offset_hz + f);
                if let Some(peak) = find_carrier(self.front.spectrum(), f, CARRIER_SEARCH_HZ) {
                    m.cnr_db = self.front.cnr_db(&peak, self.config.bandwidth_hz);
                }
            }
            _ => m
                .warnings
                .push("no carrier locked: VSB needs its carrier for coherent detection".into()),
        }
        m
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::dsp::hilbert::antisymmetric_amplitude;

    /// The designed slope follows S(f) = f/f_v inside the vestige and 1 beyond, within 0.01
    /// away from the rounded corners (±f_v/4 around f_v); H(f) + H(−f) = 1 holds exactly by
    /// the odd symmetry of S.
    #[test]
    fn slope_follows_its_ideal() {
        let (fv, fs) = (750.0, 48_000.0);
        let taps = nyquist_slope_taps(fv, fs).unwrap();
        for f in [50.0, 300.0, 500.0, 1000.0, 2000.0, 4000.0] {
            let s = antisymmetric_amplitude(&taps, f / fs);
            let ideal = (f / fv).min(1.0);
            assert!((s - ideal).abs() < 0.01, "{f} Hz: {s} vs {ideal}");
        }
        assert!(nyquist_slope_taps(0.0, fs).is_err());
    }
}

//! A physical envelope detector: the channel is put on a real IF carrier at an oversampled
//! rate, rectified by an ideal diode into a capacitor that discharges through a resistor, and
//! the capacitor voltage is filtered and decimated back to the channel rate.
//!
//! Model (the textbook diode detector; Haykin, Communication Systems, ch. 2, "envelope
//! detector"; Carlson, Communication Systems, envelope detection): an ideal diode (no drop, no
//! series resistance) charges the capacitor instantly to the input when the input exceeds it;
//! otherwise the capacitor discharges through R:
//!
//! ```text
//! v[n] = max(x[n], v[n−1]·e^(−T/RC)),   T = 1/(L·fs)
//! ```
//!
//! With an ideal diode the detector is homogeneous (scaling x scales v), so a time constant that
//! is short against the carrier period does not distort a slowly varying envelope: it only
//! leaves a large carrier-rate ripple and lowers the detection gain towards the half-wave
//! rectifier's 1/π. A time constant long against the message makes the capacitor fall slower
//! than the envelope (diagonal clipping), which no filter after it can undo. The classic design
//! range is 1/f_c ≪ RC ≪ 1/W, and tone AM of index μ at ω_m is free of diagonal clipping for
//! RC ≤ √(1−μ²)/(μ·ω_m) (Haykin, ch. 2, problem on the envelope detector; Carlson).

use crate::block::{Block, PieceWise};
use crate::dsp::{design_lowpass, LowpassSpec};
use crate::dsp::{DecimationPlan, MultiStageDecimator, RationalResampler};
use crate::{Complex32, Error, Result};

/// Channel samples handled per internal step; sizes the oversampled buffers.
const PIECE: usize = 1024;
/// Stopband attenuation of the interpolation and decimation filters (common practice, no
/// source): the images of the channel and the carrier ripple must stay far below the audio.
const ATTENUATION_DB: f64 = 70.0;

/// Settings of a [`DiodeDetector`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DiodeConfig {
    /// Rate of the complex channel in and of the detected envelope out, in Hz.
    pub input_rate: f64,
    /// The channel is interpolated by this factor before it is put on the IF.
    pub oversample: usize,
    /// Samples per IF carrier cycle at the oversampled rate: f_IF = oversample·fs / this.
    pub samples_per_cycle: usize,
    /// The RC time constant in seconds.
    pub rc_s: f64,
    /// Half-width of the channel (the message bandwidth W), in Hz.
    pub bandwidth_hz: f64,
}

impl DiodeConfig {
    /// Default oversampling: 32 × 48 kHz = 1.536 MS/s.
    pub const DEFAULT_OVERSAMPLE: usize = 32;
    /// Default IF: 16 samples per cycle, 96 kHz at 1.536 MS/s (a carrier period of 10.4 µs).
    pub const DEFAULT_SAMPLES_PER_CYCLE: usize = 16;

    /// The default oversampling and IF for a channel at `input_rate`.
    pub fn new(input_rate: f64, bandwidth_hz: f64, rc_s: f64) -> Self {
        DiodeConfig {
            input_rate,
            oversample: Self::DEFAULT_OVERSAMPLE,
            samples_per_cycle: Self::DEFAULT_SAMPLES_PER_CYCLE,
            rc_s,
            bandwidth_hz,
        }
    }

    /// The oversampled (passband) rate in Hz.
    pub fn passband_rate(&self) -> f64 {
        self.input_rate * self.oversample as f64
    }

    /// The IF carrier frequency in Hz.
    pub fn if_hz(&self) -> f64 {
        self.passband_rate() / self.samples_per_cycle as f64
    }

    /// Checks the settings, naming the offending one.
    pub fn validate(&self) -> Result<()> {
        if !(self.input_rate.is_finite() && self.input_rate > 0.0) {
            return Err(Error::parameter(
                "diode input rate",
                self.input_rate,
                "must be positive",
            ));
        }
        if !(2..=256).contains(&self.oversample) {
            return Err(Error::parameter(
                "diode oversampling",
                self.oversample,
                "must be in 2..=256",
            ));
        }
        if !(self.rc_s.is_finite() && self.rc_s > 0.0) {
            return Err(Error::parameter(
                "diode RC",
                self.rc_s,
                "must be a positive number of seconds",
            ));
        }
        if !(self.bandwidth_hz.is_finite()
            && self.bandwidth_hz > 0.0
            && self.bandwidth_hz < 0.4 * self.input_rate)
        {
            return Err(Error::parameter(
                "bandwidth_hz",
                self.bandwidth_hz,
                "the diode detector needs a bandwidth in (0, 0.4 × the channel rate)",
            ));
        }
        // The passband signal f_IF ± W must stay clear of 0 Hz and of the Nyquist frequency.
        let f_if = self.if_hz();
        let w = self.bandwidth_hz;
        if self.samples_per_cycle < 4
            || f_if - w <= 2.0 * w
            || f_if + w >= 0.45 * self.passband_rate()
        {
            return Err(Error::parameter(
                "diode IF",
                f_if,
                format!(
                    "needs at least 4 samples per cycle and f_IF − W > 2W with f_IF + W below 0.45 × {} Hz",
                    self.passband_rate()
                ),
            ));
        }
        Ok(())
    }
}

/// Diode-and-RC envelope detector: complex channel in, capacitor voltage (filtered to the
/// channel rate) out.
///
/// Steps per channel sample: polyphase interpolation by L (images of the channel rejected by
/// 70 dB), x = Re(z·e^{j2πf_IF t}) on an exact table of one carrier cycle, the diode and RC
/// recursion at L·fs, then the multi-stage decimation back to fs (carrier ripple and its
/// harmonics rejected by 70 dB before they could alias). For a clean carrier of amplitude A the
/// output is close to A (a peak detector) when 1/f_IF ≪ RC, and tends to A/π as RC → 0.
pub struct DiodeDetector {
    config: DiodeConfig,
    interpolator: RationalResampler<Complex32>,
    decimator: MultiStageDecimator<f32>,
    carrier: Vec<Complex32>,
    carrier_index: usize,
    discharge: f32,
    voltage: f32,
    upsampled: Vec<Complex32>,
    passband: Vec<f32>,
}

impl DiodeDetector {
    /// Builds the detector.
    ///
    /// ```
    /// use amrx::block::process_to_vec;
    /// use amrx::demod::{DiodeConfig, DiodeDetector};
    /// use amrx::Complex32;
    /// let mut det = DiodeDetector::new(DiodeConfig::new(48_000.0, 5_000.0, 100e-6)).unwrap();
    /// let out = process_to_vec(&mut det, &vec![Complex32::new(0.5, 0.0); 4800]);
    /// // A steady carrier of amplitude 0.5: the capacitor sits just below the peak.
    /// assert!((out[4000] - 0.5).abs() < 0.05);
    /// ```
    pub fn new(config: DiodeConfig) -> Result<Self> {
        config.validate()?;
        let high_rate = config.passband_rate();
        let interpolator = RationalResampler::new(
            config.oversample,
            1,
            &design_lowpass(&LowpassSpec {
                passband_hz: config.bandwidth_hz,
                stopband_hz: config.input_rate - config.bandwidth_hz,
                attenuation_db: ATTENUATION_DB,
                sample_rate: high_rate,
            })?,
        )?;
        let plan = DecimationPlan::new(
            high_rate,
            config.input_rate,
            config.bandwidth_hz,
            ATTENUATION_DB,
        )?;
        if plan.total_factor() != config.oversample {
            return Err(Error::parameter(
                "diode oversampling",
                config.oversample,
                "must be a product of the factors 2, 3, 5 and 7",
            ));
        }
        let carrier = (0..config.samples_per_cycle)
            .map(|k| {
                let phase = std::f64::consts::TAU * k as f64 / config.samples_per_cycle as f64;
                Complex32::new(phase.cos() as f32, phase.sin() as f32)
            })
            .collect();
        let high = PIECE * config.oversample;
        Ok(DiodeDetector {
            interpolator,
            decimator: MultiStageDecimator::new(&plan)?,
            carrier,
            carrier_index: 0,
            discharge: (-1.0 / (high_rate * config.rc_s)).exp() as f32,
            voltage: 0.0,
            upsampled: vec![Complex32::default(); high],
            passband: vec![0.0; high],
            config,
        })
    }

    /// The settings.
    pub fn config(&self) -> &DiodeConfig {
        &self.config
    }

    /// Puts the interpolated channel on the IF and runs the diode and RC over it, in place
    /// into `passband`; returns the capacitor voltages written. The IF signal is formed first,
    /// a carrier cycle at a time (no index arithmetic per sample, so it vectorises), then the
    /// recursion runs over it.
    fn rectify(&mut self, n: usize) -> usize {
        let (passband, upsampled) = (&mut self.passband[..n], &self.upsampled[..n]);
        let mut done = 0;
        while done < n {
            let k = self.carrier_index;
            let len = (self.carrier.len() - k).min(n - done);
            let carrier = &self.carrier[k..k + len];
            let span = done..done + len;
            for ((v, z), c) in passband[span.clone()]
                .iter_mut()
                .zip(&upsampled[span])
                .zip(carrier)
            {
                *v = z.re * c.re - z.im * c.im;
            }
            done += len;
            self.carrier_index = (k + len) % self.carrier.len();
        }
        for v in passband.iter_mut() {
            self.voltage = diode_step(*v, self.voltage, self.discharge);
            *v = self.voltage;
        }
        n
    }
}

/// One step of the ideal diode into the capacitor: charge to the input if it is higher, else
/// discharge by the factor e^(−T/RC).
#[inline]
pub fn diode_step(x: f32, voltage: f32, discharge: f32) -> f32 {
    x.max(voltage * discharge)
}

/// The capacitor voltage for a real passband signal `x` at `rate` with time constant `rc_s`,
/// starting discharged. Allocates: for analysis and plots, not for streaming.
pub fn capacitor_voltage(x: &[f32], rc_s: f64, rate: f64) -> Vec<f32> {
    let discharge = (-1.0 / (rate * rc_s)).exp() as f32;
    let mut v = 0.0;
    x.iter()
        .map(|&x| {
            v = diode_step(x, v, discharge);
            v
        })
        .collect()
}

impl PieceWise for DiodeDetector {
    type In = Complex32;
    type Out = f32;
    fn piece_len(&self) -> usize {
        PIECE
    }

    /// The interpolator gives exactly L outputs per input.
    fn piece_output_len(&self, n: usize) -> usize {
        self.decimator.output_len(n * self.config.oversample)
    }

    /// Detects one piece of at most `PIECE` channel samples whose outputs fit.
    fn process_piece(&mut self, input: &[Complex32], output: &mut [f32]) -> usize {
        let (_, up) = self.interpolator.process(input, &mut self.upsampled);
        let n = self.rectify(up);
        self.decimator.process(&self.passband[..n], output).1
    }
}

impl Block for DiodeDetector {
    type Input = Complex32;
    type Output = f32;

    fn process(&mut self, input: &[Complex32], output: &mut [f32]) -> (usize, usize) {
        self.process_pieces(input, output)
    }

    fn max_output_len(&self, input_len: usize) -> usize {
        // L outputs per input, then ⌈·/L⌉ at most: one output per input, plus one.
        input_len + 1
    }

    fn rate_ratio(&self) -> f64 {
        1.0
    }

    fn delay(&self) -> f64 {
        let l = self.config.oversample as f64;
        self.interpolator.delay() + self.decimator.delay() / l
    }

    fn reset(&mut self) {
        self.interpolator.reset();
        self.decimator.reset();
        self.carrier_index = 0;
        self.voltage = 0.0;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::{process_in_chunks, process_to_vec};
    use crate::measure::sinad_db;
    use rand::{rngs::StdRng, RngExt, SeedableRng};
    use std::f64::consts::TAU;

    const FS: f64 = 48_000.0;

    fn tone_am(mu: f64, tone_hz: f64, len: usize) -> Vec<Complex32> {
        (0..len)
            .map(|n| {
                let a = 0.3 * (1.0 + mu * (TAU * tone_hz * n as f64 / FS).cos());
                Complex32::new(a as f32, 0.0)
            })
            .collect()
    }

    fn detector(rc_s: f64) -> DiodeDetector {
        DiodeDetector::new(DiodeConfig::new(FS, 5000.0, rc_s)).unwrap()
    }

    #[test]
    fn rejects_bad_settings() {
        assert!(DiodeDetector::new(DiodeConfig::new(FS, 5000.0, 0.0)).is_err());
        assert!(DiodeDetector::new(DiodeConfig::new(FS, 5000.0, f64::NAN)).is_err());
        assert!(DiodeDetector::new(DiodeConfig::new(FS, 30_000.0, 1e-4)).is_err());
        let mut odd = DiodeConfig::new(FS, 5000.0, 1e-4);
        odd.oversample = 11 * 3;
        assert!(DiodeDetector::new(odd).is_err());
        let mut low_if = DiodeConfig::new(FS, 5000.0, 1e-4);
        low_if.samples_per_cycle = 128;
        assert!(DiodeDetector::new(low_if).is_err());
    }

    #[test]
    fn steady_carrier_gain_between_rectifier_and_peak() {
        // Ideal diode: as RC → 0 the capacitor follows the half-wave rectified carrier, whose
        // mean is A/π; for RC ≫ 1/f_IF it holds the peak, minus about half the ripple
        // A·T_c/(2RC) (exponential discharge over one period T_c; Haykin ch. 2).
        let x = vec![Complex32::new(0.5, 0.0); 9600];
        let short = process_to_vec(&mut detector(1e-8), &x);
        let long = process_to_vec(&mut detector(1e-3), &x);
        let settled = |y: &[f32]| y[4000..].iter().sum::<f32>() / (y.len() - 4000) as f32;
        // The sampled rectifier's mean over one cycle of M = 16 samples, (A/M)·Σ max(cos, 0),
        // is 1.3 % below the continuous A/π.
        let m = DiodeConfig::DEFAULT_SAMPLES_PER_CYCLE;
        let half_wave = 0.5
            * (0..m)
                .map(|k| (TAU * k as f64 / m as f64).cos().max(0.0))
                .sum::<f64>() as f32
            / m as f32;
        assert!((half_wave * std::f32::consts::PI / 0.5 - 1.0).abs() < 0.02);
        assert!(
            (settled(&short) - half_wave).abs() < 0.002 * half_wave,
            "{}",
            settled(&short)
        );
        let t_c = 1.0 / 96_000.0;
        let peak = 0.5 * (1.0 - t_c / (2.0 * 1e-3)) as f32;
        assert!((settled(&long) - peak).abs() < 0.003, "{}", settled(&long));
    }

    #[test]
    fn good_time_constant_follows_the_envelope_and_a_long_one_clips() {
        // μ = 0.5 at 1 kHz: diagonal clipping is absent for RC ≤ √(1−μ²)/(μω_m) = 276 µs
        // (Haykin, Communication Systems, ch. 2). At 100 µs the distortion is the ripple's
        // remnant and the filters only; at 1 ms the capacitor cannot follow the troughs.
        let x = tone_am(0.5, 1000.0, 48_000);
        let good = process_to_vec(&mut detector(100e-6), &x);
        let long = process_to_vec(&mut detector(1e-3), &x);
        let good_sinad = sinad_db(&good[4800..], FS, 1000.0).unwrap();
        let long_sinad = sinad_db(&long[4800..], FS, 1000.0).unwrap();
        eprintln!("SINAD at RC 100 µs: {good_sinad:.1} dB, at 1 ms: {long_sinad:.1} dB");
        assert!(good_sinad > 30.0);
        assert!(long_sinad < good_sinad - 10.0);
    }

    #[test]
    fn chunk_invariant() {
        let x = tone_am(0.7, 1234.0, 20_000);
        let whole = process_to_vec(&mut detector(100e-6), &x);
        let mut rng = StdRng::seed_from_u64(11);
        let random: Vec<usize> = (0..64).map(|_| rng.random_range(1..3000usize)).collect();
        for sizes in [vec![1usize, 7, 1024], vec![4096], random] {
            let pieces = process_in_chunks(&mut detector(100e-6), &x, &sizes);
            assert_eq!(pieces, whole, "sizes {:?}", &sizes[..3]);
        }
    }

    #[test]
    fn one_output_per_input() {
        let mut det = detector(100e-6);
        let out = process_to_vec(&mut det, &tone_am(0.3, 700.0, 10_000));
        assert_eq!(out.len(), 10_000);
        assert!(out.iter().all(|v| v.is_finite()));
    }
}

//! The one receiver: front-end guards, a front end, a detector, gain control and the audio
//! stage, owning the piece loop, delay, reset, flush and channel count for every mode.

use super::audio_notch::AudioNotch;
use super::audio_stage::AudioStage;
use super::blank_guard::{Blanking, BlankingGuard};
use super::config::{ModeSettings, ReceiverConfig};
use super::detector::{Detector, DetectorContext, ModeDetector};
use super::front_end::{ChannelFrontEnd, FrontEnd, FrontEndConfig};
use super::halves::{BackHalf, FrontHalf, GuardHalf};
use super::iq_guard::IqBalanceGuard;
use super::receiver::{Measurements, Receiver};
use super::{Mode, Transmission};
use crate::block::{feed_zeros, pieces_bound, Block, PieceWise, PIECE};
use crate::dsp::Agc;
use crate::measure::carrier_meter::DEFAULT_WINDOW_S;
use crate::measure::{CarrierMeter, MeterSettings, ModulationDepth, WindowReading};
use crate::{Complex32, Result};

/// Lock fraction of the carrier-present time below which a warning is given (common
/// practice, no source).
const LOCKED_FRACTION: f64 = 0.9;
/// Unlocked carrier-present time allowed for acquisition before the warning (common
/// practice, no source).
const ACQUISITION_ALLOWANCE_S: f64 = 0.5;

/// A block on the IQ at the input rate, ahead of the front end (overload guard, noise
/// blanker, IQ balance), which may add to the receiver's measurements.
pub trait IqGuard: Block<Input = Complex32, Output = Complex32> + Send {
    /// Adds what the guard has seen (counts, warnings) to `m`.
    fn report(&self, _m: &mut Measurements) {}
    /// The receiver was retuned to `offset_hz` (relative to the recording centre).
    fn retune(&mut self, _offset_hz: f64) {}
}

/// A guard in the assembly's chain.
pub type Guard = Box<dyn IqGuard>;

/// A receiver: IQ at the input rate in, interleaved audio frames at the audio rate out.
///
/// ```
/// use amrx::block::{process_to_vec, Block};
/// use amrx::demod::{AmReceiver, Mode, Receiver, ReceiverConfig};
/// use amrx::Complex32;
///
/// // A bare carrier 25 kHz above the centre of a 240 kS/s recording, 0.2 s long.
/// let rate = 240_000.0;
/// let iq: Vec<Complex32> = (0..48_000)
///     .map(|n| Complex32::from_polar(0.5, (std::f64::consts::TAU * 25e3 * n as f64 / rate) as f32))
///     .collect();
/// let mut rx = AmReceiver::new(Mode::Am, &ReceiverConfig::new(rate, 25_000.0)).unwrap();
/// let mut audio = process_to_vec(&mut rx, &iq);
/// let mut tail = vec![0.0; rx.flush_output_len()];
/// let n = rx.flush(&mut tail);
/// audio.extend_from_slice(&tail[..n]);
/// // 0.2 s in, 0.2 s (plus the delay the caller trims) out at 48 kHz.
/// let delay = (rx.delay() * rx.rate_ratio()).round() as usize;
/// assert!(((audio.len() - delay) as i64 - 9600).abs() <= 1);
/// let m = rx.measurements();
/// assert!((m.carrier_offset_hz.unwrap() - 25_000.0).abs() < 5.0);
/// ```
pub struct Assembly<D: Detector> {
    settings: ModeSettings,
    head: Head,
    tail: Tail<D>,
    channel: Vec<Complex32>,
}

/// The assembly's first half, at the input rate: the guards and the front end. On two
/// threads ([`Assembly::halves`]) it runs on one and [`Tail`] on the other.
pub struct Head {
    guards: GuardChain,
    front: Box<dyn FrontEnd>,
    /// The guards' output of the current piece (empty without guards).
    guarded: Vec<Complex32>,
}

/// The guards of a [`Head`], in order, with their scratch: on two threads
/// ([`FrontHalf::split_guards`]) they run on the reader's thread as a [`GuardHalf`].
pub struct GuardChain {
    list: Vec<Guard>,
    scratch: [Vec<Complex32>; 2],
}

/// The assembly's second half, at the detection rate: detector, measurement stage, gain
/// control, audio stages and notches.
pub struct Tail<D: Detector> {
    detector: D,
    agcs: Vec<Agc>,
    audio: Vec<AudioStage>,
    notches: Vec<Option<AudioNotch>>,
    detected: Vec<Vec<f32>>,
    stereo: Vec<Vec<f32>>,
    /// The measurement stage, for modes with a carrier.
    meter: Option<CarrierMeter>,
}

/// The measurement stage's settings for a receiver's front end.
fn meter_settings(settings: &ModeSettings, front: &dyn FrontEnd, window_s: f64) -> MeterSettings {
    MeterSettings {
        sample_rate: front.detection_rate(),
        window_s,
        bandwidth_hz: settings.bandwidth_hz,
        search_hz: super::am::search_hz(settings.bandwidth_hz),
        flat_band_hz: front.flat_band_hz(),
        channel_noise_bandwidth_hz: front.channel_noise_bandwidth_hz(),
        settling_samples: front.settling_samples(),
        time_offset_s: front.delay() / settings.input_rate,
    }
}

/// Fills the measurement stage's figures and warnings into `m`.
fn fill_from_meter(meter: &CarrierMeter, m: &mut Measurements) {
    let s = meter.summary();
    let b = meter.settings();
    m.carrier_present_s = Some(s.carrier_present_s);
    m.carrier_dbfs = s.carrier_dbfs;
    m.cnr_db = s.cnr_db;
    m.cnr_bandwidth_hz = Some(s.cnr_bandwidth_hz);
    m.modulation_depth = match (s.positive_peak, s.negative_peak) {
        (Some(positive), Some(negative)) => Some(ModulationDepth { positive, negative }),
        _ => None,
    };
    m.lock_fraction = s.lock_fraction;
    if s.measured_s > 0.0 && s.carrier_present_s == 0.0 {
        m.warnings.push(format!(
            "no carrier within ±{:.0} Hz of the tuned frequency: the CNR (noise in {:.0} Hz) never reached {} dB in {:.1} s; the readings are of noise",
            b.search_hz,
            s.cnr_bandwidth_hz,
            crate::measure::carrier_meter::CARRIER_ON_CNR_DB,
            s.measured_s
        ));
    }
    if s.overmodulated_windows > 0 {
        m.warnings.push(format!(
            "overmodulation: negative peaks reach {:.0} % in {} of {} windows of {} s with the carrier present: the envelope pinches off",
            100.0 * s.negative_peak.unwrap_or(1.0),
            s.overmodulated_windows,
            s.depth_windows,
            b.window_s
        ));
    }
    // Acquisition takes a few windows: only a loop unlocked for longer than that is news.
    let unlocked_s = s
        .lock_fraction
        .map_or(0.0, |f| (1.0 - f) * s.carrier_present_s);
    if let Some(f) = s
        .lock_fraction
        .filter(|&f| f < LOCKED_FRACTION && unlocked_s > ACQUISITION_ALLOWANCE_S)
    {
        m.warnings.push(format!(
            "carrier loop did not lock for {:.0} % of the {:.1} s the carrier was present; the audio is not usable while unlocked",
            100.0 * (1.0 - f),
            s.carrier_present_s
        ));
    }
}

/// A "carrier" within this of the recording centre may be the receiver's DC offset.
const CENTRE_SPIKE_HZ: f64 = 1.0;
/// Below this positive peak a line at the centre is taken for the DC offset (our choice, no
/// source: a station's programme modulates more; the DC offset does not at all).
const CENTRE_SPIKE_DEPTH: f64 = 0.1;

/// A steady, unmodulated line at the recording centre is the receiver's DC offset (the local
/// oscillator leaking through), not a station: the carrier figures are withdrawn with a
/// warning. A modulated carrier there is kept, with a warning that the offset adds to it.
fn centre_spike_is_no_station(m: &mut Measurements) {
    let at_centre = m
        .carrier_offset_hz
        .is_some_and(|f| f.abs() < CENTRE_SPIKE_HZ);
    if !at_centre || m.carrier_present_s.is_none_or(|s| s == 0.0) {
        return;
    }
    let modulated = m
        .modulation_depth
        .is_some_and(|d| d.positive.max(d.negative) >= CENTRE_SPIKE_DEPTH);
    if modulated {
        m.warnings.push(
            "the carrier lies on the recording's centre, where the receiver's DC offset adds to it: level, CNR and depth include the offset".to_string(),
        );
        return;
    }
    m.warnings.push(format!(
        "no carrier: the only line at the tuning is the recording's centre spike ({} dBFS, unmodulated), the receiver's DC offset, not a station",
        m.carrier_dbfs.map_or("-".to_string(), |d| format!("{d:.1}"))
    ));
    m.carrier_present_s = Some(0.0);
    m.carrier_dbfs = None;
    m.cnr_db = None;
    m.modulation_depth = None;
    m.lock_fraction = None;
    if m.locked.is_some() {
        m.locked = Some(false);
    }
}

/// The table's builder for a detector type: see [`super::MODES`].
pub fn assemble<D: ModeDetector>(mode: Mode, config: &ReceiverConfig) -> Result<Box<dyn Receiver>> {
    Ok(Box::new(Assembly::<D>::new(mode, config)?))
}

impl<D: ModeDetector> Assembly<D> {
    /// The receiver for `mode` with the mode's defaults wherever `config` leaves a choice open:
    /// the tuner front end behind the overload guard, then the noise blanker and IQ balancing
    /// when asked for.
    pub fn new(mode: Mode, config: &ReceiverConfig) -> Result<Self> {
        let settings = mode.spec().resolve(config)?;
        let front = ChannelFrontEnd::new(FrontEndConfig::for_mode(&settings))?;
        let rate = settings.input_rate;
        let at = settings.offset_hz;
        let mut guards: Vec<Guard> =
            vec![Box::new(BlankingGuard::new(Blanking::Overload, rate, at)?)];
        if settings.noise_blanker {
            guards.push(Box::new(BlankingGuard::new(
                Blanking::NoiseBlanker,
                rate,
                at,
            )?));
        }
        if settings.iq_balance {
            guards.push(Box::new(IqBalanceGuard::new(settings.input_rate)?));
        }
        Self::with_front_end(settings, guards, Box::new(front), |s, c| D::build(s, c))
    }
}

impl<D: Detector> Assembly<D> {
    /// A receiver from its parts: `settings` for the audio end and gain control, the `guards`
    /// run in order on the IQ, any front end, and the detector `make` builds for it.
    pub fn with_front_end(
        settings: ModeSettings,
        guards: Vec<Guard>,
        front: Box<dyn FrontEnd>,
        make: impl FnOnce(&ModeSettings, &DetectorContext) -> Result<D>,
    ) -> Result<Self> {
        let rate = front.detection_rate();
        let mid = front.max_output_len(PIECE);
        let context = DetectorContext {
            detection_rate: rate,
            settling_samples: front.settling_samples(),
            max_piece: mid,
        };
        let detector = make(&settings, &context)?;
        let meter = match settings.mode.spec().transmission {
            Transmission::FullCarrier | Transmission::Vestigial => Some(CarrierMeter::new(
                meter_settings(&settings, front.as_ref(), DEFAULT_WINDOW_S),
            )?),
            _ => None,
        };
        let channels = detector.channels();
        let agc = |_| Agc::new(settings.agc, rate);
        let stage = |_| AudioStage::new(rate, settings.audio_rate, settings.bandwidth_hz, mid);
        let audio = (0..channels).map(stage).collect::<Result<Vec<_>>>()?;
        let notch = |_| {
            settings
                .notch
                .map(|n| AudioNotch::new(n, settings.audio_rate))
                .transpose()
        };
        let notches = (0..channels).map(notch).collect::<Result<Vec<_>>>()?;
        let stereo_len = if channels > 1 {
            audio[0].max_output_len(mid)
        } else {
            0
        };
        Ok(Assembly {
            head: Head {
                guarded: vec![Complex32::default(); if guards.is_empty() { 0 } else { PIECE }],
                guards: GuardChain {
                    scratch: std::array::from_fn(|_| {
                        vec![Complex32::default(); if guards.len() > 1 { PIECE } else { 0 }]
                    }),
                    list: guards,
                },
                front,
            },
            tail: Tail {
                agcs: (0..channels).map(agc).collect::<Result<Vec<_>>>()?,
                detected: vec![vec![0.0; mid]; channels],
                stereo: vec![vec![0.0; stereo_len]; channels],
                audio,
                notches,
                meter,
                detector,
            },
            channel: vec![Complex32::default(); mid],
            settings,
        })
    }

    /// The settings, with the mode's defaults filled in.
    pub fn settings(&self) -> &ModeSettings {
        &self.settings
    }

    /// The rate the channel is filtered and detected at, in Hz.
    pub fn detection_rate(&self) -> f64 {
        self.head.front.detection_rate()
    }

    /// The detector, for its loops and meters.
    pub fn detector(&self) -> &D {
        &self.tail.detector
    }

    /// The front end, for its spectrum.
    pub fn front_end(&self) -> &dyn FrontEnd {
        self.head.front.as_ref()
    }

    fn channels(&self) -> usize {
        self.tail.audio.len()
    }

    /// For usb and lsb: a hint when the emission stands on the other side of the tuned
    /// frequency, 10 dB or more above what the chosen side holds.
    fn reversed_sideband_warning(&self) -> Option<String> {
        let (wanted, other) = match self.settings.mode {
            Mode::Usb => ("upper", "lower"),
            Mode::Lsb => ("lower", "upper"),
            _ => return None,
        };
        let excess = super::channel_snr::mirror_excess_db(
            self.head.front.spectrum(),
            super::channel_snr::occupied_band_hz(&self.settings),
            self.head.front.flat_band_hz(),
        )?;
        (excess >= 10.0).then(|| {
            format!(
                "the sidebands look reversed: the {other} sideband holds {excess:.0} dB more than \
                 the {wanted} one tuned; if the front end delivers I and Q swapped, swap them \
                 back (--swap-iq), else choose the other sideband"
            )
        })
    }
}

impl<D: Detector> PieceWise for Assembly<D> {
    type In = Complex32;
    type Out = f32;

    fn piece_output_len(&self, n: usize) -> usize {
        self.channels() * self.tail.audio[0].max_output_len(self.head.front.max_output_len(n))
    }

    fn process_piece(&mut self, input: &[Complex32], output: &mut [f32]) -> usize {
        let m = self.head.run(input, &mut self.channel);
        let wide = self.head.front.wide_view();
        self.tail.run(&mut self.channel[..m], wide, output)
    }
}

impl Head {
    /// One piece of IQ through the guards and the front end into `channel`; returns the
    /// channel samples written (the front end's wide view holds as many, or none).
    fn run(&mut self, input: &[Complex32], channel: &mut [Complex32]) -> usize {
        self.run_piece(input, channel, &mut []).0
    }
}

impl GuardHalf for GuardChain {
    /// Every guard in turn, the last writing into `output`, piece by piece
    /// ([`crate::block::PIECE`]; the guards give the same samples however the input is cut).
    fn guard(&mut self, input: &[Complex32], output: &mut [Complex32]) {
        let last = self.list.len().saturating_sub(1);
        for (x, out) in input.chunks(PIECE).zip(output.chunks_mut(PIECE)) {
            let n = x.len();
            // Where the previous guard's output is: `None` for `x`, else a scratch buffer.
            let mut at = None;
            for (i, guard) in self.list.iter_mut().enumerate() {
                let [a, b] = &mut self.scratch;
                let (from, to, next): (&[Complex32], &mut [Complex32], _) = match (at, i == last) {
                    (None, true) => (x, &mut out[..n], None),
                    (None, false) => (x, &mut a[..n], Some(0)),
                    (Some(0), true) => (&a[..n], &mut out[..n], None),
                    (Some(0), false) => (&a[..n], &mut b[..n], Some(1)),
                    (Some(_), true) => (&b[..n], &mut out[..n], None),
                    (Some(_), false) => (&b[..n], &mut a[..n], Some(0)),
                };
                guard.process(from, to);
                at = next;
            }
            if self.list.is_empty() {
                out[..n].copy_from_slice(x);
            }
        }
    }

    fn retune(&mut self, offset_hz: f64) {
        for guard in &mut self.list {
            guard.retune(offset_hz);
        }
    }
}

impl<D: Detector> Tail<D> {
    fn channels(&self) -> usize {
        self.audio.len()
    }

    /// One piece of channel (with the front end's wide view of it, or an empty view) through
    /// detector, measurement stage, gain control and audio stage; returns the outputs written.
    fn run(&mut self, channel: &mut [Complex32], wide: &[Complex32], output: &mut [f32]) -> usize {
        let m = channel.len();
        self.detector.detect(channel, &mut self.detected);
        if let Some(meter) = self.meter.as_mut() {
            if wide.len() == m {
                meter.push(wide, self.detector.envelope(), self.detector.lock_state());
            }
        }
        for (agc, plane) in self.agcs.iter_mut().zip(&mut self.detected) {
            for x in &mut plane[..m] {
                *x = agc.next_sample(*x);
            }
        }
        if self.channels() == 1 {
            let p = self.audio[0].process(&self.detected[0][..m], output).1;
            if let Some(notch) = &mut self.notches[0] {
                notch.apply(&mut output[..p]);
            }
            return p;
        }
        self.interleave(m, output)
    }

    /// Each channel through its audio stage, then frames [c0, c1, ...] into `output`.
    fn interleave(&mut self, m: usize, output: &mut [f32]) -> usize {
        let channels = self.channels();
        let mut frames = usize::MAX;
        for c in 0..channels {
            let (_, p) = self.audio[c].process(&self.detected[c][..m], &mut self.stereo[c]);
            if let Some(notch) = &mut self.notches[c] {
                notch.apply(&mut self.stereo[c][..p]);
            }
            frames = frames.min(p);
        }
        for (k, frame) in output[..channels * frames]
            .chunks_exact_mut(channels)
            .enumerate()
        {
            for (c, y) in frame.iter_mut().enumerate() {
                *y = self.stereo[c][k];
            }
        }
        channels * frames
    }
}

impl FrontHalf for Head {
    fn run_piece(
        &mut self,
        input: &[Complex32],
        channel: &mut [Complex32],
        wide: &mut [Complex32],
    ) -> (usize, usize) {
        let front_input = if self.guards.list.is_empty() {
            input
        } else {
            let guarded = &mut self.guarded[..input.len()];
            self.guards.guard(input, guarded);
            guarded
        };
        self.front.run_piece(front_input, channel, wide)
    }

    fn max_piece_output(&self) -> usize {
        self.front.max_piece_output()
    }

    fn set_offset(&mut self, offset_hz: f64) -> Result<f64> {
        let step = FrontHalf::set_offset(&mut self.front, offset_hz)?;
        self.guards.retune(offset_hz);
        Ok(step)
    }

    fn offset_hz(&self) -> f64 {
        self.front.offset_hz()
    }

    fn split_guards(&mut self) -> Option<(&mut dyn GuardHalf, &mut dyn FrontHalf)> {
        if self.guards.list.is_empty() {
            return None;
        }
        Some((&mut self.guards, &mut self.front))
    }
}

/// The front end alone as a first half: what is left of a [`Head`] once its guards run
/// elsewhere.
impl FrontHalf for Box<dyn FrontEnd> {
    fn run_piece(
        &mut self,
        input: &[Complex32],
        channel: &mut [Complex32],
        wide: &mut [Complex32],
    ) -> (usize, usize) {
        let m = self.process(input, channel).1;
        let view = self.wide_view();
        if wide.len() >= m && view.len() == m {
            wide[..m].copy_from_slice(view);
            return (m, m);
        }
        (m, 0)
    }

    fn max_piece_output(&self) -> usize {
        self.max_output_len(PIECE)
    }

    fn set_offset(&mut self, offset_hz: f64) -> Result<f64> {
        let step = offset_hz - self.offset_hz();
        FrontEnd::set_offset(self.as_mut(), offset_hz)?;
        Ok(step)
    }

    fn offset_hz(&self) -> f64 {
        FrontEnd::offset_hz(self.as_ref())
    }
}

impl<D: Detector> BackHalf for Tail<D> {
    fn wants_wide(&self) -> bool {
        self.meter.is_some()
    }

    fn piece_output_len(&self, m: usize) -> usize {
        self.channels() * self.audio[0].max_output_len(m)
    }

    fn run_piece(
        &mut self,
        channel: &mut [Complex32],
        wide: &[Complex32],
        output: &mut [f32],
    ) -> usize {
        self.run(channel, wide, output)
    }

    fn retuned(&mut self, step_hz: f64) {
        self.detector.retuned(step_hz);
    }

    fn finish(&mut self) {
        if let Some(meter) = self.meter.as_mut() {
            meter.finish();
        }
    }

    fn cnr_db(&self) -> Option<f64> {
        self.meter.as_ref().and_then(|m| m.summary().cnr_db)
    }
}

impl<D: Detector> Block for Assembly<D> {
    type Input = Complex32;
    type Output = f32;

    fn process(&mut self, input: &[Complex32], output: &mut [f32]) -> (usize, usize) {
        self.process_pieces(input, output)
    }

    fn max_output_len(&self, input_len: usize) -> usize {
        pieces_bound(input_len, PIECE, |n| self.piece_output_len(n))
    }

    fn rate_ratio(&self) -> f64 {
        self.channels() as f64 * self.settings.audio_rate / self.settings.input_rate
    }

    fn delay(&self) -> f64 {
        let guards: f64 = self.head.guards.list.iter().map(|g| g.delay()).sum();
        let after_front = self.tail.detector.delay() + self.tail.audio[0].delay();
        guards + self.head.front.delay() + after_front / self.head.front.rate_ratio()
    }

    fn reset(&mut self) {
        for guard in &mut self.head.guards.list {
            guard.reset();
        }
        self.head.front.reset();
        self.tail.detector.reset();
        for agc in &mut self.tail.agcs {
            agc.reset();
        }
        for audio in &mut self.tail.audio {
            audio.reset();
        }
        for notch in self.tail.notches.iter_mut().flatten() {
            notch.reset();
        }
        if let Some(meter) = self.tail.meter.as_mut() {
            meter.reset();
        }
    }

    /// The measurement stage stops at the end of the real input (the zeros that bring out the
    /// tail are not metered), then the default flush.
    fn flush(&mut self, output: &mut [f32]) -> usize {
        if let Some(meter) = self.tail.meter.as_mut() {
            meter.finish();
        }
        let count = self.flush_len();
        feed_zeros(self, count, output)
    }
}

impl<D: Detector> Receiver for Assembly<D> {
    fn audio_channels(&self) -> usize {
        self.channels()
    }

    fn audio_rate(&self) -> f64 {
        self.settings.audio_rate
    }

    fn bandwidth_hz(&self) -> f64 {
        self.settings.bandwidth_hz
    }

    fn offset_hz(&self) -> f64 {
        self.head.front.offset_hz()
    }

    fn set_offset(&mut self, offset_hz: f64) -> Result<()> {
        let step = FrontHalf::set_offset(&mut self.head, offset_hz)?;
        self.tail.detector.retuned(step);
        Ok(())
    }

    fn measurements(&self) -> Measurements {
        let mut m = Measurements::default();
        if let Some(meter) = &self.tail.meter {
            fill_from_meter(meter, &mut m);
        }
        self.tail.detector.measure(self.head.front.as_ref(), &mut m);
        for guard in &self.head.guards.list {
            guard.report(&mut m);
        }
        if self.tail.meter.is_some() {
            centre_spike_is_no_station(&mut m);
        }
        if m.snr_db.is_none() {
            m.snr_db = super::channel_snr::estimate_channel_snr_db(
                self.head.front.spectrum(),
                super::channel_snr::occupied_band_hz(&self.settings),
                self.settings.bandwidth_hz,
                self.head.front.flat_band_hz(),
            );
        }
        if let Some(warning) = self.reversed_sideband_warning() {
            m.warnings.push(warning);
        }
        if m.cnr_db.is_some() && m.cnr_bandwidth_hz.is_none() {
            // Every detector's CNR is FrontEnd::cnr_db's: noise in twice the bandwidth.
            m.cnr_bandwidth_hz = Some(2.0 * self.settings.bandwidth_hz);
        }
        m
    }

    fn meter_summary(&self) -> Option<crate::measure::MeterSummary> {
        self.tail.meter.as_ref().map(CarrierMeter::summary)
    }

    fn set_meter_window(&mut self, window_s: f64) -> Result<()> {
        if let Some(meter) = self.tail.meter.as_mut() {
            let mut fresh = CarrierMeter::new(meter_settings(
                &self.settings,
                self.head.front.as_ref(),
                window_s,
            ))?;
            fresh.record_windows(meter.is_recording());
            *meter = fresh;
        }
        Ok(())
    }

    fn record_windows(&mut self, on: bool) {
        if let Some(meter) = self.tail.meter.as_mut() {
            meter.record_windows(on);
        }
    }

    fn halves(&mut self) -> Option<(&mut dyn FrontHalf, &mut dyn BackHalf)> {
        Some((&mut self.head, &mut self.tail))
    }

    fn take_windows(&mut self) -> Vec<WindowReading> {
        self.tail
            .meter
            .as_mut()
            .map(CarrierMeter::take_windows)
            .unwrap_or_default()
    }
}

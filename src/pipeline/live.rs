//! Live listening in the receive job: the sound-card sink and source when the crate is built
//! with the `sound` feature (one line of advice otherwise), retuning while running, and the
//! level and S/N figures a terminal shows.

use crate::block::Block;
use crate::demod::Receiver;
use crate::io::{AudioSink, IqSource};
use crate::{Complex32, Result};
use std::path::Path;
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::Mutex;

/// The prefix that names a sound-card input (`sound:default`, `sound:NAME`).
pub const SOUND_PREFIX: &str = "sound:";

/// The advice given when a sound feature is asked of a build without it.
pub const BUILD_WITH_SOUND: &str = "this amrx was built without sound-card support; \
     rebuild with: cargo build --release --features sound (needs the libasound2-dev package)";

/// The sound-card device named by an input like `sound:NAME` (`None` for anything else, and
/// for an existing file whose name happens to start with `sound:`).
pub fn sound_input_name(input: &Path) -> Option<&str> {
    let name = input.to_str()?.strip_prefix(SOUND_PREFIX)?;
    (!input.exists()).then_some(if name.is_empty() { "default" } else { name })
}

/// The largest clock difference absorbed between a sound-card input and output, ppm.
pub const MAX_CORRECTION_PPM: f64 = 1000.0;

/// Counts and figures of the sound card for the report.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct SoundFigures {
    /// Output underruns.
    pub underruns: u64,
    /// Capture overruns.
    pub overruns: u64,
    /// Stream errors the sound system reported.
    pub stream_errors: u64,
    /// Clock error in ppm, when measured.
    pub clock_ppm: Option<f64>,
    /// Output latency in seconds, when playing.
    pub latency_s: Option<f64>,
    /// Resampling correction applied to follow a live source's clock, ppm.
    pub correction_ppm: Option<f64>,
    /// Dropouts on the device side (the clock meters' count), and their seconds.
    pub dropouts: u64,
    /// Seconds lost or inserted in the dropouts.
    pub dropout_s: f64,
}

/// The sound side of a run: the shared counters (with the feature) or nothing.
#[derive(Default)]
pub(crate) struct SoundSession {
    #[cfg(feature = "sound")]
    stats: std::sync::Arc<crate::sound::LiveStats>,
    used: bool,
}

impl SoundSession {
    /// Opens the sound-card input `name` at `rate` (default 48 kHz).
    pub(crate) fn open_source(
        &mut self,
        name: &str,
        rate: Option<f64>,
    ) -> Result<Box<dyn IqSource>> {
        self.used = true;
        #[cfg(feature = "sound")]
        {
            let source = crate::sound::SoundSource::open(name, rate, self.stats.clone())?;
            Ok(Box::new(source))
        }
        #[cfg(not(feature = "sound"))]
        {
            let _ = rate;
            Err(crate::Error::file(
                format!("{SOUND_PREFIX}{name}"),
                BUILD_WITH_SOUND,
            ))
        }
    }

    /// Opens the sound-card output `device` for `channels` channels at `rate`.
    pub(crate) fn open_sink(
        &mut self,
        device: &str,
        rate: f64,
        channels: usize,
        latency_s: Option<f64>,
        follow_source_clock: bool,
    ) -> Result<Box<dyn AudioSink>> {
        self.used = true;
        #[cfg(feature = "sound")]
        {
            let mut settings = crate::sound::SoundSinkSettings::new(rate, channels);
            settings.device = device.to_string();
            settings.latency_s = latency_s;
            settings.follow_source_clock = follow_source_clock;
            let sink = crate::sound::SoundSink::open(&settings, self.stats.clone())?;
            Ok(Box::new(sink))
        }
        #[cfg(not(feature = "sound"))]
        {
            let _ = (rate, channels, latency_s, follow_source_clock);
            Err(crate::Error::file(
                format!("sound output '{device}'"),
                BUILD_WITH_SOUND,
            ))
        }
    }

    /// The figures, when a sound card took part.
    pub(crate) fn figures(&self) -> Option<SoundFigures> {
        if !self.used {
            return None;
        }
        #[cfg(feature = "sound")]
        {
            let f = self.stats.figures();
            Some(SoundFigures {
                underruns: f.underruns,
                overruns: f.overruns,
                stream_errors: f.stream_errors,
                clock_ppm: f.clock_ppm,
                latency_s: f.latency_s,
                correction_ppm: f.correction_ppm,
                dropouts: f.dropouts,
                dropout_s: f.dropout_s,
            })
        }
        #[cfg(not(feature = "sound"))]
        None
    }
}

/// Sends the audio to several sinks (a WAV file and the sound card).
pub(crate) struct TeeSink(pub Vec<Box<dyn AudioSink>>);

impl AudioSink for TeeSink {
    fn write(&mut self, samples: &[f32]) -> Result<()> {
        self.0.iter_mut().try_for_each(|s| s.write(samples))
    }
    fn finish(self: Box<Self>) -> Result<()> {
        let mut first = Ok(());
        for sink in self.0 {
            let done = sink.finish();
            if first.is_ok() {
                first = done;
            }
        }
        first
    }
}

/// What a listener changes and sees while a run goes on: shared between the receive job
/// (which reads the retune requests and publishes the figures) and whoever drives it (the
/// command line reads standard input and prints the figures). All methods take `&self`.
#[derive(Debug)]
pub struct LiveControl {
    retune: AtomicU64,
    audio_dbfs: AtomicU64,
    cnr_db: AtomicU64,
    offset_hz: AtomicU64,
    seconds: AtomicU64,
    problem: Mutex<Option<String>>,
}

impl Default for LiveControl {
    fn default() -> Self {
        let nan = f64::NAN.to_bits();
        LiveControl {
            retune: AtomicU64::new(nan),
            audio_dbfs: AtomicU64::new(nan),
            cnr_db: AtomicU64::new(nan),
            offset_hz: AtomicU64::new(nan),
            seconds: AtomicU64::new(0f64.to_bits()),
            problem: Mutex::new(None),
        }
    }
}

fn get(a: &AtomicU64) -> Option<f64> {
    let v = f64::from_bits(a.load(Ordering::Relaxed));
    v.is_finite().then_some(v)
}

fn set(a: &AtomicU64, v: f64) {
    a.store(v.to_bits(), Ordering::Relaxed);
}

/// The figures a live display shows.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct LiveStatus {
    /// Seconds of input received so far.
    pub seconds: f64,
    /// The tuned offset from the input's centre, Hz.
    pub offset_hz: Option<f64>,
    /// Audio RMS level over the last half second, dBFS (0 dBFS: a full-scale sine's RMS·√2).
    pub audio_dbfs: Option<f64>,
    /// Carrier-to-noise ratio so far (modes with a carrier), dB.
    pub cnr_db: Option<f64>,
}

impl LiveControl {
    /// Asks the receiver to retune to `offset_hz` (relative to the input's centre) at its next
    /// piece of input.
    pub fn retune(&self, offset_hz: f64) {
        set(&self.retune, offset_hz);
    }

    /// The latest figures.
    pub fn status(&self) -> LiveStatus {
        LiveStatus {
            seconds: get(&self.seconds).unwrap_or(0.0),
            offset_hz: get(&self.offset_hz),
            audio_dbfs: get(&self.audio_dbfs),
            cnr_db: get(&self.cnr_db),
        }
    }

    /// A refused retune since the last call (the receiver's error, in the library's words).
    pub fn take_problem(&self) -> Option<String> {
        self.problem.lock().ok().and_then(|mut p| p.take())
    }

    /// Publishes the tuning.
    pub(crate) fn publish_offset(&self, offset_hz: f64) {
        set(&self.offset_hz, offset_hz);
    }

    /// Publishes the audio level from its mean square over the last stretch.
    pub(crate) fn publish_level(&self, mean_square: f64) {
        // dBFS of the RMS against a full-scale sine's RMS (1/√2): a sine at 1.0 reads 0.
        set(
            &self.audio_dbfs,
            10.0 * (2.0 * mean_square).max(1e-20).log10(),
        );
    }

    /// Publishes the seconds of input received so far.
    pub(crate) fn publish_seconds(&self, seconds: f64) {
        set(&self.seconds, seconds);
    }

    /// Publishes the CNR so far.
    pub(crate) fn publish_cnr(&self, cnr_db: f64) {
        set(&self.cnr_db, cnr_db);
    }

    /// Hands a refused retune to whoever drives the run.
    pub(crate) fn report_problem(&self, problem: String) {
        if let Ok(mut p) = self.problem.lock() {
            *p = Some(problem);
        }
    }

    pub(crate) fn take_retune(&self) -> Option<f64> {
        let v = f64::from_bits(self.retune.swap(f64::NAN.to_bits(), Ordering::Relaxed));
        v.is_finite().then_some(v)
    }
}

/// The receiver as the runtime's block, with the live controls around it: a pending retune is
/// applied before each piece, and every half second of input the audio level, the CNR and
/// the tuning are published.
pub(crate) struct Controlled<'a> {
    pub(crate) receiver: &'a mut dyn Receiver,
    pub(crate) control: &'a LiveControl,
    pub(crate) input_rate: f64,
    tally: StatusTally,
}

/// What the status line shows, gathered piece by piece and published to a [`LiveControl`]
/// every 0.5 s of input: the audio level, the CNR and the seconds received. Used by the
/// one-thread receiver ([`Controlled`]) and the back half of the two-thread one.
#[derive(Debug, Default)]
pub(crate) struct StatusTally {
    /// Inputs seen, and since the last publication; the audio's energy and count since then.
    inputs: u64,
    since: u64,
    energy: f64,
    count: u64,
}

impl StatusTally {
    /// Adds `consumed` inputs and the `audio` they gave; every 0.5 s of input at
    /// `input_rate`, publishes the level, `cnr_db()` and the seconds to `control`.
    pub(crate) fn add(
        &mut self,
        control: &LiveControl,
        input_rate: f64,
        consumed: usize,
        audio: &[f32],
        cnr_db: impl FnOnce() -> Option<f64>,
    ) {
        self.inputs += consumed as u64;
        self.since += consumed as u64;
        self.energy += audio.iter().map(|&x| (x as f64) * (x as f64)).sum::<f64>();
        self.count += audio.len() as u64;
        if (self.since as f64) < 0.5 * input_rate {
            return;
        }
        if self.count > 0 {
            control.publish_level(self.energy / self.count as f64);
        }
        if let Some(cnr) = cnr_db() {
            control.publish_cnr(cnr);
        }
        control.publish_seconds(self.inputs as f64 / input_rate);
        self.since = 0;
        self.energy = 0.0;
        self.count = 0;
    }
}

impl<'a> Controlled<'a> {
    pub(crate) fn new(
        receiver: &'a mut dyn Receiver,
        control: &'a LiveControl,
        input_rate: f64,
    ) -> Self {
        control.publish_offset(receiver.offset_hz());
        Controlled {
            receiver,
            control,
            input_rate,
            tally: StatusTally::default(),
        }
    }
}

impl Block for Controlled<'_> {
    type Input = Complex32;
    type Output = f32;

    fn process(&mut self, input: &[Complex32], output: &mut [f32]) -> (usize, usize) {
        if let Some(hz) = self.control.take_retune() {
            match self.receiver.set_offset(hz) {
                Ok(()) => self.control.publish_offset(self.receiver.offset_hz()),
                Err(e) => self.control.report_problem(e.to_string()),
            }
        }
        let (consumed, produced) = self.receiver.process(input, output);
        let receiver = &*self.receiver;
        self.tally.add(
            self.control,
            self.input_rate,
            consumed,
            &output[..produced],
            || receiver.measurements().cnr_db,
        );
        (consumed, produced)
    }
    fn max_output_len(&self, input_len: usize) -> usize {
        self.receiver.max_output_len(input_len)
    }
    fn rate_ratio(&self) -> f64 {
        self.receiver.rate_ratio()
    }
    fn delay(&self) -> f64 {
        self.receiver.delay()
    }
    fn reset(&mut self) {
        self.receiver.reset()
    }
    fn flush_len(&self) -> usize {
        self.receiver.flush_len()
    }
    fn flush_output_len(&self) -> usize {
        self.receiver.flush_output_len()
    }
    fn flush(&mut self, output: &mut [f32]) -> usize {
        self.receiver.flush(output)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::process_to_vec;
    use crate::demod::{build_receiver, Mode, ReceiverConfig};

    #[test]
    fn names_sound_inputs_but_not_files() {
        assert_eq!(
            sound_input_name(Path::new("sound:default")),
            Some("default")
        );
        assert_eq!(sound_input_name(Path::new("sound:")), Some("default"));
        assert_eq!(sound_input_name(Path::new("sound:card 2")), Some("card 2"));
        assert_eq!(sound_input_name(Path::new("x.wav")), None);
    }

    /// A retune asked for between pieces reaches the receiver; a refused one is kept for the
    /// display; the time, tuning and level are published.
    #[test]
    fn retunes_and_publishes_the_level() {
        let config = ReceiverConfig::new(48_000.0, 0.0);
        let mut rx = build_receiver(Mode::Usb, &config).unwrap();
        let control = LiveControl::default();
        let iq: Vec<Complex32> = (0..48_000)
            .map(|n| Complex32::from_polar(0.5, std::f32::consts::TAU * 1000.0 * n as f32 / 48e3))
            .collect();
        {
            let mut block = Controlled::new(rx.as_mut(), &control, 48_000.0);
            assert_eq!(block.control.status().offset_hz, Some(0.0));
            control.retune(-500.0);
            let _ = process_to_vec(&mut block, &iq);
        }
        assert_eq!(rx.offset_hz(), -500.0);
        let status = control.status();
        assert_eq!(status.offset_hz, Some(-500.0));
        assert!((status.seconds - 1.0).abs() < 0.1, "{status:?}");
        assert!(status.audio_dbfs.is_some());
        control.retune(1e9);
        let mut block = Controlled::new(rx.as_mut(), &control, 48_000.0);
        let _ = process_to_vec(&mut block, &iq[..1000]);
        assert!(control.take_problem().is_some());
        assert_eq!(control.take_problem(), None);
    }
}

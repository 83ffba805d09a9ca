//! The receive job: open the input, build the mode's receiver, stream to the audio sink, report.

use super::live::{sound_input_name, Controlled, LiveControl, SoundSession, TeeSink};
use super::progress::Progress;
use super::report::Report;
use super::runtime::{run_stream, RuntimeConfig};
use super::split::{run_split, SplitPlan};
use crate::demod::{build_receiver, Mode, Receiver, ReceiverConfig, ReceiverOptions};
use crate::io::{
    check_destination, check_not_input, open_input, AudioSink, InputOptions, IqSource,
    RawAudioSink, WavAudioSink, WavEncoding,
};
use crate::{Error, Result};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};

/// Where the receiver is tuned.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub enum Tuning {
    /// The recording centre.
    #[default]
    Centre,
    /// Carrier offset from the recording centre in Hz.
    Offset(f64),
    /// Absolute carrier frequency in Hz (needs the recording's centre frequency).
    Carrier(f64),
}

/// Where the audio goes.
#[derive(Debug, Clone, PartialEq)]
pub enum AudioTarget {
    /// A WAV file; 16-bit PCM when `pcm16`, else 32-bit float.
    Wav {
        /// The file.
        path: PathBuf,
        /// 16-bit PCM instead of 32-bit float.
        pcm16: bool,
    },
    /// Raw little-endian f32 on standard output.
    Stdout,
    /// No file: the audio only plays (with [`DemodRequest::play`]).
    Nothing,
}

/// Everything a `demod` run needs.
#[derive(Debug, Clone, PartialEq)]
pub struct DemodRequest {
    /// The IQ input (`-` for standard input).
    pub input: PathBuf,
    /// Format, rate and channel options for the input.
    pub input_options: InputOptions,
    /// Receive mode.
    pub mode: Mode,
    /// Tuning.
    pub tuning: Tuning,
    /// Audio rate, bandwidth, sideband, loop and AGC options.
    pub options: ReceiverOptions,
    /// Audio destination.
    pub audio: AudioTarget,
    /// Where to write the JSON report, if anywhere.
    pub report: Option<PathBuf>,
    /// Also play the audio on this sound-card output (`default` for the default), paced to
    /// the card's clock; needs the `sound` feature.
    pub play: Option<String>,
    /// Output latency for `play` in seconds (device buffer plus the ring's target fill);
    /// `None`: the sink's default (30 ms). Larger values ride out a busy machine.
    pub play_latency_s: Option<f64>,
    /// Runs the whole receiver on one DSP thread. Otherwise a file-to-file run cuts it in two
    /// halves on two threads ([`super::split`]), with the same audio and report; a run with a
    /// sound card keeps one DSP thread either way.
    pub one_thread: bool,
}

impl DemodRequest {
    /// A request with the default audio rate and bandwidth, tuned to the centre.
    pub fn new(input: impl Into<PathBuf>, mode: Mode, audio: AudioTarget) -> Self {
        DemodRequest {
            input: input.into(),
            input_options: InputOptions::default(),
            mode,
            tuning: Tuning::Centre,
            options: ReceiverOptions::default(),
            audio,
            report: None,
            play: None,
            play_latency_s: None,
            one_thread: false,
        }
    }
}

/// Runs a request to the end and returns its report (also written to `request.report`).
///
/// `progress` is called from the reading thread with the input samples read so far and,
/// when the input's length is known, the total to read.
pub fn run_demod(request: &DemodRequest, progress: &(dyn Fn(Progress) + Sync)) -> Result<Report> {
    run_demod_until(request, progress, &AtomicBool::new(false))
}

/// The report's warning for a run cut short by [`run_demod_until`]'s `stop`.
pub const INTERRUPTED_WARNING: &str = "the run was interrupted";

/// As [`run_demod`], reading until the end of the input or until `stop` becomes true (a
/// signal handler sets it). On a stop, reading ends, the samples already read are drained
/// through the receiver and flushed, the WAV is finalised and the report is written with a
/// warning starting with [`INTERRUPTED_WARNING`].
///
/// No output may be an input: the audio file and the report are checked against the input
/// (and, for SigMF, both of its files) by file identity before anything is written.
pub fn run_demod_until(
    request: &DemodRequest,
    progress: &(dyn Fn(Progress) + Sync),
    stop: &AtomicBool,
) -> Result<Report> {
    run_demod_live(request, progress, stop, &LiveControl::default())
}

/// As [`run_demod_until`], with live controls: `control` carries retune requests in and the
/// level, CNR and tuning out while the run goes on (see [`LiveControl`]).
///
/// An input named `sound:NAME` captures IQ from a sound card (feature `sound`), and
/// `request.play` plays the audio on one; a sound card in the run makes the report carry
/// `underruns`, `overruns`, `stream_errors` and, once measured, `clock_ppm`.
pub fn run_demod_live(
    request: &DemodRequest,
    progress: &(dyn Fn(Progress) + Sync),
    stop: &AtomicBool,
    control: &LiveControl,
) -> Result<Report> {
    let mut sound = SoundSession::default();
    let live_input = sound_input_name(&request.input);
    let mut source = match live_input {
        Some(name) => {
            request.input_options.stream.validate()?;
            crate::io::adapt_source(
                sound.open_source(name, request.input_options.rate)?,
                &request.input_options.stream,
            )?
        }
        None => open_input(&request.input, &request.input_options)?,
    };
    let input_files = input_files(&request.input, &source.info().path);
    let inputs: Vec<&Path> = input_files.iter().map(PathBuf::as_path).collect();
    if let Some(report) = &request.report {
        check_not_input(report, &inputs)?;
        if let AudioTarget::Wav { path, .. } = &request.audio {
            check_not_input(report, &[path])?;
        }
    }
    // Before any sample is read: first that no output is an input, then that each is of a
    // kind amrx writes, in a folder that exists.
    if let AudioTarget::Wav { path, .. } = &request.audio {
        check_not_input(path, &inputs)?;
        check_destination(path, &["wav", "wave"], "audio")?;
    }
    if let Some(report) = &request.report {
        check_destination(report, &["json"], "the report")?;
    }
    let offset_hz = resolve_offset(request.tuning, source.as_ref())?;
    let config = ReceiverConfig {
        input_rate: source.info().sample_rate,
        offset_hz,
        options: request.options,
    };
    let mut receiver = build_receiver(request.mode, &config)?;
    let mut sink = open_sink(&request.audio, receiver.as_ref(), &inputs)?;
    if let Some(device) = &request.play {
        let player = sound.open_sink(
            device,
            receiver.audio_rate(),
            receiver.audio_channels().max(1),
            request.play_latency_s,
            live_input.is_some(),
        )?;
        sink = match request.audio {
            AudioTarget::Nothing => player,
            _ => Box::new(TeeSink(vec![sink, player])),
        };
    }
    let runtime = if live_input.is_some() || request.play.is_some() {
        // Pieces of 20 ms, so that a retune or the end of a live run is heard at once.
        RuntimeConfig {
            chunk: ((source.info().sample_rate * 0.02) as usize).clamp(256, 1 << 16),
            depth: 4,
        }
    } else {
        RuntimeConfig::default()
    };
    let input_rate = source.info().sample_rate;
    let channels = receiver.audio_channels().max(1);
    let mut aligned = Alignment::new(receiver.as_ref());
    let mut level = AudioLevelMeter::default();
    let input_total = AtomicU64::new(u64::MAX);
    let expected = source.info().total_samples;
    let mut read_so_far = 0u64;
    let mut interrupted = false;
    let read = |buf: &mut [crate::Complex32]| {
        if stop.load(Ordering::Relaxed) {
            interrupted = true;
            input_total.store(read_so_far, Ordering::Release);
            return Ok(0);
        }
        let n = source.read(buf)?;
        read_so_far += n as u64;
        progress(Progress {
            done: read_so_far,
            total: expected,
        });
        if n == 0 {
            input_total.store(read_so_far, Ordering::Release);
        }
        Ok(n)
    };
    let write = |audio: &[f32]| {
        let kept = aligned.keep(audio, input_total.load(Ordering::Acquire));
        level.push(kept);
        sink.write(kept)
    };
    let two_halves = !request.one_thread && live_input.is_none() && request.play.is_none();
    let plan = SplitPlan::for_receiver(receiver.as_ref(), runtime.chunk, input_rate);
    let totals = match receiver.halves().filter(|_| two_halves) {
        Some((front, back)) => run_split(read, front, back, write, runtime, plan, control)?,
        None => run_stream(
            read,
            &mut Controlled::new(receiver.as_mut(), control, input_rate),
            write,
            runtime,
        )?,
    };
    sink.finish()?;
    let mut report = make_report(
        request,
        source.as_ref(),
        receiver.as_ref(),
        offset_hz,
        totals.samples_in,
        aligned.written * channels as u64,
    );
    report.audio_rms_dbfs = level.rms_dbfs();
    report.audio_peak_dbfs = level.peak_dbfs();
    let last_offset = receiver.offset_hz();
    if last_offset != offset_hz {
        report.warnings.push(format!(
            "retuned while running: the last tuning was {last_offset} Hz; the measurements \
             cover every tuning"
        ));
    }
    if let Some(figures) = sound.figures() {
        report.underruns = Some(figures.underruns);
        report.overruns = Some(figures.overruns);
        report.stream_errors = Some(figures.stream_errors);
        report.clock_ppm = figures.clock_ppm;
        report.latency_s = figures.latency_s;
        report.clock_correction_ppm = figures.correction_ppm;
        report.dropouts = Some(figures.dropouts);
        report.dropout_s = Some(figures.dropout_s);
        if figures
            .correction_ppm
            .is_some_and(|c| c.abs() >= 0.999 * crate::pipeline::live::MAX_CORRECTION_PPM)
        {
            report.warnings.push(format!(
                "the sound cards' clocks differ by more than the {} ppm the resampler absorbs",
                crate::pipeline::live::MAX_CORRECTION_PPM
            ));
        }
        if figures.underruns > 0 {
            report.warnings.push(format!(
                "the sound card ran dry {} times (underruns): the machine was too busy",
                figures.underruns
            ));
        }
        if figures.overruns > 0 {
            report.warnings.push(format!(
                "captured samples were dropped {} times (overruns): the receiver fell behind",
                figures.overruns
            ));
        }
        if figures.dropouts > 0 {
            report.warnings.push(format!(
                "the sound card went on without the audio {} times ({:.2} s in all) while \
                 the ring had it: the sound server was starved; a larger --latency rides \
                 through (600 ms did on a loaded 2-core machine)",
                figures.dropouts, figures.dropout_s
            ));
        }
    }
    if interrupted {
        report.warnings.insert(
            0,
            format!(
                "{INTERRUPTED_WARNING} after {} input samples: the audio and this report \
                 cover only the part read",
                report.samples_in
            ),
        );
    }
    if let AudioTarget::Wav { path, .. } = &request.audio {
        report.warnings.extend(leftover_warnings(path));
    }
    if let Some(path) = &request.report {
        report.write_checked(path, &inputs)?;
    }
    Ok(report)
}

/// Aligns the audio with the IQ: drops the receiver's delay from the start and, once the input
/// has ended, cuts the flushed tail where the input ended, so the audio lasts exactly as long
/// as the recording (to the nearest audio sample).
struct Alignment {
    /// Samples still to drop from the start (a whole number of frames).
    lead: usize,
    channels: usize,
    frames_per_input: f64,
    /// Frames passed on so far.
    written: u64,
}

impl Alignment {
    fn new(receiver: &dyn Receiver) -> Self {
        let channels = receiver.audio_channels().max(1);
        let frames_per_input = receiver.rate_ratio() / channels as f64;
        let frames_late = (receiver.delay() * frames_per_input).round() as usize;
        Alignment {
            lead: frames_late * channels,
            channels,
            frames_per_input,
            written: 0,
        }
    }

    /// The part of `audio` to write; `input_total` is `u64::MAX` until the input has ended.
    fn keep<'a>(&mut self, audio: &'a [f32], input_total: u64) -> &'a [f32] {
        let skip = self.lead.min(audio.len());
        self.lead -= skip;
        let mut frames = (audio.len() - skip) / self.channels;
        if input_total != u64::MAX {
            let due = (input_total as f64 * self.frames_per_input).round() as u64;
            frames = frames.min(due.saturating_sub(self.written) as usize);
        }
        self.written += frames as u64;
        &audio[skip..skip + frames * self.channels]
    }
}

/// RMS and peak of the audio written.
#[derive(Debug, Default)]
struct AudioLevelMeter {
    sum_squares: f64,
    peak: f32,
    count: u64,
}

impl AudioLevelMeter {
    fn push(&mut self, audio: &[f32]) {
        for &x in audio {
            self.sum_squares += f64::from(x) * f64::from(x);
            self.peak = self.peak.max(x.abs());
        }
        self.count += audio.len() as u64;
    }

    /// `None` without audio or for digital silence (no finite level to give).
    fn rms_dbfs(&self) -> Option<f64> {
        let db = 10.0 * (self.sum_squares / self.count.max(1) as f64).log10();
        db.is_finite().then_some(db)
    }

    fn peak_dbfs(&self) -> Option<f64> {
        let db = 20.0 * f64::from(self.peak).log10();
        db.is_finite().then_some(db)
    }
}

/// The carrier's offset from the recording centre for this tuning.
pub fn resolve_offset(tuning: Tuning, source: &dyn IqSource) -> Result<f64> {
    match tuning {
        Tuning::Centre => Ok(0.0),
        Tuning::Offset(offset) => Ok(offset),
        Tuning::Carrier(carrier) => match source.info().centre_frequency {
            Some(centre) => Ok(carrier - centre),
            None => Err(Error::file(
                &source.info().path,
                "the recording has no centre frequency (core:frequency); give it with --centre, or tune with --offset",
            )),
        },
    }
}

/// The files a request reads: the path given, the file the source opened, and for SigMF both
/// the metadata and the data file.
pub(crate) fn input_files(given: &Path, opened: &Path) -> Vec<PathBuf> {
    let mut files = vec![given.to_path_buf(), opened.to_path_buf()];
    for path in [given, opened] {
        let name = path.to_string_lossy();
        for (suffix, other) in [
            (".sigmf-meta", ".sigmf-data"),
            (".sigmf-data", ".sigmf-meta"),
        ] {
            if let Some(base) = name.strip_suffix(suffix) {
                files.push(PathBuf::from(format!("{base}{other}")));
            }
        }
    }
    files
}

/// A warning for each temporary file beside `wav` that a killed run left behind.
fn leftover_warnings(wav: &Path) -> Vec<String> {
    crate::io::leftover_temps(wav)
        .into_iter()
        .map(|(temp, bytes)| {
            format!(
                "{} ({bytes} bytes) was left by an earlier run that was killed before it \
                 finished; it is a WAV of unknown length that most readers open: rename it \
                 to keep that audio, or delete it",
                temp.display()
            )
        })
        .collect()
}

fn open_sink(
    target: &AudioTarget,
    receiver: &dyn Receiver,
    inputs: &[&Path],
) -> Result<Box<dyn AudioSink>> {
    Ok(match target {
        AudioTarget::Wav { path, pcm16 } => {
            let rate = receiver.audio_rate().round() as u32;
            let channels = receiver.audio_channels() as u16;
            let encoding = if *pcm16 {
                WavEncoding::Pcm16
            } else {
                WavEncoding::Float32
            };
            Box::new(WavAudioSink::create_checked(
                path, inputs, rate, channels, encoding,
            )?)
        }
        AudioTarget::Stdout => Box::new(RawAudioSink::try_stdout()?),
        AudioTarget::Nothing => Box::new(TeeSink(Vec::new())),
    })
}

fn make_report(
    request: &DemodRequest,
    source: &dyn IqSource,
    receiver: &dyn Receiver,
    offset_hz: f64,
    samples_in: u64,
    samples_out: u64,
) -> Report {
    let measured = receiver.measurements();
    let mut warnings = source.warnings();
    warnings.extend(measured.warnings);
    let channels = receiver.audio_channels().max(1);
    Report {
        mode: request.mode.name().to_string(),
        emission: request.mode.emission().to_string(),
        input: display_path(&request.input),
        input_rate: source.info().sample_rate,
        audio_rate: receiver.audio_rate(),
        bandwidth_hz: receiver.bandwidth_hz(),
        tuned_offset_hz: offset_hz,
        samples_in,
        samples_out: samples_out / channels as u64,
        audio_channels: channels,
        carrier_offset_hz: measured.carrier_offset_hz,
        locked: measured.locked,
        lock_fraction: measured.lock_fraction,
        cnr_db: measured.cnr_db,
        cnr_bandwidth_hz: measured.cnr_bandwidth_hz,
        carrier_dbfs: measured.carrier_dbfs,
        carrier_present_s: measured.carrier_present_s,
        modulation_depth: measured.modulation_depth,
        snr_db: measured.snr_db,
        audio_rms_dbfs: None,
        audio_peak_dbfs: None,
        warnings,
        blanked_samples: measured.blanked_samples,
        underruns: None,
        overruns: None,
        stream_errors: None,
        clock_ppm: None,
        latency_s: None,
        clock_correction_ppm: None,
        dropouts: None,
        dropout_s: None,
    }
}

fn display_path(path: &Path) -> String {
    path.display().to_string()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn audio_level_of_a_full_scale_sine_is_minus_3_dbfs_rms_and_0_peak() {
        // The RMS of a sine of peak A is A/√2 (−3.01 dB); common knowledge, no source needed.
        let sine: Vec<f32> = (0..48_000)
            .map(|n| (std::f64::consts::TAU * 1000.0 * n as f64 / 48_000.0).sin() as f32)
            .collect();
        let mut meter = AudioLevelMeter::default();
        for piece in sine.chunks(777) {
            meter.push(piece);
        }
        assert!((meter.rms_dbfs().unwrap() + 3.0103).abs() < 1e-3);
        assert!(meter.peak_dbfs().unwrap().abs() < 1e-6);
        let mut silent = AudioLevelMeter::default();
        assert_eq!(silent.rms_dbfs(), None);
        silent.push(&[0.0; 10]);
        assert_eq!((silent.rms_dbfs(), silent.peak_dbfs()), (None, None));
    }
}

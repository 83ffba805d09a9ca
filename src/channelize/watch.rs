//! `amrx watch`: every channel of a plan received at once. One pass of the polyphase
//! channelizer splits the recording into bins; each channel is the nearest bin, tuned by a
//! residual shift ([`BinFrontEnd`]), demodulated by the mode's detector in the usual receiver
//! assembly, squelched on the carrier meter's CNR, and written as a WAV aligned with the
//! recording (silent while squelched).
//!
//! Memory is bounded: the recording is read in blocks; each strand keeps only the audio its
//! squelch has not decided yet (one meter window plus the receiver's delay).

use super::channelizer::PolyphaseChannelizer;
use super::front_end::{BinFrontEnd, NOISE_VIEW};
use crate::block::Block;
use crate::demod::{
    AmDetector, Assembly, Mode, ModeDetector, Receiver, ReceiverConfig, SamDetector, VsbDetector,
};
use crate::dsp::{design_lowpass, LowpassSpec};
use crate::io::open::{open_input, InputOptions};
use crate::io::{AudioSink, WavAudioSink, WavEncoding};
use crate::measure::WindowReading;
use crate::{Complex32, Error, Result};
use serde::Serialize;
use std::collections::VecDeque;
use std::path::{Path, PathBuf};
use std::str::FromStr;

/// Default squelch threshold: the carrier meter's own "carrier present" CNR, in dB.
pub const DEFAULT_SQUELCH_DB: f64 = crate::measure::carrier_meter::CARRIER_ON_CNR_DB;
/// The squelch closes this far below its opening threshold (common practice, no source).
pub const SQUELCH_HYSTERESIS_DB: f64 = 3.0;
/// The squelch stays open this long after the CNR falls below the closing threshold (common
/// practice, no source).
pub const SQUELCH_HANG_S: f64 = 0.3;
/// Stopband attenuation of the channelizer's prototype in dB (common practice, no source).
const PROTOTYPE_ATTENUATION_DB: f64 = 70.0;
/// Channelizer frames per block read.
const FRAMES_PER_BLOCK: usize = 2048;

/// A channel plan `FIRST:STEP:COUNT`: channel k at FIRST + k·STEP Hz.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ChannelPlan {
    /// The first channel in Hz.
    pub first_hz: f64,
    /// The spacing in Hz.
    pub step_hz: f64,
    /// How many channels.
    pub count: usize,
}

impl FromStr for ChannelPlan {
    type Err = Error;

    /// ```
    /// use amrx::channelize::watch::ChannelPlan;
    /// let plan: ChannelPlan = "118000000:8333.333:4".parse()?;
    /// assert_eq!(plan.count, 4);
    /// # Ok::<(), amrx::Error>(())
    /// ```
    fn from_str(s: &str) -> Result<Self> {
        let bad = |why: &str| Error::parameter("channel_plan", s, why.to_string());
        let parts: Vec<&str> = s.split(':').collect();
        let [first, step, count] = parts[..] else {
            return Err(bad("expected FIRST:STEP:COUNT (Hz, Hz, a whole number)"));
        };
        let first: f64 = first
            .trim()
            .parse()
            .map_err(|_| bad("FIRST is not a number of Hz"))?;
        let step: f64 = step
            .trim()
            .parse()
            .map_err(|_| bad("STEP is not a number of Hz"))?;
        let count: usize = count
            .trim()
            .parse()
            .map_err(|_| bad("COUNT is not a whole number"))?;
        if !first.is_finite() || !step.is_finite() {
            return Err(bad("FIRST and STEP must be finite"));
        }
        if count == 0 {
            return Err(bad("COUNT must be at least 1"));
        }
        if count > 1 && step == 0.0 {
            return Err(bad("STEP must not be 0 with more than one channel"));
        }
        Ok(ChannelPlan {
            first_hz: first,
            step_hz: step,
            count,
        })
    }
}

/// Whether a plan's frequencies are relative to the recording centre or absolute.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PlanFrequencies {
    /// Relative to the centre (`--offsets`).
    Offsets,
    /// Absolute (`--carriers`); needs the recording's centre frequency.
    Carriers,
}

impl ChannelPlan {
    /// Each channel's offset from the recording centre, in Hz.
    pub fn offsets(&self, kind: PlanFrequencies, centre_hz: Option<f64>) -> Result<Vec<f64>> {
        let base = match kind {
            PlanFrequencies::Offsets => 0.0,
            PlanFrequencies::Carriers => centre_hz.ok_or_else(|| {
                Error::parameter(
                    "carriers",
                    self.first_hz,
                    "absolute carriers need the recording's centre frequency (give it with the input options, or use offsets)",
                )
            })?,
        };
        Ok((0..self.count)
            .map(|k| self.first_hz + k as f64 * self.step_hz - base)
            .collect())
    }
}

/// The channelizer chosen for a recording rate and channel bandwidth.
#[derive(Debug, Clone, PartialEq)]
pub struct BankDesign {
    /// Bins M (a power of two), spaced fs/M.
    pub bins: usize,
    /// Decimation D (a power of two, ≤ M).
    pub decimation: usize,
    /// Rate of each bin's samples, fs/D, in Hz.
    pub bin_rate: f64,
    /// The prototype low-pass at the input rate.
    pub taps: Vec<f32>,
}

impl BankDesign {
    /// Bins at most one channel bandwidth apart (the residual shift is then at most half a
    /// bandwidth); each bin passes its centre ± (half a spacing + the noise view of 2
    /// bandwidths) flat, and the bin rate is at least 2.5 × that edge, so the prototype's
    /// stopband begins where decimation would alias onto the passband.
    pub fn new(input_rate: f64, bandwidth_hz: f64) -> Result<Self> {
        if !(input_rate.is_finite() && input_rate > 0.0) {
            return Err(Error::parameter(
                "input_rate",
                input_rate,
                "must be a positive number of Hz",
            ));
        }
        if !(bandwidth_hz.is_finite() && bandwidth_hz > 0.0 && bandwidth_hz < input_rate / 8.0) {
            return Err(Error::parameter(
                "bandwidth_hz",
                bandwidth_hz,
                format!(
                    "must be positive and under an eighth of the sample rate ({} Hz)",
                    input_rate / 8.0
                ),
            ));
        }
        let bins = ((input_rate / bandwidth_hz).ceil() as usize)
            .next_power_of_two()
            .clamp(2, 1 << 16);
        let spacing = input_rate / bins as f64;
        let pass = spacing / 2.0 + NOISE_VIEW * bandwidth_hz;
        let most = (input_rate / (2.5 * pass)).floor().max(1.0) as usize;
        let decimation = (1usize << most.ilog2()).min(bins);
        let bin_rate = input_rate / decimation as f64;
        let mut taps = design_lowpass(&LowpassSpec {
            passband_hz: pass,
            stopband_hz: (bin_rate - pass).min(input_rate / 2.0),
            attenuation_db: PROTOTYPE_ATTENUATION_DB,
            sample_rate: input_rate,
        })?;
        let sum: f32 = taps.iter().sum();
        taps.iter_mut().for_each(|t| *t /= sum);
        Ok(BankDesign {
            bins,
            decimation,
            bin_rate,
            taps,
        })
    }

    /// The bin nearest `offset_hz` and its centre frequency in Hz.
    pub fn nearest_bin(&self, input_rate: f64, offset_hz: f64) -> (usize, f64) {
        let spacing = input_rate / self.bins as f64;
        let k = (offset_hz / spacing).round();
        let index = (k as i64).rem_euclid(self.bins as i64) as usize;
        (index, k * spacing)
    }
}

/// Squelch settings: opens at `open_db` CNR, closes `hysteresis_db` below, after `hang_s`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SquelchSettings {
    /// CNR that opens the squelch, dB.
    pub open_db: f64,
    /// The squelch closes below `open_db − hysteresis_db`.
    pub hysteresis_db: f64,
    /// Seconds the squelch stays open after the CNR fell below the closing threshold.
    pub hang_s: f64,
}

impl SquelchSettings {
    /// Opening at `open_db` with the default hysteresis and hang time.
    pub fn new(open_db: f64) -> Result<Self> {
        if !open_db.is_finite() {
            return Err(Error::parameter(
                "squelch_db",
                open_db,
                "must be a finite number of dB",
            ));
        }
        Ok(SquelchSettings {
            open_db,
            hysteresis_db: SQUELCH_HYSTERESIS_DB,
            hang_s: SQUELCH_HANG_S,
        })
    }
}

/// One transmission heard on a channel.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Heard {
    /// Start in the recording, seconds.
    pub start_s: f64,
    /// End in the recording (the last window above the closing threshold), seconds.
    pub end_s: f64,
    /// Highest window CNR, dB.
    pub peak_cnr_db: f64,
}

/// The squelch: meter windows in, open/closed decisions and transmissions out.
#[derive(Debug, Clone)]
pub struct Squelch {
    settings: SquelchSettings,
    current: Option<Heard>,
    heard: Vec<Heard>,
}

impl Squelch {
    /// A closed squelch.
    pub fn new(settings: SquelchSettings) -> Self {
        Squelch {
            settings,
            current: None,
            heard: Vec::new(),
        }
    }

    /// One window `[start_s, end_s)` with its CNR (`None`: no carrier found); returns whether
    /// the audio of that window passes.
    pub fn update(&mut self, start_s: f64, end_s: f64, cnr_db: Option<f64>) -> bool {
        let cnr = cnr_db.filter(|c| c.is_finite());
        let s = self.settings;
        match self.current.as_mut() {
            None => {
                if let Some(c) = cnr.filter(|&c| c >= s.open_db) {
                    self.current = Some(Heard {
                        start_s,
                        end_s,
                        peak_cnr_db: c,
                    });
                }
            }
            Some(t) => match cnr.filter(|&c| c >= s.open_db - s.hysteresis_db) {
                Some(c) => {
                    t.end_s = end_s;
                    t.peak_cnr_db = t.peak_cnr_db.max(c);
                }
                None => {
                    if end_s - t.end_s > s.hang_s {
                        self.heard.push(*t);
                        self.current = None;
                    }
                }
            },
        }
        self.current.is_some()
    }

    /// Whether the squelch is open.
    pub fn is_open(&self) -> bool {
        self.current.is_some()
    }

    /// Ends the run: an open transmission ends at its last window above the threshold.
    pub fn finish(&mut self) -> &[Heard] {
        if let Some(t) = self.current.take() {
            self.heard.push(t);
        }
        &self.heard
    }
}

/// What `amrx watch` is asked to do.
#[derive(Debug, Clone)]
pub struct WatchRequest {
    /// The recording.
    pub input: PathBuf,
    /// How to read it.
    pub input_options: InputOptions,
    /// The mode (one with a carrier: am, sam, vsb; the squelch reads the carrier's CNR).
    pub mode: Mode,
    /// The channels.
    pub plan: ChannelPlan,
    /// Offsets or absolute carriers.
    pub frequencies: PlanFrequencies,
    /// Squelch opening CNR in dB.
    pub squelch_db: f64,
    /// Channel (message) bandwidth in Hz; the mode's default when `None`.
    pub bandwidth_hz: Option<f64>,
    /// Audio rate in Hz.
    pub audio_rate: f64,
    /// Where the WAVs go.
    pub out_dir: PathBuf,
}

/// One channel's summary (SUMMARY.json).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ChannelSummary {
    /// Offset from the recording centre, Hz.
    pub offset_hz: f64,
    /// Absolute frequency, Hz, when the centre is known.
    pub frequency_hz: Option<f64>,
    /// The WAV, relative to the output directory, or `None` when never active.
    pub file: Option<String>,
    /// Seconds with a transmission.
    pub active_s: f64,
    /// Transmissions heard.
    pub transmissions: Vec<Heard>,
}

/// The whole run's summary (SUMMARY.json).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WatchSummary {
    /// One entry per channel of the plan, in order.
    pub channels: Vec<ChannelSummary>,
}

impl WatchSummary {
    /// SUMMARY.json.
    pub fn json(&self) -> Result<Vec<u8>> {
        serde_json::to_vec_pretty(self)
            .map_err(|e| Error::parameter("json", "summary", e.to_string()))
    }

    /// ACTIVITY.csv: one row per transmission.
    pub fn activity_csv(&self) -> String {
        let mut s = String::from("offset_hz,frequency_hz,start_s,end_s,peak_cnr_db\n");
        for c in &self.channels {
            for t in &c.transmissions {
                let f = c.frequency_hz.map_or(String::new(), |f| format!("{f:.1}"));
                s.push_str(&format!(
                    "{:.1},{f},{:.3},{:.3},{:.1}\n",
                    c.offset_hz, t.start_s, t.end_s, t.peak_cnr_db
                ));
            }
        }
        s
    }
}

/// The result of a run.
#[derive(Debug, Clone)]
pub struct WatchOutcome {
    /// Per channel.
    pub summary: WatchSummary,
    /// The channelizer used.
    pub bins: usize,
    /// Its decimation.
    pub decimation: usize,
    /// The source's warnings.
    pub warnings: Vec<String>,
}

/// One channel's receiver, squelch and WAV.
struct Strand {
    bin: usize,
    offset_hz: f64,
    receiver: Box<dyn Receiver>,
    samples: Vec<Complex32>,
    audio: Vec<f32>,
    channels: usize,
    audio_rate: f64,
    /// Audio samples (frames × channels) still to drop for the delay.
    skip: usize,
    /// Seconds to subtract from the meter's window times (the channelizer's delay).
    window_shift_s: f64,
    pending: VecDeque<f32>,
    decisions: VecDeque<(f64, f64, bool)>,
    squelch: Squelch,
    released_frames: u64,
    path: PathBuf,
    sink: Option<WavAudioSink>,
    /// Whether the WAV was started (the channel was active).
    written: bool,
    input: PathBuf,
    out: Vec<f32>,
}

/// The receiver for `mode` on a bin front end; modes with a carrier meter only.
fn strand_receiver(
    mode: Mode,
    config: &ReceiverConfig,
    front: BinFrontEnd,
) -> Result<Box<dyn Receiver>> {
    fn build<D: ModeDetector>(
        mode: Mode,
        config: &ReceiverConfig,
        front: BinFrontEnd,
    ) -> Result<Box<dyn Receiver>> {
        let settings = mode.spec().resolve(config)?;
        Ok(Box::new(Assembly::<D>::with_front_end(
            settings,
            Vec::new(),
            Box::new(front),
            |s, c| D::build(s, c),
        )?))
    }
    match mode {
        Mode::Am => build::<AmDetector>(mode, config, front),
        Mode::Sam => build::<SamDetector>(mode, config, front),
        Mode::Vsb => build::<VsbDetector>(mode, config, front),
        _ => Err(Error::parameter(
            "mode",
            mode.name(),
            "watch squelches on the carrier's CNR: use a mode with a carrier (am, sam, vsb)",
        )),
    }
}

impl Strand {
    /// Gathers this strand's bin from `frames` (M per frame) and runs the receiver.
    fn step(&mut self, frames: &[Complex32], m: usize) -> Result<()> {
        let n = frames.len() / m;
        for (s, f) in self.samples.iter_mut().zip(frames.chunks_exact(m)) {
            *s = f[self.bin];
        }
        let (_, produced) = self.receiver.process(&self.samples[..n], &mut self.audio);
        self.take(produced);
        self.decide();
        self.release(false)
    }

    fn take(&mut self, produced: usize) {
        let drop = self.skip.min(produced);
        self.skip -= drop;
        self.pending.extend(&self.audio[drop..produced]);
    }

    fn decide(&mut self) {
        for w in self.receiver.take_windows() {
            let WindowReading {
                start_s,
                duration_s,
                cnr_db,
                ..
            } = w;
            // The first window starts at the first input; less the channelizer's delay it
            // would start before the recording.
            let end = start_s - self.window_shift_s + duration_s;
            let start = (start_s - self.window_shift_s).max(0.0);
            let open = self.squelch.update(start, end, cnr_db);
            self.decisions.push_back((start, end, open));
        }
    }

    /// Writes every pending frame whose window is decided (all of them when `last`).
    fn release(&mut self, last: bool) -> Result<()> {
        let c = self.channels;
        self.out.clear();
        let before = self.released_frames;
        let mut any_open = false;
        while self.pending.len() >= c {
            let t = (before + (self.out.len() / c) as u64) as f64 / self.audio_rate;
            while self.decisions.front().is_some_and(|d| d.1 <= t) {
                self.decisions.pop_front();
            }
            let open = match self.decisions.front() {
                Some(&(start, _, open)) => t >= start && open,
                None if last => false,
                None => break,
            };
            any_open |= open;
            for _ in 0..c {
                let x = self.pending.pop_front().unwrap_or(0.0);
                self.out.push(if open && x.is_finite() { x } else { 0.0 });
            }
        }
        self.released_frames += (self.out.len() / c) as u64;
        if self.sink.is_none() && any_open {
            let rate = self.audio_rate as u32;
            let mut sink = WavAudioSink::create_checked(
                &self.path,
                &[self.input.as_path()],
                rate,
                c as u16,
                WavEncoding::Float32,
            )?;
            let zeros = vec![0.0f32; 4096 * c];
            let mut left = before as usize * c;
            while left > 0 {
                let k = left.min(zeros.len());
                sink.write(&zeros[..k])?;
                left -= k;
            }
            self.sink = Some(sink);
            self.written = true;
        }
        if let Some(sink) = self.sink.as_mut() {
            sink.write(&self.out)?;
        }
        Ok(())
    }

    /// The end: the receiver's tail, the squelch's last decisions, the audio cut or padded to
    /// `frames` frames (the recording's length at the audio rate).
    fn finish(&mut self, frames: u64) -> Result<()> {
        let mut tail = vec![0.0f32; self.receiver.flush_output_len()];
        let n = self.receiver.flush(&mut tail);
        let drop = self.skip.min(n);
        self.skip -= drop;
        self.pending.extend(&tail[drop..n]);
        self.decide();
        let want = frames.saturating_sub(self.released_frames) as usize * self.channels;
        self.pending.resize(want, 0.0);
        self.release(true)?;
        self.squelch.finish();
        if let Some(sink) = self.sink.take() {
            sink.finish()?;
        }
        Ok(())
    }
}

/// Runs `amrx watch`: `progress(samples read, channels open)` after each block.
pub fn run_watch(request: &WatchRequest, progress: &dyn Fn(u64, usize)) -> Result<WatchOutcome> {
    if !request.squelch_db.is_finite() {
        return Err(Error::parameter(
            "squelch_db",
            request.squelch_db,
            "must be a finite number of dB",
        ));
    }
    let squelch = SquelchSettings::new(request.squelch_db)?;
    if !(request.audio_rate.is_finite()
        && request.audio_rate >= 1.0
        && request.audio_rate.fract() == 0.0)
    {
        return Err(Error::parameter(
            "audio_rate",
            request.audio_rate,
            "must be a whole positive number of Hz",
        ));
    }
    let mut source = open_input(&request.input, &request.input_options)?;
    let info = source.info().clone();
    let fs = info.sample_rate;
    let offsets = request
        .plan
        .offsets(request.frequencies, info.centre_frequency)?;
    let bandwidth = request
        .bandwidth_hz
        .unwrap_or(request.mode.spec().bandwidth_hz);
    let design = BankDesign::new(fs, bandwidth)?;
    let m = design.bins;
    let mut bank = PolyphaseChannelizer::new(m, design.decimation, design.taps.clone())?;
    let bank_delay_s = bank.delay() / fs;
    // The folder is made as `demo` makes its own; only its parent must exist, so a mistyped
    // path does not grow a tree of folders.
    if !request.out_dir.is_dir() {
        let parent_exists = match request.out_dir.parent() {
            Some(p) if !p.as_os_str().is_empty() => p.is_dir(),
            _ => true,
        };
        if !parent_exists {
            return Err(Error::file(
                &request.out_dir,
                "neither this output folder nor the folder above it exists",
            ));
        }
        std::fs::create_dir(&request.out_dir).map_err(|e| Error::io(&request.out_dir, e))?;
    }
    let block = FRAMES_PER_BLOCK * design.decimation;
    let mut buf = vec![Complex32::default(); block];
    let mut frames =
        vec![Complex32::default(); bank.max_output_len(block).max(bank.flush_output_len())];
    let max_frames = frames.len() / m;
    let mut strands = Vec::with_capacity(offsets.len());
    for (k, &offset) in offsets.iter().enumerate() {
        if offset.abs() + NOISE_VIEW * bandwidth >= 0.45 * fs {
            let name = match request.frequencies {
                PlanFrequencies::Offsets => "offsets",
                PlanFrequencies::Carriers => "carriers",
            };
            return Err(Error::parameter(
                name,
                offset
                    + info
                        .centre_frequency
                        .filter(|_| name == "carriers")
                        .unwrap_or(0.0),
                format!(
                    "channel {k} lies outside the recording's ±{:.0} Hz (with its bandwidth)",
                    0.45 * fs
                ),
            ));
        }
        let (bin, centre) = design.nearest_bin(fs, offset);
        let front = BinFrontEnd::new(design.bin_rate, centre, offset, bandwidth)?;
        let mut config = ReceiverConfig::new(design.bin_rate, offset - centre);
        config.options.bandwidth_hz = Some(bandwidth);
        config.options.audio_rate = request.audio_rate;
        let mut receiver = strand_receiver(request.mode, &config, front)?;
        receiver.record_windows(true);
        let channels = receiver.audio_channels();
        let delay_s = receiver.delay() / design.bin_rate + bank_delay_s;
        let skip = (delay_s * request.audio_rate).round() as usize * channels;
        let audio = vec![0.0; receiver.max_output_len(max_frames)];
        let hz = match info.centre_frequency {
            Some(c) => format!("{:.0}Hz", c + offset),
            None => format!("{offset:+.0}Hz"),
        };
        strands.push(Strand {
            bin,
            offset_hz: offset,
            samples: vec![Complex32::default(); max_frames],
            audio,
            channels,
            audio_rate: request.audio_rate,
            skip,
            window_shift_s: bank_delay_s,
            pending: VecDeque::new(),
            decisions: VecDeque::new(),
            squelch: Squelch::new(squelch),
            released_frames: 0,
            path: request.out_dir.join(format!("ch{k:03}_{hz}.wav")),
            sink: None,
            written: false,
            input: request.input.clone(),
            out: Vec::new(),
            receiver,
        });
    }
    let mut read = 0u64;
    loop {
        let n = source.read(&mut buf)?;
        if n == 0 {
            break;
        }
        read += n as u64;
        let (_, produced) = bank.process(&buf[..n], &mut frames);
        each_strand(&mut strands, |s| s.step(&frames[..produced], m))?;
        progress(read, strands.iter().filter(|s| s.squelch.is_open()).count());
    }
    let produced = bank.flush(&mut frames);
    each_strand(&mut strands, |s| s.step(&frames[..produced], m))?;
    let audio_frames = (read as f64 / fs * request.audio_rate).round() as u64;
    each_strand(&mut strands, |s| s.finish(audio_frames))?;
    let channels = strands
        .iter_mut()
        .map(|s| {
            let heard = s.squelch.finish().to_vec();
            let file = s
                .written
                .then(|| s.path.file_name().map(|f| f.to_string_lossy().into_owned()))
                .flatten();
            ChannelSummary {
                offset_hz: s.offset_hz,
                frequency_hz: info.centre_frequency.map(|c| c + s.offset_hz),
                file,
                // `+ 0.0`: an empty float sum is −0.0, which JSON would print as such.
                active_s: heard.iter().map(|t| t.end_s - t.start_s).sum::<f64>() + 0.0,
                transmissions: heard,
            }
        })
        .collect();
    Ok(WatchOutcome {
        summary: WatchSummary { channels },
        bins: m,
        decimation: design.decimation,
        warnings: source.warnings(),
    })
}

/// Runs `f` on every strand, in parallel across cores with rayon (feature `lab`, on in the
/// command line's build), in turn otherwise; the first error is returned.
fn each_strand(
    strands: &mut [Strand],
    f: impl Fn(&mut Strand) -> Result<()> + Sync + Send,
) -> Result<()> {
    #[cfg(feature = "lab")]
    {
        use rayon::prelude::*;
        strands.par_iter_mut().try_for_each(f)
    }
    #[cfg(not(feature = "lab"))]
    {
        strands.iter_mut().try_for_each(f)
    }
}

/// Writes SUMMARY.json and ACTIVITY.csv when asked, refusing to overwrite the input.
pub fn write_reports(
    outcome: &WatchOutcome,
    input: &Path,
    json: Option<&Path>,
    log: Option<&Path>,
) -> Result<()> {
    if let Some(path) = json {
        crate::io::output::write_file(path, &[input], &outcome.summary.json()?)?;
    }
    if let Some(path) = log {
        crate::io::output::write_file(path, &[input], outcome.summary.activity_csv().as_bytes())?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn plans_parse_and_refuse_nonsense() {
        let p: ChannelPlan = "-50000:8333.3333:12".parse().unwrap();
        assert_eq!(p.count, 12);
        let o = p.offsets(PlanFrequencies::Offsets, None).unwrap();
        assert!((o[11] - (-50_000.0 + 11.0 * 8333.3333)).abs() < 1e-6);
        let c: ChannelPlan = "118000000:25000:2".parse().unwrap();
        assert!(c.offsets(PlanFrequencies::Carriers, None).is_err());
        let o = c
            .offsets(PlanFrequencies::Carriers, Some(118_100_000.0))
            .unwrap();
        assert_eq!(o, vec![-100_000.0, -75_000.0]);
        for bad in [
            "", "1:2", "1:2:0", "a:1:1", "1:2:3:4", "1:0:2", "nan:1:1", "1:1:-1",
        ] {
            assert!(bad.parse::<ChannelPlan>().is_err(), "{bad}");
        }
    }

    #[test]
    fn the_8_33_khz_raster_at_2_048_ms_s_gets_bins_and_residuals() {
        let fs = 2_048_000.0;
        let d = BankDesign::new(fs, 3_000.0).unwrap();
        // 2.048 MS/s / 3 kHz → 683 → 1024 bins of 2 kHz; edge 1 + 6 = 7 kHz; 2.5 × 7 = 17.5 kHz
        // → D ≤ 117 → 64; bin rate 32 kHz.
        assert_eq!((d.bins, d.decimation, d.bin_rate), (1024, 64, 32_000.0));
        for k in 0..200 {
            let f = -800_000.0 + k as f64 * 25_000.0 / 3.0;
            let (bin, centre) = d.nearest_bin(fs, f);
            assert!((f - centre).abs() <= 1_000.0 + 1e-6);
            assert_eq!(bin as f64, (centre / 2_000.0).rem_euclid(1024.0));
            BinFrontEnd::new(d.bin_rate, centre, f, 3_000.0).unwrap();
        }
    }

    #[test]
    fn squelch_has_hysteresis_and_hang() {
        let mut s = Squelch::new(SquelchSettings {
            hang_s: 0.25,
            ..SquelchSettings::new(10.0).unwrap()
        });
        let w = |i: usize| (i as f64 * 0.1, (i + 1) as f64 * 0.1);
        // 9 dB: stays shut; 12 opens; 8 holds (above 10 − 3); 5 hangs 0.25 s, then closes;
        // 9 does not reopen.
        let cnr = [9.0, 12.0, 8.0, 15.0, 5.0, 5.0, 5.0, 5.0, 5.0, 9.0];
        let open: Vec<bool> = cnr
            .iter()
            .enumerate()
            .map(|(i, &c)| s.update(w(i).0, w(i).1, Some(c)))
            .collect();
        assert_eq!(
            open,
            [false, true, true, true, true, true, false, false, false, false]
        );
        let heard = s.finish().to_vec();
        assert_eq!(heard.len(), 1);
        assert!((heard[0].start_s - 0.1).abs() < 1e-9 && (heard[0].end_s - 0.4).abs() < 1e-9);
        assert_eq!(heard[0].peak_cnr_db, 15.0);
    }
}

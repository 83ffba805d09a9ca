//! `amrx watch`: every channel of a plan received at once. One pass of the polyphase
//! channelizer splits the recording into bins; each channel is the nearest bin, tuned by a
//! residual shift ([`BinFrontEnd`]), demodulated by the mode's detector in the usual receiver
//! assembly, and written as a WAV aligned with the recording (silent while squelched).
//!
//! Squelch, in every mode: per window of [`WINDOW_S`], the [`BandMeter`] reads each channel's
//! power in its occupied band over the band's noise floor; the [`Squelch`] opens on that
//! reading with hysteresis and a hang time. A squelched channel costs only that reading: its
//! receiver runs only while the squelch is open, restarted on opening with the previous
//! window as pre-roll (so its filters and loops have settled when the audio starts at the
//! opening window's start). Files are made only for channels ever active; the stretches
//! before and between transmissions are written as zeros.
//!
//! Memory is bounded: the recording is read one window at a time, and only the channelizer
//! bins some channel uses are kept, for the windows in flight and the pre-roll.

use super::band_meter::BandMeter;
use super::channelizer::PolyphaseChannelizer;
use super::front_end::{BinFrontEnd, NOISE_VIEW};
use crate::block::Block;
use crate::demod::channel_snr::occupied_band_hz;
use crate::demod::{
    AmDetector, Assembly, DsbDetector, IsbDetector, Mode, ModeDetector, Receiver, ReceiverConfig,
    SamDetector, SsbDetector, VsbDetector,
};
use crate::dsp::{design_lowpass, LowpassSpec};
use crate::io::open::{open_input, InputOptions};
use crate::io::{AudioSink, WavAudioSink, WavEncoding};
use crate::{Complex32, Error, Result};
use serde::Serialize;
use std::collections::VecDeque;
use std::path::{Path, PathBuf};
use std::str::FromStr;

/// Default squelch threshold in dB: the carrier meter's "carrier present" CNR, applied to the
/// band meter's reading (which for AM is the carrier's CNR plus the sidebands' share).
pub const DEFAULT_SQUELCH_DB: f64 = crate::measure::carrier_meter::CARRIER_ON_CNR_DB;
/// The squelch closes this far below its opening threshold (common practice, no source).
pub const SQUELCH_HYSTERESIS_DB: f64 = 3.0;
/// The squelch stays open this long after the CNR falls below the closing threshold (common
/// practice, no source).
pub const SQUELCH_HANG_S: f64 = 0.3;
/// Stopband attenuation of the channelizer's prototype in dB (common practice, no source).
const PROTOTYPE_ATTENUATION_DB: f64 = 70.0;
/// Seconds per squelch decision: one band-meter window (common practice, no source).
pub const WINDOW_S: f64 = 0.1;
/// Channelizer frames computed per call (a small buffer; only the bins in use are kept).
const FRAMES_PER_CHUNK: usize = 32;

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

/// The channelizer chosen for a recording rate, a channel bandwidth and a plan.
#[derive(Debug, Clone, PartialEq)]
pub struct BankDesign {
    /// Bins M, spaced fs/M: a power of two off the grid ([`BankDesign::new`]), fs/STEP on it
    /// ([`BankDesign::on_grid`]).
    pub bins: usize,
    /// Decimation D (≤ M).
    pub decimation: usize,
    /// Rate of each bin's samples, fs/D, in Hz.
    pub bin_rate: f64,
    /// The prototype low-pass at the input rate.
    pub taps: Vec<f32>,
}

/// Stopband attenuation of the on-grid bank's prototype in dB: its stopband only guards
/// against aliasing (the channel filter in [`BinFrontEnd`] rejects the neighbours), and 50 dB
/// keeps whatever folds onto a channel 10 dB under the 40 dB asked of neighbours (common
/// practice, no source).
const ON_GRID_ATTENUATION_DB: f64 = 50.0;
/// A plan is on the fs/STEP grid when every channel is within this fraction of a spacing of
/// a bin centre (the residual mixer of [`BinFrontEnd`] takes up what is left).
const ON_GRID_TOLERANCE: f64 = 1e-3;

impl BankDesign {
    /// The bank for a plan: [`BankDesign::on_grid`] when every channel sits on the fs/STEP
    /// grid and the channel fits its bin, the general bank ([`BankDesign::new`]) otherwise.
    pub fn for_plan(
        input_rate: f64,
        bandwidth_hz: f64,
        step_hz: f64,
        offsets: &[f64],
    ) -> Result<Self> {
        match Self::on_grid(input_rate, bandwidth_hz, step_hz, offsets)? {
            Some(design) => Ok(design),
            None => Self::new(input_rate, bandwidth_hz),
        }
    }

    /// When fs/STEP is a whole number M (2.4 MS/s with 8.33 kHz: 288; 25 kHz: 96; 12.5 kHz:
    /// 192) and every channel is a multiple of fs/M, one bin per channel: M bins, decimated by
    /// M/2 (two samples per spacing), or by M when critically sampled bins still give 2.5 ×
    /// the passband edge (the 25 kHz raster), and a short prototype. It passes each bin's
    /// centre ± the noise view (2 bandwidths) flat and stops from where decimation would fold
    /// onto that, bin rate − edge, at `ON_GRID_ATTENUATION_DB`; the neighbours, a spacing
    /// away, are rejected by the channel filter after the bank. `None` when the plan is off
    /// the grid or the grid is too fine for the channel.
    pub fn on_grid(
        input_rate: f64,
        bandwidth_hz: f64,
        step_hz: f64,
        offsets: &[f64],
    ) -> Result<Option<Self>> {
        check_rates(input_rate, bandwidth_hz)?;
        let step = step_hz.abs();
        if !(step.is_finite() && step > 0.0) || offsets.is_empty() {
            return Ok(None);
        }
        let ratio = input_rate / step;
        let bins = ratio.round();
        if !(4.0..=65_536.0).contains(&bins) || (ratio - bins).abs() > ON_GRID_TOLERANCE {
            return Ok(None);
        }
        let bins = bins as usize;
        let spacing = input_rate / bins as f64;
        let residual = offsets
            .iter()
            .map(|o| (o - (o / spacing).round() * spacing).abs())
            .fold(0.0f64, f64::max);
        // (A NaN offset fails `is_finite`; the plan's parser refuses one anyway.)
        if !residual.is_finite() || residual > ON_GRID_TOLERANCE * spacing {
            return Ok(None);
        }
        let pass = residual + NOISE_VIEW * bandwidth_hz;
        let decimation = if spacing >= 2.5 * pass {
            bins
        } else {
            bins / 2
        };
        let bin_rate = input_rate / decimation as f64;
        // The channel and its noise view must fit the bin as `BinFrontEnd` asks (45 % of the
        // bin rate), and the prototype needs a transition band.
        if pass > 0.45 * bin_rate || bin_rate - pass <= 1.2 * pass {
            return Ok(None);
        }
        let taps = unit_gain(design_lowpass(&LowpassSpec {
            passband_hz: pass,
            stopband_hz: (bin_rate - pass).min(input_rate / 2.0),
            attenuation_db: ON_GRID_ATTENUATION_DB,
            sample_rate: input_rate,
        })?);
        Ok(Some(BankDesign {
            bins,
            decimation,
            bin_rate,
            taps,
        }))
    }

    /// The general bank, for any plan: bins at most one channel bandwidth apart (a power of
    /// two; the residual shift is then at most half a bandwidth); each bin passes its centre
    /// ± (half a spacing + the noise view of 2 bandwidths) flat, and the bin rate is at least
    /// 2.5 × that edge, so the prototype's stopband begins where decimation would alias onto
    /// the passband.
    pub fn new(input_rate: f64, bandwidth_hz: f64) -> Result<Self> {
        check_rates(input_rate, bandwidth_hz)?;
        let bins = ((input_rate / bandwidth_hz).ceil() as usize)
            .next_power_of_two()
            .clamp(2, 1 << 16);
        let spacing = input_rate / bins as f64;
        let pass = spacing / 2.0 + NOISE_VIEW * bandwidth_hz;
        let most = (input_rate / (2.5 * pass)).floor().max(1.0) as usize;
        let decimation = (1usize << most.ilog2()).min(bins);
        let bin_rate = input_rate / decimation as f64;
        let taps = unit_gain(design_lowpass(&LowpassSpec {
            passband_hz: pass,
            stopband_hz: (bin_rate - pass).min(input_rate / 2.0),
            attenuation_db: PROTOTYPE_ATTENUATION_DB,
            sample_rate: input_rate,
        })?);
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

/// The recording rate and channel bandwidth every bank needs.
fn check_rates(input_rate: f64, bandwidth_hz: f64) -> Result<()> {
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
    Ok(())
}

/// Taps scaled to unit gain at DC: each channel keeps the input's level.
fn unit_gain(mut taps: Vec<f32>) -> Vec<f32> {
    let sum: f32 = taps.iter().sum();
    if sum.abs() > 0.0 {
        taps.iter_mut().for_each(|t| *t /= sum);
    }
    taps
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
    /// The mode (any; the squelch reads the band meter, [`BandMeter`]).
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
        let hz = |x: f64| shown_hz(x, 1);
        let mut s = String::from("offset_hz,frequency_hz,start_s,end_s,peak_cnr_db\n");
        for c in &self.channels {
            for t in &c.transmissions {
                let f = c
                    .frequency_hz
                    .map_or(String::new(), |f| format!("{:.1}", hz(f)));
                s.push_str(&format!(
                    "{:.1},{f},{:.3},{:.3},{:.1}\n",
                    hz(c.offset_hz),
                    t.start_s,
                    t.end_s,
                    t.peak_cnr_db
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
    /// This channel's position in the plan (its reading's index).
    index: usize,
    /// Its bin's column in the compacted frames.
    column: usize,
    offset_hz: f64,
    /// How to build the receiver.
    recipe: Recipe,
    /// The receiver and its buffers, built when the squelch first opens.
    parts: Option<Parts>,
    audio_rate: f64,
    /// Whether the receiver is running (the squelch is open).
    running: bool,
    /// Audio samples (frames × channels) still to drop after a start: pre-roll and delay.
    drop: usize,
    squelch: Squelch,
    /// The last window's reading.
    last_db: Option<f64>,
    /// Audio frames written (or owed as zeros before the file existed).
    released: u64,
    path: PathBuf,
    sink: Option<WavAudioSink>,
    /// Whether the WAV was started (the channel was active).
    written: bool,
    input: PathBuf,
}

/// What a strand needs to build its receiver.
#[derive(Debug, Clone, Copy)]
struct Recipe {
    mode: Mode,
    config: ReceiverConfig,
    bin_centre_hz: f64,
    bandwidth_hz: f64,
    /// The channelizer's delay, seconds.
    extra_delay_s: f64,
    /// Bin samples per window.
    frames: usize,
}

/// A strand's receiver and buffers.
struct Parts {
    receiver: Box<dyn Receiver>,
    samples: Vec<Complex32>,
    audio: Vec<f32>,
    channels: usize,
    /// Receiver plus channelizer delay, seconds.
    delay_s: f64,
}

/// The carrier meter's window inside a strand's receiver, seconds: watch does not use its
/// readings, and its per-window work (the noise-corrected modulation peaks) is the costliest
/// part of a running receiver at 0.1 s windows; 1 s keeps that to a tenth with its per-window
/// buffer still small.
const STRAND_METER_WINDOW_S: f64 = 1.0;

impl Recipe {
    fn build(&self, offset_hz: f64) -> Result<Parts> {
        let rate = self.config.input_rate;
        let front = BinFrontEnd::new(rate, self.bin_centre_hz, offset_hz, self.bandwidth_hz)?;
        let mut receiver = strand_receiver(self.mode, &self.config, front)?;
        receiver.set_meter_window(STRAND_METER_WINDOW_S)?;
        Ok(Parts {
            channels: receiver.audio_channels(),
            delay_s: receiver.delay() / rate + self.extra_delay_s,
            audio: vec![0.0; receiver.max_output_len(self.frames)],
            samples: vec![Complex32::default(); self.frames],
            receiver,
        })
    }
}

/// The receiver for `mode` on a bin front end (every mode: the squelch reads the band meter).
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
        Mode::Dsb => build::<DsbDetector>(mode, config, front),
        Mode::Usb | Mode::Lsb => build::<SsbDetector>(mode, config, front),
        Mode::Isb => build::<IsbDetector>(mode, config, front),
    }
}

/// One window of the recording as the strands need it: where it starts, each channel's
/// reading, and the channelizer frames (`columns` values per frame: every bin, or only the
/// bins in use).
struct Window {
    start: u64,
    len: usize,
    readings: Vec<Option<f64>>,
    frames: Vec<Complex32>,
    /// How many values of `frames` hold this window's frames.
    values: usize,
}

/// Zeros written for squelched stretches.
const ZEROS: [f32; 4096] = [0.0; 4096];

impl Strand {
    /// One window: the squelch decides on its reading; a closed squelch costs nothing more; on
    /// opening the receiver restarts on the pre-roll windows (its audio dropped) and the file
    /// is brought up to the window's start with zeros; while open the window's audio is written.
    fn window(&mut self, w: &Window, preroll: &[&Window], fs: f64, columns: usize) -> Result<()> {
        let start_s = w.start as f64 / fs;
        let end_s = (w.start + w.len as u64) as f64 / fs;
        self.last_db = w.readings[self.index];
        let open = self.squelch.update(start_s, end_s, self.last_db);
        if !open {
            self.running = false;
            return Ok(());
        }
        if !self.running {
            let parts = match self.parts.as_mut() {
                Some(p) => {
                    p.receiver.reset();
                    p
                }
                None => self.parts.insert(self.recipe.build(self.offset_hz)?),
            };
            let fed: usize = preroll.iter().map(|p| p.len).sum();
            let lead = fed as f64 / fs + parts.delay_s;
            self.drop = (lead * self.audio_rate).round() as usize * parts.channels;
            let target = (start_s * self.audio_rate).round() as u64;
            if self.released > target {
                self.drop += (self.released - target) as usize * parts.channels;
            }
            self.pad_to(target)?;
            for p in preroll {
                self.feed(p, columns)?;
            }
            self.running = true;
        }
        self.feed(w, columns)
    }

    /// Runs the receiver on this channel's samples of `w` and writes what is past `drop`.
    fn feed(&mut self, w: &Window, columns: usize) -> Result<()> {
        let Some(parts) = self.parts.as_mut() else {
            return Ok(());
        };
        let n = w.values / columns;
        for (s, f) in parts
            .samples
            .iter_mut()
            .zip(w.frames[..w.values].chunks_exact(columns))
        {
            *s = f[self.column];
        }
        let (_, produced) = parts
            .receiver
            .process(&parts.samples[..n], &mut parts.audio);
        let skip = self.drop.min(produced);
        self.drop -= skip;
        let out = &mut parts.audio[skip..produced];
        out.iter_mut()
            .filter(|x| !x.is_finite())
            .for_each(|x| *x = 0.0);
        if !out.is_empty() {
            if let Some(sink) = self.sink.as_mut() {
                sink.write(out)?;
            }
            self.released += (out.len() / parts.channels) as u64;
        }
        Ok(())
    }

    /// Starts the file if need be and writes zeros up to audio frame `target`.
    fn pad_to(&mut self, target: u64) -> Result<()> {
        let channels = self.parts.as_ref().map_or(1, |p| p.channels);
        if self.sink.is_none() {
            let sink = WavAudioSink::create_checked(
                &self.path,
                &[self.input.as_path()],
                self.audio_rate as u32,
                channels as u16,
                WavEncoding::Float32,
            )?;
            self.sink = Some(sink);
            self.written = true;
        }
        let sink = self.sink.as_mut().expect("started just above");
        let mut left = target.saturating_sub(self.released) as usize * channels;
        while left > 0 {
            let k = left.min(ZEROS.len() / channels * channels);
            sink.write(&ZEROS[..k])?;
            left -= k;
        }
        self.released = self.released.max(target);
        Ok(())
    }

    /// The end: an active channel's file padded with zeros to `frames` frames (the
    /// recording's length at the audio rate) and closed.
    fn finish(&mut self, frames: u64) -> Result<()> {
        self.running = false;
        self.squelch.finish();
        if self.sink.is_some() {
            self.pad_to(frames)?;
        }
        if let Some(sink) = self.sink.take() {
            sink.finish()?;
        }
        Ok(())
    }
}

/// An open channel as the live view shows it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OpenChannel {
    /// Offset from the recording centre, Hz.
    pub offset_hz: f64,
    /// Absolute frequency, Hz, when the centre is known.
    pub frequency_hz: Option<f64>,
    /// The last window's reading, dB.
    pub cnr_db: Option<f64>,
}

/// Where a run is, after each window.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct WatchProgress {
    /// Input samples read.
    pub samples: u64,
    /// Seconds of the recording done.
    pub seconds: f64,
    /// The channels whose squelch is open, in plan order.
    pub open: Vec<OpenChannel>,
}

/// Windows the producer may run ahead of the strands.
const QUEUE_WINDOWS: usize = 2;
/// Windows of pre-roll fed to a receiver before the window its squelch opens on.
const PREROLL_WINDOWS: usize = 1;

/// Runs `amrx watch`: `progress` after each window (about 0.1 s of the recording).
///
/// Threads: one reads the recording, runs the band meter and the channelizer and sends each
/// window's readings and frames over a bounded channel (`QUEUE_WINDOWS` deep; buffers come
/// back for reuse); the caller's thread runs the strands, in parallel across cores with rayon
/// (feature `lab`). Memory is bounded by the window buffers in flight, whatever the input's
/// length.
pub fn run_watch(
    request: &WatchRequest,
    progress: &mut dyn FnMut(&WatchProgress),
) -> Result<WatchOutcome> {
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
    let design = BankDesign::for_plan(fs, bandwidth, request.plan.step_hz, &offsets)?;
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
    // Whole frames per window: the window's frames are exactly those of its inputs.
    let frames_per_window = ((WINDOW_S * fs / design.decimation as f64).round() as usize).max(1);
    let window_len = frames_per_window * design.decimation;
    let mut strands = Vec::with_capacity(offsets.len());
    let mut used: Vec<usize> = Vec::new();
    let mut bands = Vec::with_capacity(offsets.len());
    for (k, &offset) in offsets.iter().enumerate() {
        // The channel's band (±bandwidth) must lie inside the recording; its bin may wrap
        // round ±fs/2 like any other (the channelizer's bins are cyclic).
        if offset.abs() + bandwidth > 0.5 * fs {
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
                    0.5 * fs
                ),
            ));
        }
        let (bin, centre) = design.nearest_bin(fs, offset);
        let column = match used.iter().position(|&b| b == bin) {
            Some(c) => c,
            None => {
                used.push(bin);
                used.len() - 1
            }
        };
        let mut config = ReceiverConfig::new(design.bin_rate, offset - centre);
        config.options.bandwidth_hz = Some(bandwidth);
        config.options.audio_rate = request.audio_rate;
        let (lo, hi) = occupied_band_hz(&request.mode.spec().resolve(&config)?);
        bands.push((offset, lo, hi));
        let recipe = Recipe {
            mode: request.mode,
            config,
            bin_centre_hz: centre,
            bandwidth_hz: bandwidth,
            extra_delay_s: bank_delay_s,
            frames: frames_per_window,
        };
        // Every channel's receiver is checked now (so a bad request fails before any file
        // is made) but built when its squelch first opens.
        BinFrontEnd::new(design.bin_rate, centre, offset, bandwidth)?;
        if k == 0 {
            recipe.build(offset)?;
        }
        let hz = match info.centre_frequency {
            Some(c) => format!("{:.0}Hz", shown_hz(c + offset, 0)),
            None => format!("{:+.0}Hz", shown_hz(offset, 0)),
        };
        strands.push(Strand {
            index: k,
            column,
            offset_hz: offset,
            audio_rate: request.audio_rate,
            running: false,
            drop: 0,
            squelch: Squelch::new(squelch),
            last_db: None,
            released: 0,
            path: request.out_dir.join(format!("ch{k:03}_{hz}.wav")),
            sink: None,
            written: false,
            input: request.input.clone(),
            recipe,
            parts: None,
        });
    }
    let mut meter = BandMeter::new(fs, bandwidth, &bands)?;
    // When most bins are in use (a raster across the band), the frames are kept whole: the
    // reader thread, which runs the meter and the bank for every channel, then copies
    // nothing, and each strand picks its bin out; otherwise only the bins in use are kept.
    let whole = 4 * used.len() >= 3 * m;
    let columns = if whole {
        for s in &mut strands {
            s.column = used[s.column];
        }
        m
    } else {
        used.len()
    };
    let (full_tx, full_rx) = crossbeam_channel::bounded::<Window>(QUEUE_WINDOWS);
    let (empty_tx, empty_rx) = crossbeam_channel::unbounded::<Window>();
    let new_window = || Window {
        start: 0,
        len: 0,
        readings: Vec::with_capacity(offsets.len()),
        frames: if whole {
            vec![Complex32::default(); frames_per_window * m]
        } else {
            Vec::with_capacity(frames_per_window * columns)
        },
        values: 0,
    };
    let centre = info.centre_frequency;
    let (read, strands_result) = std::thread::scope(|scope| {
        let producer = scope.spawn(move || -> Result<(u64, Vec<String>)> {
            let mut input = vec![Complex32::default(); window_len];
            let mut chunk = vec![Complex32::default(); FRAMES_PER_CHUNK * m];
            let mut read = 0u64;
            loop {
                let mut n = 0;
                while n < window_len {
                    let got = source.read(&mut input[n..])?;
                    if got == 0 {
                        break;
                    }
                    n += got;
                }
                if n == 0 {
                    return Ok((read, source.warnings()));
                }
                let mut w = empty_rx.try_recv().unwrap_or_else(|_| new_window());
                w.start = read;
                w.len = n;
                w.readings.clear();
                w.readings.extend_from_slice(meter.window(&input[..n]));
                let mut at = 0;
                if whole {
                    // A window's inputs make at most `frames_per_window` frames (the first
                    // at its first input), so the buffer always has room.
                    w.values = 0;
                    while at < n {
                        let (consumed, produced) =
                            bank.process(&input[at..n], &mut w.frames[w.values..]);
                        at += consumed;
                        w.values += produced;
                        if consumed == 0 {
                            break;
                        }
                    }
                } else {
                    w.frames.clear();
                    while at < n {
                        let (consumed, produced) = bank.process(&input[at..n], &mut chunk);
                        at += consumed;
                        for frame in chunk[..produced].chunks_exact(m) {
                            w.frames.extend(used.iter().map(|&b| frame[b]));
                        }
                    }
                    w.values = w.frames.len();
                }
                read += n as u64;
                if full_tx.send(w).is_err() {
                    // The strands stopped (an error there): nothing more to do.
                    return Ok((read, source.warnings()));
                }
            }
        });
        let mut preroll: VecDeque<Window> = VecDeque::with_capacity(PREROLL_WINDOWS + 1);
        let mut view = WatchProgress::default();
        let mut result = Ok(());
        for w in full_rx.iter() {
            let before: Vec<&Window> = preroll.iter().collect();
            if let Err(e) = each_strand(&mut strands, |s| s.window(&w, &before, fs, columns)) {
                result = Err(e);
                break;
            }
            view.samples = w.start + w.len as u64;
            view.seconds = view.samples as f64 / fs;
            view.open.clear();
            view.open.extend(
                strands
                    .iter()
                    .filter(|s| s.squelch.is_open())
                    .map(|s| OpenChannel {
                        offset_hz: s.offset_hz,
                        frequency_hz: centre.map(|c| c + s.offset_hz),
                        cnr_db: s.last_db,
                    }),
            );
            progress(&view);
            preroll.push_back(w);
            if preroll.len() > PREROLL_WINDOWS {
                let old = preroll.pop_front().expect("longer than the pre-roll");
                let _ = empty_tx.send(old);
            }
        }
        drop(full_rx);
        let read = producer
            .join()
            .unwrap_or_else(|panic| std::panic::resume_unwind(panic));
        (read, result)
    });
    strands_result?;
    let (read, warnings) = read?;
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
        warnings,
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

/// `hz` rounded to `decimals` places for display, never "-0": a channel a few mHz below
/// the centre (a raster typed as 8333.333 Hz) reads 0, not −0.
pub fn shown_hz(hz: f64, decimals: i32) -> f64 {
    let scale = 10f64.powi(decimals);
    (hz * scale).round() / scale + 0.0
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shown_frequencies_never_read_minus_zero() {
        assert_eq!(format!("{:+.0}", shown_hz(-0.016, 0)), "+0");
        assert_eq!(format!("{:.1}", shown_hz(-0.016, 1)), "0.0");
        assert_eq!(format!("{:.1}", shown_hz(-8333.36, 1)), "-8333.4");
    }

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

    /// The raster's offsets: `count` channels from `first` every `step`.
    fn raster(first: f64, step: f64, count: usize) -> Vec<f64> {
        (0..count).map(|k| first + k as f64 * step).collect()
    }

    #[test]
    fn rasters_on_the_grid_get_one_bin_per_channel() {
        let fs = 2_400_000.0;
        let step = 25_000.0 / 3.0;
        // 2.4 MS/s / 8.33 kHz = 288 bins, decimated by 144: 16.67 kS/s per bin (the bins
        // 8.33 kHz apart are narrower than 2.5 × the 6 kHz edge, so not critically sampled).
        let d = BankDesign::for_plan(fs, 3_000.0, step, &raster(-140.0 * step, step, 281)).unwrap();
        assert_eq!((d.bins, d.decimation), (288, 144));
        assert!((d.bin_rate - 2.0 * step).abs() < 1e-6);
        // As the bench script writes the step (to the microhertz): still on the grid.
        let d = BankDesign::for_plan(fs, 3_000.0, 8_333.333333, &raster(0.0, 8_333.333333, 281))
            .unwrap();
        assert_eq!((d.bins, d.decimation), (288, 144));
        // 25 kHz: 96 bins, critically sampled (25 kHz ≥ 2.5 × 6 kHz); 12.5 kHz: 192 by 96.
        let d = BankDesign::for_plan(fs, 3_000.0, 25_000.0, &raster(-1e6, 25_000.0, 80)).unwrap();
        assert_eq!((d.bins, d.decimation), (96, 96));
        let d = BankDesign::for_plan(fs, 3_000.0, 12_500.0, &raster(-1e6, 12_500.0, 80)).unwrap();
        assert_eq!((d.bins, d.decimation), (192, 96));
        // Each channel's bin centre is the channel itself: no residual.
        for f in raster(-140.0 * step, step, 281) {
            let (_, centre) = d.nearest_bin(fs, f);
            let d8 = BankDesign::for_plan(fs, 3_000.0, step, &[f]).unwrap();
            let (_, c8) = d8.nearest_bin(fs, f);
            assert!((c8 - f).abs() < 1e-6 && (centre - f).abs() <= 6_250.0 + 1e-6);
        }
    }

    #[test]
    fn rasters_off_the_grid_keep_the_general_bank() {
        let step = 25_000.0 / 3.0;
        let general = BankDesign::new(2_048_000.0, 3_000.0).unwrap();
        // 2.048 MS/s / 8.33 kHz = 245.76: not a whole number.
        let d = BankDesign::for_plan(2_048_000.0, 3_000.0, step, &raster(0.0, step, 200)).unwrap();
        assert_eq!(d, general);
        // The step divides the rate, but the raster starts 1 kHz off the grid.
        let d =
            BankDesign::for_plan(2_400_000.0, 3_000.0, step, &raster(1_000.0, step, 10)).unwrap();
        assert_eq!((d.bins, d.decimation), (1024, 128));
        // On the grid but too fine for a 5 kHz channel (its noise view ±10 kHz does not fit a
        // 16.7 kHz bin).
        let d = BankDesign::for_plan(2_400_000.0, 5_000.0, step, &raster(0.0, step, 10)).unwrap();
        assert_eq!(d.bins, 512);
        // A single channel (step 0) has no grid.
        assert!(BankDesign::on_grid(2_400_000.0, 3_000.0, 0.0, &[0.0])
            .unwrap()
            .is_none());
    }

    #[test]
    fn the_on_grid_bank_keeps_folded_neighbours_50_db_down() {
        // The prototype's response where decimation folds onto a channel (from bin rate −
        // 3 kHz: the band of the channel two spacings away) is at least the design's 50 dB
        // down, and where it folds onto the noise view (from bin rate − 6 kHz) at least 48 dB
        // (Kaiser's attenuation formula is approximate at the stopband edge: measured 49.0 dB
        // there); the passband to the noise view's edge (6 kHz) is flat within 0.1 dB.
        let fs = 2_400_000.0;
        let step = 25_000.0 / 3.0;
        let d = BankDesign::on_grid(fs, 3_000.0, step, &[0.0])
            .unwrap()
            .unwrap();
        let response = |f: f64| -> f64 {
            let (re, im) = d
                .taps
                .iter()
                .enumerate()
                .fold((0.0, 0.0), |(re, im), (n, &h)| {
                    let a = std::f64::consts::TAU * f * n as f64 / fs;
                    (re + f64::from(h) * a.cos(), im - f64::from(h) * a.sin())
                });
            20.0 * (re * re + im * im).sqrt().log10()
        };
        for f in [0.0, 1_000.0, 3_000.0, 6_000.0] {
            assert!(response(f).abs() < 0.1, "{f} Hz: {:.2} dB", response(f));
        }
        let worst = |from: f64| {
            (0..)
                .map(|i| from + 37.0 * i as f64)
                .take_while(|&f| f < 400_000.0)
                .map(response)
                .fold(f64::NEG_INFINITY, f64::max)
        };
        let (view, channel) = (worst(d.bin_rate - 6_000.0), worst(d.bin_rate - 3_000.0));
        eprintln!("folded onto the noise view {view:.1} dB, onto the channel {channel:.1} dB");
        assert!(
            view < -48.0 && channel < -50.0,
            "{view:.1} dB, {channel:.1} dB"
        );
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

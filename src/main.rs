//! `amrx`: the command-line receiver. Argument parsing and wiring only; the work is in the
//! library.

use amrx::band::{self, run_scan, ScanRequest};
use amrx::demod::{
    AudioLevel, LoopSettings, Mode, Notch, ReceiverOptions, Sideband, SsbMethod, MODES,
};
use amrx::dsp::AgcSettings;
use amrx::io::{check_destination, InputOptions, SampleFormat, StreamOptions};
use amrx::lab::{self, Axis, SweepSpec};
use amrx::measure::Limits;
use amrx::pipeline::demo::{default_demo_dir, run_demo_with_progress, DemoRow};
use amrx::pipeline::synth_job::{run_scene_with_progress, DEFAULT_MAX_SAMPLES};
use amrx::pipeline::{
    check_outputs, info, run_demod_live, run_measure, AudioTarget, DemodRequest, LiveControl,
    MeasureRequest, Progress, Tuning,
};
use amrx::Error;
use clap::{Args, CommandFactory, Parser, Subcommand, ValueEnum};
use indicatif::{ProgressBar, ProgressDrawTarget, ProgressState, ProgressStyle};
use std::io::IsTerminal;
use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};
use std::sync::Arc;

/// Receiver for the amplitude-modulation family: IQ recordings in, audio out.
#[derive(Parser, Debug)]
#[command(name = "amrx", version, about, disable_help_subcommand = true)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand, Debug)]
enum Command {
    /// Demodulate one emission from an IQ recording to audio.
    Demod(DemodArgs),
    /// Measure a full-carrier station over time: carrier, CNR, modulation peaks, events.
    Measure(MeasureArgs),
    /// Find every emission on the band: frequency, class, level, CNR, 99 % bandwidth, times.
    Scan(ScanArgs),
    /// Receive every channel of a plan at once: squelched WAVs, activity log, summary.
    Watch(WatchArgs),
    /// Show what a recording holds.
    Info {
        /// The recording (SigMF, IQ WAV, raw file or - for standard input).
        input: PathBuf,
        #[command(flatten)]
        input_options: InputArgs,
    },
    /// Generate a scene of emissions (a JSON scene file) as a SigMF recording.
    Synth {
        /// The scene file (JSON; schema in the amrx::synth::scene docs).
        scene: PathBuf,
        /// Output base name: writes BASE.sigmf-data and BASE.sigmf-meta.
        #[arg(long, allow_negative_numbers = true)]
        out: PathBuf,
        /// Sample datatype, overriding the scene's (complex types only).
        #[arg(long, allow_negative_numbers = true, value_parser = parse_format)]
        datatype: Option<SampleFormat>,
        /// Allow a scene of more than 2^30 samples (up to 2^40).
        #[arg(long)]
        allow_large: bool,
        /// No progress bar.
        #[arg(long)]
        quiet: bool,
    },
    /// Measure detectors' output SNR against input SNR in noise, with theory overlaid.
    Sweep(SweepArgs),
    /// List the sound cards' inputs and outputs with their rates and channel counts.
    Devices,
    /// Show the help of amrx or of one of its commands.
    Help {
        /// The command to explain (all commands when absent).
        command: Option<String>,
    },
    /// Write an invented scene of stations as SigMF, receive each, and print what was measured.
    Demo {
        /// Folder for the recording, audio and reports (default: amrx-demo in the temp folder).
        dir: Option<PathBuf>,
        /// No progress bar.
        #[arg(long)]
        quiet: bool,
    },
}

#[derive(Args, Debug)]
struct InputArgs {
    /// Raw sample format (raw files and standard input).
    #[arg(long, allow_negative_numbers = true, value_parser = parse_format)]
    format: Option<SampleFormat>,
    /// Sample rate in Hz (raw input, or a SigMF recording without core:sample_rate).
    #[arg(long, allow_negative_numbers = true)]
    rate: Option<f64>,
    /// Channel of a multi-channel SigMF recording (0-based).
    #[arg(long, allow_negative_numbers = true, default_value_t = 0)]
    channel: usize,
    /// Exchange I and Q (for front ends that deliver them swapped: the spectrum is mirrored).
    #[arg(long)]
    swap_iq: bool,
    /// Centre frequency of the recording in Hz, for inputs that do not carry one (raw
    /// captures); lets --carrier tune by absolute frequency.
    #[arg(long, allow_negative_numbers = true)]
    centre: Option<f64>,
}

/// The part of the input to process.
#[derive(Args, Debug)]
struct SpanArgs {
    /// Seconds of input to skip first.
    #[arg(long, allow_negative_numbers = true, default_value_t = 0.0)]
    start: f64,
    /// Seconds to process (default: to the end).
    #[arg(long, allow_negative_numbers = true)]
    duration: Option<f64>,
}

#[derive(Args, Debug)]
struct ScanArgs {
    /// The IQ input (NAME.sigmf-meta or NAME.sigmf-data, an IQ WAV, a raw file, or -).
    input: PathBuf,
    /// Write what was found as JSON.
    #[arg(long, allow_negative_numbers = true)]
    json: Option<PathBuf>,
    /// Draw the averaged spectrum with the floor and the emissions found (PNG).
    #[arg(long, allow_negative_numbers = true)]
    png: Option<PathBuf>,
    /// Draw the waterfall: time down, frequency across (PNG).
    #[arg(long, allow_negative_numbers = true)]
    waterfall: Option<PathBuf>,
    /// Write a copy of the input's SigMF metadata with one annotation per emission.
    #[arg(long, allow_negative_numbers = true)]
    annotate: Option<PathBuf>,
    /// Least CNR reported, dB (in each emission's occupied bandwidth).
    #[arg(long, allow_negative_numbers = true, default_value_t = amrx::band::scan::DEFAULT_MIN_CNR_DB)]
    min_cnr: f64,
    /// No progress bar.
    #[arg(long)]
    quiet: bool,
    #[command(flatten)]
    input_options: InputArgs,
}

#[derive(Args, Debug)]
struct WatchArgs {
    /// The IQ input (NAME.sigmf-meta or NAME.sigmf-data, an IQ WAV, a raw file, or -).
    input: PathBuf,
    /// Receive mode (am, sam, dsb, usb, lsb, isb, vsb).
    #[arg(long, allow_negative_numbers = true, value_parser = parse_mode)]
    mode: Mode,
    /// Channels relative to the recording centre: FIRST:STEP:COUNT in Hz.
    #[arg(
        long,
        allow_hyphen_values = true,
        conflicts_with = "carriers",
        required_unless_present = "carriers"
    )]
    offsets: Option<String>,
    /// Absolute channel frequencies: FIRST:STEP:COUNT in Hz (needs the recording's centre).
    #[arg(long, allow_hyphen_values = true)]
    carriers: Option<String>,
    /// CNR that opens a channel's squelch, dB.
    #[arg(long, allow_negative_numbers = true, default_value_t = amrx::channelize::watch::DEFAULT_SQUELCH_DB)]
    squelch: f64,
    /// Channel (audio) bandwidth in Hz (the mode's default when absent).
    #[arg(long, allow_negative_numbers = true)]
    bandwidth: Option<f64>,
    /// Audio sample rate in Hz.
    #[arg(long, allow_negative_numbers = true, default_value_t = 48000.0)]
    audio_rate: f64,
    /// Directory for one WAV per channel that was ever active.
    #[arg(long, allow_negative_numbers = true)]
    out_dir: PathBuf,
    /// Activity log: one CSV row per transmission.
    #[arg(long, allow_negative_numbers = true)]
    log: Option<PathBuf>,
    /// Summary of every channel (JSON).
    #[arg(long, allow_negative_numbers = true)]
    json: Option<PathBuf>,
    /// No progress line.
    #[arg(long)]
    quiet: bool,
    #[command(flatten)]
    input_options: InputArgs,
}

#[derive(Args, Debug)]
struct DemodArgs {
    /// The IQ input (NAME.sigmf-meta or NAME.sigmf-data, an IQ WAV, a raw file, -, or
    /// sound:NAME for a sound card's stereo input, left = I, right = Q; sound:default).
    input: PathBuf,
    /// Receive mode (the library's mode table: am, sam, dsb, usb, lsb, isb, vsb).
    #[arg(long, allow_negative_numbers = true, value_parser = parse_mode)]
    mode: Mode,
    /// Carrier frequency relative to the recording centre, in Hz.
    #[arg(long, allow_negative_numbers = true, conflicts_with = "carrier")]
    offset: Option<f64>,
    /// Absolute carrier frequency in Hz (needs the recording's centre frequency).
    #[arg(long, allow_negative_numbers = true)]
    carrier: Option<f64>,
    /// Audio sample rate in Hz.
    #[arg(long, allow_negative_numbers = true, default_value_t = 48000.0)]
    audio_rate: f64,
    /// Audio bandwidth in Hz (the mode's default when absent).
    #[arg(long, allow_negative_numbers = true)]
    bandwidth: Option<f64>,
    /// Sideband to keep (sam only).
    #[arg(long, allow_negative_numbers = true, value_enum)]
    sideband: Option<SidebandArg>,
    /// Single-sideband method (usb, lsb, isb).
    #[arg(long, allow_negative_numbers = true, value_enum)]
    ssb_method: Option<SsbMethodArg>,
    /// Lock to a pilot or full carrier when one is present (usb, lsb).
    #[arg(long)]
    carrier_lock: bool,
    /// Carrier-loop noise bandwidth in Hz (modes with a carrier loop).
    #[arg(long, allow_negative_numbers = true)]
    loop_bandwidth: Option<f64>,
    /// Carrier-loop damping (modes with a carrier loop).
    #[arg(long, allow_negative_numbers = true)]
    loop_damping: Option<f64>,
    /// Gain control. Default: a listening level (the mode's AGC; slow AGC for am and sam).
    #[arg(
        long,
        allow_negative_numbers = true,
        value_enum,
        conflicts_with = "gain"
    )]
    agc: Option<AgcArg>,
    /// Calibrated level for measuring: unity gain, no AGC (the audio keeps the signal's level).
    #[arg(long, conflicts_with_all = ["agc", "gain"])]
    calibrated: bool,
    /// Correct the front end's IQ gain and phase imbalance blindly (removes mirror images).
    #[arg(long)]
    iq_balance: bool,
    /// Blank impulses (ignition, switching, lightning) on the IQ ahead of the channel filter.
    #[arg(long)]
    noise_blanker: bool,
    /// Notch on the audio: `auto` finds and removes steady whistles, a number removes the tone
    /// at that audio frequency in Hz.
    #[arg(long, allow_negative_numbers = true, value_parser = parse_notch)]
    notch: Option<Notch>,
    /// Fixed audio gain in dB instead of AGC.
    #[arg(long, allow_negative_numbers = true)]
    gain: Option<f64>,
    /// Output WAV file, or - for raw f32 on standard output.
    #[arg(long, allow_negative_numbers = true, required_unless_present = "play")]
    out: Option<PathBuf>,
    /// Play the audio on the sound card (a file input is then paced to real time); type an
    /// offset in Hz and Enter to retune, u/d [HZ] to step, q to stop.
    #[arg(long)]
    play: bool,
    /// Sound-card output for --play (names from `amrx devices`; default: the system's).
    #[arg(long, requires = "play", allow_negative_numbers = true)]
    device: Option<String>,
    /// Sound-card output latency in milliseconds for --play (default 30); raise it (e.g. 600)
    /// if a busy machine makes the sound drop out.
    #[arg(long, requires = "play", allow_negative_numbers = true)]
    latency: Option<f64>,
    /// Write 16-bit PCM instead of 32-bit float.
    #[arg(long)]
    pcm16: bool,
    /// Write a JSON report of what was measured.
    #[arg(long, allow_negative_numbers = true)]
    report: Option<PathBuf>,
    /// No progress bar.
    #[arg(long)]
    quiet: bool,
    #[command(flatten)]
    span: SpanArgs,
    #[command(flatten)]
    input_options: InputArgs,
}

#[derive(Args, Debug)]
struct MeasureArgs {
    /// The IQ input (NAME.sigmf-meta or NAME.sigmf-data, an IQ WAV, a raw file, or -).
    input: PathBuf,
    /// Carrier frequency relative to the recording centre, in Hz.
    #[arg(
        long,
        allow_negative_numbers = true,
        conflicts_with = "carrier",
        required_unless_present = "carrier"
    )]
    offset: Option<f64>,
    /// Absolute carrier frequency in Hz (needs the recording's centre frequency).
    #[arg(long, allow_negative_numbers = true)]
    carrier: Option<f64>,
    /// Audio (message) bandwidth in Hz; the CNR is quoted in twice this (default 5000).
    #[arg(long, allow_negative_numbers = true)]
    bandwidth: Option<f64>,
    /// Measurement window in seconds.
    #[arg(long, allow_negative_numbers = true, default_value_t = 0.1)]
    window: f64,
    /// Positive peak limit in percent (take it from the station's licence), e.g. 125.
    #[arg(long, allow_negative_numbers = true)]
    limit_positive: Option<f64>,
    /// Negative peak limit in percent (take it from the station's licence), e.g. 100.
    #[arg(long, allow_negative_numbers = true)]
    limit_negative: Option<f64>,
    /// Write windows, events and summary as JSON (fractions, 1.0 = 100 %).
    #[arg(long, allow_negative_numbers = true)]
    json: Option<PathBuf>,
    /// Write one CSV row per window.
    #[arg(long, allow_negative_numbers = true)]
    csv: Option<PathBuf>,
    /// Draw peaks, limits, carrier level and events as a PNG.
    #[arg(long, allow_negative_numbers = true)]
    png: Option<PathBuf>,
    #[command(flatten)]
    span: SpanArgs,
    #[command(flatten)]
    input_options: InputArgs,
}

#[derive(Args, Debug)]
struct SweepArgs {
    /// Detectors, comma-separated: am, sam, dsb, usb, lsb, isb, vsb, sam:upper, sam:lower,
    /// diode, diode:RC_MICROSECONDS.
    #[arg(long, allow_negative_numbers = true, default_value = "am,sam,dsb,usb")]
    detectors: String,
    /// What the input axis sets: channel (baseband) SNR or carrier-to-noise ratio.
    #[arg(long, allow_negative_numbers = true, value_enum, default_value = "snr")]
    axis: AxisArg,
    /// First input value in dB.
    #[arg(long, allow_negative_numbers = true, default_value_t = -12.0)]
    from: f64,
    /// Last input value in dB.
    #[arg(long, allow_negative_numbers = true, default_value_t = 36.0)]
    to: f64,
    /// Step in dB.
    #[arg(long, allow_negative_numbers = true, default_value_t = 2.0)]
    step: f64,
    /// Monte Carlo trials per point.
    #[arg(long, allow_negative_numbers = true, default_value_t = 8)]
    trials: usize,
    /// Seconds of signal per trial (after settling).
    #[arg(long, allow_negative_numbers = true, default_value_t = 0.5)]
    seconds: f64,
    /// Modulation index of the full-carrier test signal.
    #[arg(long, allow_negative_numbers = true, default_value_t = 0.5)]
    mu: f64,
    /// Test tone in Hz.
    #[arg(long, allow_negative_numbers = true, default_value_t = 1000.0)]
    tone: f64,
    /// Message bandwidth W in Hz.
    #[arg(long, allow_negative_numbers = true, default_value_t = 5000.0)]
    bandwidth: f64,
    /// Seed of every random process.
    #[arg(long, allow_negative_numbers = true, default_value_t = 1)]
    seed: u64,
    /// Fading of the test signal: none, or a standard HF condition (good, moderate, poor,
    /// flutter, mid-latitude-quiet, ...).
    #[arg(long, allow_negative_numbers = true, default_value = "none")]
    fading: String,
    /// Impulsive noise: mean bursts per second (none without it).
    #[arg(long, allow_negative_numbers = true)]
    impulse_rate: Option<f64>,
    /// Length of each impulse burst in microseconds.
    #[arg(
        long,
        allow_negative_numbers = true,
        default_value_t = 40.0,
        requires = "impulse_rate"
    )]
    impulse_width: f64,
    /// Impulse burst power over the test signal's mean power, dB.
    #[arg(
        long,
        allow_negative_numbers = true,
        default_value_t = 30.0,
        requires = "impulse_rate"
    )]
    impulse_level: f64,
    /// Run only the K-th of N disjoint slices of the trials (K/N) and write their trial
    /// file to --csv; merge the files with --merge.
    #[arg(
        long,
        allow_negative_numbers = true,
        value_name = "K/N",
        conflicts_with = "merge"
    )]
    shard: Option<String>,
    /// Merge the trial files of every shard (run with the same options) into the CSV and PNG.
    #[arg(long, allow_negative_numbers = true, value_name = "TRIAL_FILES", num_args = 1..)]
    merge: Vec<PathBuf>,
    /// Receiver noise figure in dB: print the RF level for 12 dB SINAD and 10 dB (S+N)/N.
    #[arg(long, allow_negative_numbers = true)]
    noise_figure: Option<f64>,
    /// Draw the audio SINAD against RF level (needs --noise-figure).
    #[arg(long, allow_negative_numbers = true, requires = "noise_figure")]
    sensitivity_png: Option<PathBuf>,
    /// CSV output (with --shard: the trial file, default sweep-K-of-N.trials.csv).
    #[arg(long, allow_negative_numbers = true)]
    csv: Option<PathBuf>,
    /// PNG plot output.
    #[arg(long, allow_negative_numbers = true, default_value = "sweep.png")]
    png: PathBuf,
    /// No progress bar.
    #[arg(long)]
    quiet: bool,
}

#[derive(ValueEnum, Clone, Copy, Debug)]
enum AxisArg {
    Snr,
    Cnr,
}

#[derive(ValueEnum, Clone, Copy, Debug)]
enum SidebandArg {
    Upper,
    Lower,
}

#[derive(ValueEnum, Clone, Copy, Debug)]
enum SsbMethodArg {
    Phasing,
    Weaver,
}

#[derive(ValueEnum, Clone, Copy, Debug)]
enum AgcArg {
    /// Fast attack with hang, for speech.
    Speech,
    /// Slow, for broadcast programme.
    Slow,
    /// Unity gain.
    Off,
}

fn parse_format(name: &str) -> Result<SampleFormat, String> {
    SampleFormat::parse(name).ok_or_else(|| {
        format!(
            "unknown format '{name}' ({})",
            amrx::io::format::supported_names()
        )
    })
}

/// Appends one formatted line to a `String` (the commands print their text in one go through
/// [`emit`], so that a closed or full standard output is one clean error, never a panic).
macro_rules! outln {
    ($buf:expr, $($arg:tt)*) => {{
        use std::fmt::Write as _;
        let _ = writeln!($buf, $($arg)*);
    }};
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    let outcome = match cli.command {
        Command::Demod(args) => demod(args),
        Command::Measure(args) => measure(&args).map(|()| 0),
        Command::Scan(args) => scan(&args).map(|()| 0),
        Command::Watch(args) => watch(&args).map(|()| 0),
        Command::Info {
            input,
            input_options,
        } => show_info(&input, &input_options).map(|()| 0),
        Command::Synth {
            scene,
            out,
            datatype,
            allow_large,
            quiet,
        } => synth(&scene, &out, datatype, allow_large, quiet).map(|()| 0),
        Command::Sweep(args) => sweep(&args).map(|()| 0),
        Command::Devices => devices().map(|()| 0),
        Command::Help { command } => help(command.as_deref()).map(|()| 0),
        Command::Demo { dir, quiet } => {
            demo(dir.unwrap_or_else(default_demo_dir), quiet).map(|()| 0)
        }
    };
    match outcome {
        Ok(code) => ExitCode::from(code),
        Err(message) => {
            eprintln!("amrx: {}", amrx::error::cap_echo(message, 1000));
            ExitCode::FAILURE
        }
    }
}

/// Writes `text` to standard output. A closed pipe (the reader went away, as with `| head`)
/// ends the command quietly; any other failure (a full disk) is one line of error.
fn emit(text: &str) -> Result<(), String> {
    use std::io::Write;
    let mut out = std::io::stdout().lock();
    match out.write_all(text.as_bytes()).and_then(|()| out.flush()) {
        Ok(()) => Ok(()),
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Ok(()),
        Err(e) => Err(format!("standard output: {e}")),
    }
}

/// Signal numbers and the stop flag `demod` reads: the first SIGINT or SIGTERM asks the run
/// to stop (drain, finalise the WAV and the report); a second one ends the process at once.
struct Interruption {
    stop: Arc<AtomicBool>,
    signal: Arc<AtomicUsize>,
}

impl Interruption {
    fn install() -> Result<Self, String> {
        use signal_hook::consts::{SIGINT, SIGTERM, SIGXFSZ};
        use signal_hook::flag;
        let stop = Arc::new(AtomicBool::new(false));
        let signal = Arc::new(AtomicUsize::new(0));
        let failed = |e: std::io::Error| format!("cannot install signal handlers: {e}");
        for sig in [SIGINT, SIGTERM] {
            // Registered first, so that it sees the flag before this signal sets it.
            flag::register_conditional_shutdown(sig, 128 + sig, Arc::clone(&stop))
                .map_err(failed)?;
            flag::register(sig, Arc::clone(&stop)).map_err(failed)?;
            flag::register_usize(sig, Arc::clone(&signal), sig as usize).map_err(failed)?;
        }
        // A file-size limit (ulimit -f) makes the write fail with an error the sink reports,
        // instead of killing the process with a half-written file.
        flag::register(SIGXFSZ, Arc::new(AtomicBool::new(false))).map_err(failed)?;
        Ok(Interruption { stop, signal })
    }

    /// 128 + the signal number (130 for SIGINT, 143 for SIGTERM), or 0 when none came.
    fn exit_code(&self) -> u8 {
        match self.signal.load(Ordering::SeqCst) {
            0 => 0,
            sig => (128 + sig).min(255) as u8,
        }
    }
}

impl InputArgs {
    fn options(&self) -> InputOptions {
        InputOptions {
            format: self.format,
            rate: self.rate,
            channel: self.channel,
            stream: StreamOptions {
                swap_iq: self.swap_iq,
                centre_hz: self.centre,
                ..StreamOptions::default()
            },
        }
    }
}

/// A mode from the library's table, by name.
fn parse_mode(name: &str) -> Result<Mode, String> {
    name.parse().map_err(|_| {
        let names: Vec<&str> = MODES.iter().map(|m| m.name).collect();
        format!("unknown mode '{name}' ({})", names.join(", "))
    })
}

fn parse_notch(text: &str) -> Result<Notch, String> {
    text.parse()
        .map_err(|_| format!("'{text}' is neither auto nor an audio frequency in Hz"))
}

/// The command-line flag for a library parameter name.
fn flag_for(parameter: &str) -> Option<&'static str> {
    Some(match parameter {
        "offset_hz" => "--offset",
        "input_rate" | "sample_rate" => "--rate",
        "bandwidth_hz" => "--bandwidth",
        "audio_rate" => "--audio-rate",
        "sideband" => "--sideband",
        "notch_hz" => "--notch",
        "carrier_lock" => "--carrier-lock",
        "loop_bandwidth_hz" => "--loop-bandwidth",
        "loop_damping" => "--loop-damping",
        "agc.gain_db" => "--gain",
        "agc.attack_s" | "agc.decay_s" | "agc.hang_s" | "agc.target" => "--agc",
        "detectors" => "--detectors",
        "mode" => "--mode",
        "channel" => "--channel",
        "format" => "--format",
        "trials" => "--trials",
        "axis" => "--axis",
        "seconds" => "--seconds",
        "tone_hz" => "--tone",
        "mu" => "--mu",
        "range_db" | "input_db" => "--from/--to/--step",
        "fading" => "--fading",
        "impulse_rate_hz" => "--impulse-rate",
        "impulse_width_s" => "--impulse-width",
        "impulse_level_db" => "--impulse-level",
        "shard" => "--shard",
        "shards" => "--merge",
        "noise_figure_db" => "--noise-figure",
        "window_s" => "--window",
        "start_s" => "--start",
        "duration_s" => "--duration",
        "centre_hz" => "--centre",
        "limit_positive" => "--limit-positive",
        "limit_negative" => "--limit-negative",
        "min_cnr_db" => "--min-cnr",
        "squelch_db" => "--squelch",
        "offsets" | "channel_plan" => "--offsets/--carriers",
        "carriers" => "--carriers",
        "latency_s" => "--latency (in ms)",
        _ => return None,
    })
}

/// The library's error in the command line's words: parameters become the flags that set them.
fn in_cli_words(error: Error) -> String {
    match error {
        Error::InvalidParameter {
            name,
            value,
            problem,
        } => match flag_for(name) {
            Some(flag) => format!("invalid {flag} {value}: {problem}"),
            None => format!("invalid {name} {value}: {problem}"),
        },
        other => other.to_string(),
    }
}

/// One line naming the file for errors that do not name one themselves.
fn with_input(input: &Path, error: Error) -> String {
    match error {
        Error::Io { .. } | Error::InvalidFile { .. } => error.to_string(),
        other => format!("{}: {}", input.display(), in_cli_words(other)),
    }
}

fn demod(args: DemodArgs) -> Result<u8, String> {
    let interruption = Interruption::install()?;
    let mode = args.mode;
    let tuning = match (args.offset, args.carrier) {
        (Some(offset), _) => Tuning::Offset(offset),
        (None, Some(carrier)) => Tuning::Carrier(carrier),
        (None, None) => Tuning::Centre,
    };
    let audio = match &args.out {
        None => AudioTarget::Nothing,
        Some(out) if out.as_os_str() == "-" => AudioTarget::Stdout,
        Some(out) => AudioTarget::Wav {
            path: out.clone(),
            pcm16: args.pcm16,
        },
    };
    let request = DemodRequest {
        input: args.input.clone(),
        input_options: InputOptions {
            stream: StreamOptions {
                start_s: args.span.start,
                duration_s: args.span.duration,
                ..args.input_options.options().stream
            },
            ..args.input_options.options()
        },
        mode,
        tuning,
        options: receiver_options(&args),
        audio,
        report: args.report.clone(),
        play: args
            .play
            .then(|| args.device.clone().unwrap_or_else(|| "default".to_string())),
        play_latency_s: args.latency.map(|ms| ms / 1000.0),
        one_thread: false,
    };
    let live_input = args.input.to_str().is_some_and(|p| p.starts_with("sound:"));
    let control = Arc::new(LiveControl::default());
    let report = if args.play || live_input {
        live::start(&args.input, &control, &interruption.stop, args.quiet);
        let report = run_demod_live(&request, &|_| {}, &interruption.stop, &control);
        live::done();
        report
    } else {
        let bar = progress_bar(args.quiet, "demod");
        let report = run_demod_live(
            &request,
            &|p| show_progress(&bar, p),
            &interruption.stop,
            &control,
        );
        bar.finish_and_clear();
        report
    }
    .map_err(|e| with_input(&args.input, e));
    let report = report?;
    let code = interruption.exit_code();
    // --quiet hides the progress bar only: warnings (an interruption among them) always
    // reach stderr.
    for warning in &report.warnings {
        eprintln!("amrx: warning: {}: {warning}", args.input.display());
    }
    Ok(code)
}

fn measure(args: &MeasureArgs) -> Result<(), String> {
    let outputs: Vec<&Path> = [&args.json, &args.csv, &args.png]
        .into_iter()
        .flatten()
        .map(PathBuf::as_path)
        .collect();
    check_outputs(&args.input, &outputs).map_err(|e| with_input(&args.input, e))?;
    for (path, extension, what) in [
        (&args.json, "json", "measurements"),
        (&args.csv, "csv", "a table"),
        (&args.png, "png", "a chart"),
    ] {
        if let Some(path) = path {
            check_destination(path, &[extension], what).map_err(|e| e.to_string())?;
        }
    }
    let tuning = match (args.offset, args.carrier) {
        (Some(offset), _) => Tuning::Offset(offset),
        (None, Some(carrier)) => Tuning::Carrier(carrier),
        (None, None) => Tuning::Centre,
    };
    let limits = Limits {
        positive: args.limit_positive.map(|p| p / 100.0),
        negative: args.limit_negative.map(|p| p / 100.0),
    };
    let request = MeasureRequest {
        input: args.input.clone(),
        input_options: args.input_options.options(),
        tuning,
        bandwidth_hz: args.bandwidth,
        window_s: args.window,
        limits,
        start_s: args.span.start,
        duration_s: args.span.duration,
    };
    let bar = progress_bar(false, "measure");
    let outcome = run_measure(&request, &|p| show_progress(&bar, p));
    bar.finish_and_clear();
    let outcome = outcome.map_err(|e| with_input(&args.input, e))?;
    for warning in &outcome.warnings {
        eprintln!("amrx: warning: {}: {warning}", args.input.display());
    }
    let timeline = &outcome.timeline;
    if let Some(path) = &args.json {
        timeline.write_json(path).map_err(|e| e.to_string())?;
    }
    if let Some(path) = &args.csv {
        timeline.write_csv(path).map_err(|e| e.to_string())?;
    }
    if let Some(path) = &args.png {
        let name = args.input.file_name().map_or_else(
            || args.input.display().to_string(),
            |n| n.to_string_lossy().into_owned(),
        );
        let title = format!(
            "{name}, tuned {:+.0} Hz: modulation peaks and carrier, {} s windows",
            outcome.offset_hz, args.window
        );
        lab::write_measure_png(timeline, limits, &title, path).map_err(|e| e.to_string())?;
    }
    let mut text = String::new();
    for line in timeline.verdict_lines(limits) {
        outln!(text, "{line}");
    }
    emit(&text)
}

fn watch(args: &WatchArgs) -> Result<(), String> {
    use amrx::channelize::watch::{write_reports, ChannelPlan, PlanFrequencies, WatchRequest};
    let outputs: Vec<&Path> = [&args.json, &args.log]
        .into_iter()
        .flatten()
        .map(PathBuf::as_path)
        .collect();
    check_outputs(&args.input, &outputs).map_err(|e| with_input(&args.input, e))?;
    let (text, frequencies) = match (&args.offsets, &args.carriers) {
        (Some(p), _) => (p, PlanFrequencies::Offsets),
        (None, Some(p)) => (p, PlanFrequencies::Carriers),
        (None, None) => return Err("give --offsets or --carriers".to_string()),
    };
    let plan: ChannelPlan = text.parse().map_err(|e| with_input(&args.input, e))?;
    let request = WatchRequest {
        input: args.input.clone(),
        input_options: args.input_options.options(),
        mode: args.mode,
        plan,
        frequencies,
        squelch_db: args.squelch,
        bandwidth_hz: args.bandwidth,
        audio_rate: args.audio_rate,
        out_dir: args.out_dir.clone(),
    };
    let bar = progress_bar(args.quiet, "watch");
    bar.set_style(
        samples_style(false)
            .template(WATCH_TEMPLATE)
            .unwrap_or_else(|_| samples_style(false)),
    );
    let outcome = amrx::channelize::run_watch(&request, &mut |p| {
        bar.set_position(p.samples);
        bar.set_message(open_channels_line(p));
    });
    bar.finish_and_clear();
    let outcome = outcome.map_err(|e| with_input(&args.input, e))?;
    for warning in &outcome.warnings {
        eprintln!("amrx: warning: {}: {warning}", args.input.display());
    }
    write_reports(
        &outcome,
        &args.input,
        args.json.as_deref(),
        args.log.as_deref(),
    )
    .map_err(|e| with_input(&args.input, e))?;
    for c in &outcome.summary.channels {
        if let Some(file) = &c.file {
            println!(
                "{:+.0} Hz: {} transmission(s), {:.1} s active -> {file}",
                amrx::channelize::watch::shown_hz(c.offset_hz, 0),
                c.transmissions.len(),
                c.active_s
            );
        }
    }
    Ok(())
}

/// The live view of `watch`: the counter, then a line of the open channels (cut at the
/// terminal's width by the bar).
const WATCH_TEMPLATE: &str =
    "{spinner} watch {done_ms} MS  {msps}  {elapsed} elapsed\n  {wide_msg}";

/// "N open:" and the open channels, strongest first, each as its frequency (MHz, or the
/// offset in kHz without a centre) and its reading in dB; a line the bar cuts at the
/// terminal's width, so with many channels open the weakest are the ones left out.
fn open_channels_line(p: &amrx::channelize::watch::WatchProgress) -> String {
    let mut open = p.open.clone();
    open.sort_by(|a, b| {
        b.cnr_db
            .unwrap_or(f64::NEG_INFINITY)
            .total_cmp(&a.cnr_db.unwrap_or(f64::NEG_INFINITY))
    });
    let mut line = format!("{:.1} s, {} open", p.seconds, open.len());
    for (i, c) in open.iter().enumerate() {
        line.push_str(if i == 0 { ": " } else { " | " });
        match c.frequency_hz {
            Some(f) => line.push_str(&format!("{:.4}", f / 1e6)),
            None => line.push_str(&format!("{:+.2}k", c.offset_hz / 1e3)),
        }
        match c.cnr_db {
            Some(db) => line.push_str(&format!(" {db:.0} dB")),
            None => line.push_str(" -"),
        }
    }
    line
}

fn scan(args: &ScanArgs) -> Result<(), String> {
    let outputs: Vec<&Path> = [&args.json, &args.png, &args.waterfall, &args.annotate]
        .into_iter()
        .flatten()
        .map(PathBuf::as_path)
        .collect();
    check_outputs(&args.input, &outputs).map_err(|e| with_input(&args.input, e))?;
    let request = ScanRequest {
        input: args.input.clone(),
        input_options: args.input_options.options(),
        min_cnr_db: args.min_cnr,
    };
    let bar = progress_bar(args.quiet, "samples");
    let outcome = run_scan(&request, &|n| bar.set_position(n));
    bar.finish_and_clear();
    let outcome = outcome.map_err(|e| with_input(&args.input, e))?;
    for warning in &outcome.warnings {
        eprintln!("amrx: warning: {}: {warning}", args.input.display());
    }
    let words = |e: Error| with_input(&args.input, e);
    if let Some(path) = &args.json {
        let text = outcome.json().map_err(words)?;
        amrx::io::output::write_file(path, &[], &text).map_err(|e| e.to_string())?;
    }
    let name = args.input.file_name().map_or_else(
        || args.input.display().to_string(),
        |n| n.to_string_lossy().into_owned(),
    );
    let centre = outcome.info.centre_frequency;
    if let Some(path) = &args.png {
        let title = format!(
            "{name}: averaged spectrum, {:.1} Hz bins, {} frames, {} emission(s)",
            outcome.record.bin_hz(),
            outcome.record.frames,
            outcome.report.emissions.len()
        );
        band::write_spectrum_png(&outcome.record, &outcome.detection, centre, &title, path)
            .map_err(|e| e.to_string())?;
    }
    if let Some(path) = &args.waterfall {
        let title = format!(
            "{name}: waterfall, colour = power density (dBFS/Hz), {} rows; outlines = emissions found",
            outcome.record.row_count()
        );
        band::write_waterfall_png(&outcome.record, &outcome.detection, centre, &title, path)
            .map_err(|e| e.to_string())?;
    }
    if let Some(path) = &args.annotate {
        outcome
            .write_annotated(&args.input, path)
            .map_err(|e| e.to_string())?;
    }
    let mut text = String::new();
    for line in outcome.table_lines() {
        outln!(text, "{line}");
    }
    emit(&text)
}

fn receiver_options(args: &DemodArgs) -> ReceiverOptions {
    let agc = match (args.gain, args.agc) {
        (Some(gain_db), _) => Some(AgcSettings::Fixed { gain_db }),
        (None, Some(AgcArg::Speech)) => Some(AgcSettings::SPEECH),
        (None, Some(AgcArg::Slow)) => Some(AgcSettings::SLOW),
        (None, Some(AgcArg::Off)) => Some(AgcSettings::OFF),
        (None, None) => Some(if args.calibrated {
            AudioLevel::Calibrated.agc(args.mode)
        } else {
            AudioLevel::Listening.agc(args.mode)
        }),
    };
    ReceiverOptions {
        audio_rate: args.audio_rate,
        bandwidth_hz: args.bandwidth,
        sideband: args.sideband.map(|s| match s {
            SidebandArg::Upper => Sideband::Upper,
            SidebandArg::Lower => Sideband::Lower,
        }),
        ssb_method: match args.ssb_method {
            Some(SsbMethodArg::Phasing) => SsbMethod::Phasing,
            Some(SsbMethodArg::Weaver) => SsbMethod::Weaver,
            None => SsbMethod::default(),
        },
        carrier_lock: args.carrier_lock,
        loop_settings: LoopSettings {
            bandwidth_hz: args.loop_bandwidth,
            damping: args.loop_damping,
        },
        agc,
        vestige_hz: None,
        iq_balance: args.iq_balance,
        noise_blanker: args.noise_blanker,
        notch: args.notch,
    }
}

/// A progress bar on standard error (hidden with `--quiet` or when standard error is not a
/// terminal). Without a total it counts and shows the rate; [`show_progress`] turns it into a
/// bar with percentage and time left once the job says how long it is.
fn progress_bar(quiet: bool, label: &str) -> ProgressBar {
    if quiet || !std::io::stderr().is_terminal() {
        return ProgressBar::with_draw_target(None, ProgressDrawTarget::hidden());
    }
    let bar = ProgressBar::no_length();
    bar.set_prefix(label.to_string());
    bar.set_style(samples_style(false));
    bar
}

/// A job of known length: bar, percentage, samples in millions, rate, time left.
const BAR_TEMPLATE: &str =
    "{prefix} [{bar:30}] {percent:>3}%  {done_ms}/{total_ms} MS  {msps}  {elapsed} elapsed, {eta} left";
/// A stream of unknown length: samples in millions, rate, time so far.
const COUNT_TEMPLATE: &str = "{spinner} {prefix} {done_ms} MS  {msps}  {elapsed} elapsed";
/// The sweep: trials, with percentage and time left.
const SWEEP_TEMPLATE: &str =
    "sweep [{bar:30}] {percent:>3}%  {pos}/{len} trials  {trial_rate}  {elapsed} elapsed, {eta} left";

/// Samples in millions (MS) and the rate in MS/s; with a total, the bar, percentage and time left.
fn samples_style(with_total: bool) -> ProgressStyle {
    let template = if with_total {
        BAR_TEMPLATE
    } else {
        COUNT_TEMPLATE
    };
    ProgressStyle::with_template(template)
        .unwrap_or_else(|_| ProgressStyle::default_bar())
        .progress_chars("=> ")
        .with_key(
            "done_ms",
            |s: &ProgressState, w: &mut dyn std::fmt::Write| {
                let _ = write!(w, "{}", mega(s.pos() as f64));
            },
        )
        .with_key(
            "total_ms",
            |s: &ProgressState, w: &mut dyn std::fmt::Write| {
                let _ = write!(w, "{}", mega(s.len().unwrap_or(0) as f64));
            },
        )
        .with_key("msps", |s: &ProgressState, w: &mut dyn std::fmt::Write| {
            let _ = write!(w, "{} MS/s", mega(s.per_sec()));
        })
}

/// A count in millions with a precision that suits its size: 0.052, 1.25, 72.0, 1440.
fn mega(count: f64) -> String {
    let m = count / 1e6;
    if !m.is_finite() {
        "-".to_string()
    } else if m < 1.0 {
        format!("{m:.3}")
    } else if m < 10.0 {
        format!("{m:.2}")
    } else if m < 1000.0 {
        format!("{m:.1}")
    } else {
        format!("{m:.0}")
    }
}

/// Moves the bar; the first report of a total turns the counter into a bar with time left.
fn show_progress(bar: &ProgressBar, p: Progress) {
    if let Some(total) = p.total {
        if bar.length() != Some(total) {
            bar.set_length(total);
            bar.set_style(samples_style(true));
        }
    }
    bar.set_position(p.done);
}

/// The sweep's bar: trials, with percentage and time left.
fn trials_bar(quiet: bool, total: u64) -> ProgressBar {
    if quiet || !std::io::stderr().is_terminal() {
        return ProgressBar::with_draw_target(None, ProgressDrawTarget::hidden());
    }
    let bar = ProgressBar::new(total);
    bar.set_style(
        ProgressStyle::with_template(SWEEP_TEMPLATE)
            .unwrap_or_else(|_| ProgressStyle::default_bar())
            .progress_chars("=> ")
            .with_key(
                "trial_rate",
                |s: &ProgressState, w: &mut dyn std::fmt::Write| {
                    let _ = write!(w, "{:.1} trials/s", s.per_sec());
                },
            ),
    );
    bar
}

/// `amrx help [COMMAND]`: the same text as `--help`.
fn help(command: Option<&str>) -> Result<(), String> {
    let mut cli = Cli::command();
    cli.build();
    let text = match command {
        None => cli.render_long_help(),
        Some(name) => match cli.find_subcommand_mut(name) {
            Some(sub) => sub.render_long_help(),
            None => {
                let names: Vec<String> = Cli::command()
                    .get_subcommands()
                    .map(|c| c.get_name().to_string())
                    .collect();
                return Err(format!(
                    "no command '{name}' (commands: {})",
                    names.join(", ")
                ));
            }
        },
    };
    emit(&text.to_string())
}

fn show_info(input: &Path, options: &InputArgs) -> Result<(), String> {
    let summary = info::describe(input, &options.options()).map_err(|e| with_input(input, e))?;
    emit(&summary.to_string())
}

fn synth(
    scene: &Path,
    out: &Path,
    datatype: Option<SampleFormat>,
    allow_large: bool,
    quiet: bool,
) -> Result<(), String> {
    let limit = if allow_large {
        u64::MAX
    } else {
        DEFAULT_MAX_SAMPLES
    };
    let bar = progress_bar(quiet, "synth");
    let summary = run_scene_with_progress(scene, out, datatype, limit, &|p| show_progress(&bar, p));
    bar.finish_and_clear();
    let summary = summary.map_err(|e| with_input(scene, e))?;
    let mut text = String::new();
    outln!(
        text,
        "{}: {} samples of {} at {} S/s, noise power {:.3e}",
        summary.meta_path.display(),
        summary.samples,
        summary.format.name(),
        summary.sample_rate,
        summary.noise_power
    );
    // CNR = C/(N0·2W), noise counted in 2W ("in Hz"), the definition demod's report uses.
    outln!(
        text,
        "{:<16} {:>13} {:>13} {:>13} {:>8} {:>8} {:>8}",
        "emission",
        "carrier Hz",
        "lower Hz",
        "upper Hz",
        "CNR dB",
        "in Hz",
        "SNR dB"
    );
    for e in &summary.emissions {
        let db = |v: Option<f64>| v.map_or("-".to_string(), |x| format!("{x:.1}"));
        outln!(
            text,
            "{:<16} {:>13.1} {:>13.1} {:>13.1} {:>8} {:>8.0} {:>8}",
            e.label,
            e.carrier_hz,
            e.lower_edge_hz,
            e.upper_edge_hz,
            db(e.cnr_db),
            e.cnr_bandwidth_hz,
            db(e.snr_db)
        );
    }
    emit(&text)?;
    if summary.clipped > 0 {
        eprintln!(
            "amrx: warning: {}: {} samples clipped at full scale",
            scene.display(),
            summary.clipped
        );
    }
    Ok(())
}

fn sweep(args: &SweepArgs) -> Result<(), String> {
    // Output paths first: a sweep can take minutes, a bad path must not wait for its end.
    let table = args.csv.as_deref().unwrap_or(Path::new("sweep.csv"));
    check_destination(table, &["csv"], "the sweep's table").map_err(|e| e.to_string())?;
    check_destination(&args.png, &["png"], "the sweep's chart").map_err(|e| e.to_string())?;
    if let Some(png) = &args.sensitivity_png {
        check_destination(png, &["png"], "the sensitivity chart").map_err(|e| e.to_string())?;
    }
    if let Some(nf) = args.noise_figure {
        lab::check_noise_figure(nf).map_err(in_cli_words)?;
    }
    let detectors = lab::parse_detectors(&args.detectors).map_err(in_cli_words)?;
    let axis = match args.axis {
        AxisArg::Snr => Axis::Snr,
        AxisArg::Cnr => Axis::Cnr,
    };
    let points = SweepSpec::range_db(args.from, args.to, args.step).map_err(in_cli_words)?;
    let mut spec = SweepSpec::new(detectors, axis, points);
    spec.trials = args.trials;
    spec.seed = args.seed;
    spec.trial.seconds = args.seconds;
    spec.trial.mu = args.mu;
    spec.trial.tone_hz = args.tone;
    spec.trial.bandwidth_hz = args.bandwidth;
    spec.trial.channel = lab::ChannelCondition {
        fading: lab::ChannelCondition::parse_fading(&args.fading).map_err(in_cli_words)?,
        impulses: args.impulse_rate.map(|rate_hz| lab::Impulses {
            rate_hz,
            width_s: args.impulse_width * 1e-6,
            level_db: args.impulse_level,
        }),
    };
    let shard: Option<lab::Shard> = args
        .shard
        .as_deref()
        .map(str::parse)
        .transpose()
        .map_err(in_cli_words)?;
    if let Some(shard) = shard {
        let path = args.csv.clone().unwrap_or_else(|| {
            PathBuf::from(format!(
                "sweep-{}-of-{}.trials.csv",
                shard.index, shard.count
            ))
        });
        let total = (0..spec.total_trials())
            .filter(|&j| shard.contains(j))
            .count();
        let bar = trials_bar(args.quiet, total as u64);
        let outputs = lab::run_shard(&spec, shard, |p| bar.set_position(p.done as u64));
        bar.finish_and_clear();
        let outputs = outputs.map_err(in_cli_words)?;
        lab::write_trials(&spec, shard, &outputs, &path).map_err(|e| e.to_string())?;
        return emit(&format!(
            "wrote {} trials of shard {shard} to {}; merge every shard's file with the same options and --merge\n",
            outputs.len(),
            path.display()
        ));
    }
    let result = if args.merge.is_empty() {
        let bar = trials_bar(args.quiet, spec.total_trials() as u64);
        let result = lab::run_sweep(&spec, |p| bar.set_position(p.done as u64));
        bar.finish_and_clear();
        result
    } else {
        lab::merge_trial_files(&spec, &args.merge)
    };
    let result = result.map_err(in_cli_words)?;
    let csv = args
        .csv
        .clone()
        .unwrap_or_else(|| PathBuf::from("sweep.csv"));
    lab::write_csv(&result, &csv).map_err(|e| e.to_string())?;
    lab::write_png(&result, &args.png).map_err(|e| e.to_string())?;
    let mut text = String::new();
    for summary in lab::summary_lines(&result) {
        outln!(text, "{summary}");
    }
    if let Some(nf) = args.noise_figure {
        for line in lab::sensitivity_lines(&result, nf) {
            outln!(text, "{line}");
        }
        if let Some(png) = &args.sensitivity_png {
            lab::write_sensitivity_png(&result, nf, png).map_err(|e| e.to_string())?;
            outln!(text, "wrote {}", png.display());
        }
    }
    outln!(text, "wrote {} and {}", csv.display(), args.png.display());
    emit(&text)
}

#[cfg(feature = "sound")]
fn devices() -> Result<(), String> {
    // Probing runs every sound-system plugin, some of which (JACK's) print their own
    // complaints on standard error: keep them off the terminal while the list is made.
    let list = {
        let _quiet = QuietStderr::new();
        amrx::sound::list_devices()
    }
    .map_err(|e| e.to_string())?;
    let mut text = String::new();
    if list.is_empty() {
        outln!(text, "no sound devices found");
    }
    let show = |c: &amrx::sound::Capability| {
        let channels = match c.channels {
            (lo, hi) if lo == hi => format!("{lo} ch"),
            (lo, hi) => format!("{lo}-{hi} ch"),
        };
        let rates = match c.rates {
            (lo, hi) if lo == hi => format!("{lo} Hz"),
            (lo, hi) => format!("{lo}-{hi} Hz"),
        };
        format!("{channels}, {rates}, {}", c.formats.join(" "))
    };
    for d in &list {
        let mut tags = Vec::new();
        if d.default_input {
            tags.push("default input");
        }
        if d.default_output {
            tags.push("default output");
        }
        let tags = if tags.is_empty() {
            String::new()
        } else {
            format!(" ({})", tags.join(", "))
        };
        outln!(text, "{}{tags}: {}", d.name, d.description);
        if let Some(c) = &d.inputs {
            outln!(text, "  in:  {}", show(c));
        }
        if let Some(c) = &d.outputs {
            outln!(text, "  out: {}", show(c));
        }
    }
    emit(&text)
}

/// Points standard error at /dev/null while alive.
#[cfg(feature = "sound")]
struct QuietStderr(Option<i32>);

#[cfg(feature = "sound")]
impl QuietStderr {
    fn new() -> Self {
        use std::os::fd::IntoRawFd;
        let Ok(null) = std::fs::OpenOptions::new().write(true).open("/dev/null") else {
            return QuietStderr(None);
        };
        let null = null.into_raw_fd();
        // SAFETY: plain descriptor calls on descriptors this process owns.
        unsafe {
            let saved = libc::dup(2);
            if saved >= 0 && libc::dup2(null, 2) >= 0 {
                libc::close(null);
                return QuietStderr(Some(saved));
            }
            libc::close(null);
        }
        QuietStderr(None)
    }
}

#[cfg(feature = "sound")]
impl Drop for QuietStderr {
    fn drop(&mut self) {
        if let Some(saved) = self.0 {
            // SAFETY: restores the descriptor saved in `new`.
            unsafe {
                libc::dup2(saved, 2);
                libc::close(saved);
            }
        }
    }
}

#[cfg(not(feature = "sound"))]
fn devices() -> Result<(), String> {
    Err(amrx::pipeline::BUILD_WITH_SOUND.to_string())
}

/// The terminal side of a live run: standard-input commands (retune, step, stop) and a status
/// line on standard error.
mod live {
    use super::*;
    use std::io::{BufRead, Write};
    use std::time::Duration;

    static RUNNING: AtomicBool = AtomicBool::new(false);

    /// Starts the command reader (unless the IQ itself comes from standard input) and the
    /// status line (when standard error is a terminal and not `quiet`).
    pub(super) fn start(
        input: &Path,
        control: &Arc<LiveControl>,
        stop: &Arc<AtomicBool>,
        quiet: bool,
    ) {
        RUNNING.store(true, Ordering::SeqCst);
        let terminal = std::io::stderr().is_terminal() && !quiet;
        if input != Path::new("-") {
            if terminal {
                eprintln!("amrx: type an offset in Hz and Enter to retune, u/d [HZ] to step (default 100), q to stop");
            }
            let (control, stop) = (Arc::clone(control), Arc::clone(stop));
            std::thread::spawn(move || commands(&control, &stop));
        }
        if terminal {
            let control = Arc::clone(control);
            std::thread::spawn(move || status_line(&control));
        }
    }

    /// Ends the status line.
    pub(super) fn done() {
        if RUNNING.swap(false, Ordering::SeqCst) && std::io::stderr().is_terminal() {
            eprint!("\r\x1b[K");
        }
    }

    fn commands(control: &LiveControl, stop: &AtomicBool) {
        let stdin = std::io::stdin();
        for line in stdin.lock().lines() {
            let Ok(line) = line else { return };
            let words: Vec<&str> = line.split_whitespace().collect();
            let current = control.status().offset_hz.unwrap_or(0.0);
            let step = |w: Option<&&str>| w.map_or(Some(100.0), |s| s.parse::<f64>().ok());
            let target = match words.as_slice() {
                [] => continue,
                ["q"] | ["quit"] => {
                    stop.store(true, Ordering::SeqCst);
                    return;
                }
                ["u", rest @ ..] => step(rest.first()).map(|s| current + s),
                ["d", rest @ ..] => step(rest.first()).map(|s| current - s),
                [hz] => hz.parse::<f64>().ok(),
                _ => None,
            };
            match target {
                Some(hz) if hz.is_finite() => {
                    control.retune(hz);
                    std::thread::sleep(Duration::from_millis(200));
                    if let Some(problem) = control.take_problem() {
                        eprintln!("amrx: retune to {hz} Hz refused: {problem}");
                    }
                }
                _ => eprintln!("amrx: '{line}': give an offset in Hz, u/d [HZ], or q"),
            }
        }
    }

    fn status_line(control: &LiveControl) {
        while RUNNING.load(Ordering::SeqCst) {
            std::thread::sleep(Duration::from_millis(500));
            if !RUNNING.load(Ordering::SeqCst) {
                break;
            }
            if let Some(problem) = control.take_problem() {
                eprintln!("\ramrx: retune refused: {problem}\x1b[K");
            }
            let s = control.status();
            let opt = |v: Option<f64>, unit: &str| {
                v.map_or("-".to_string(), |x| format!("{x:.1} {unit}"))
            };
            eprint!(
                "\r{:7.1} s  offset {}  audio {}  CNR {}\x1b[K",
                s.seconds,
                opt(s.offset_hz, "Hz"),
                opt(s.audio_dbfs, "dBFS"),
                opt(s.cnr_db, "dB")
            );
            let _ = std::io::stderr().flush();
        }
    }
}

fn demo(dir: PathBuf, quiet: bool) -> Result<(), String> {
    let bar = progress_bar(quiet, "demo");
    let outcome = run_demo_with_progress(&dir, &|p| show_progress(&bar, p));
    bar.finish_and_clear();
    let (recording, rows) = outcome.map_err(|e| e.to_string())?;
    let mut text = String::new();
    outln!(
        text,
        "amrx demo: invented scene written to {}",
        recording.display()
    );
    outln!(
        text,
        "{:<8} {:<4} {:>10} {:>11} {:>5} {:>9} {:>7} {:>6} {:>6} {:>6} {:>8} {:>9}  notes",
        "station",
        "mode",
        "offset Hz",
        "carrier Hz",
        "lock",
        "carr dBFS",
        "CNR dB",
        "in Hz",
        "mod+ %",
        "mod- %",
        "tone Hz",
        "SINAD dB"
    );
    for row in &rows {
        outln!(text, "{}", demo_line(row));
    }
    outln!(text, "audio and JSON reports are in {}", dir.display());
    emit(&text)
}

fn demo_line(row: &DemoRow) -> String {
    let s = &row.station;
    let head = format!(
        "{:<8} {:<4} {:>10.0}",
        s.call_sign,
        s.mode.name(),
        s.offset_hz
    );
    match &row.outcome {
        Err(why) => format!(
            "{head} {:>11} {:>5} {:>9} {:>7} {:>6} {:>6} {:>6} {:>8} {:>9}  {why}",
            "-", "-", "-", "-", "-", "-", "-", "-", "-"
        ),
        Ok(rx) => {
            let r = &rx.report;
            let opt = |v: Option<f64>, digits: usize| {
                v.map_or("-".to_string(), |x| format!("{x:.digits$}"))
            };
            let depth = r.modulation_depth;
            format!(
                "{head} {:>11} {:>5} {:>9} {:>7} {:>6} {:>6} {:>6} {:>8} {:>9}  {}",
                opt(r.carrier_offset_hz, 1),
                r.locked.map_or("-", |l| if l { "yes" } else { "no" }),
                opt(r.carrier_dbfs, 1),
                opt(r.cnr_db, 1),
                opt(r.cnr_bandwidth_hz, 0),
                opt(depth.map(|d| 100.0 * d.positive), 0),
                opt(depth.map(|d| 100.0 * d.negative), 0),
                opt(rx.tone_hz, 1),
                opt(rx.sinad_db, 1),
                r.warnings.join("; ")
            )
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The arguments each command cannot go without.
    fn required(command: &str) -> Vec<&'static str> {
        match command {
            "demod" => vec!["demod", "in.cu8", "--mode", "am", "--out", "a.wav"],
            "measure" => vec!["measure", "in.cu8", "--offset", "0"],
            "info" => vec!["info", "in.cu8"],
            "synth" => vec!["synth", "scene.json", "--out", "x"],
            other => vec![Box::leak(other.to_string().into_boxed_str())],
        }
    }

    #[test]
    fn every_option_takes_a_negative_number_after_a_space() {
        // `--step -2` must reach the option (and its own validation), never be read as an
        // unknown flag `-2`: checked for every option of every command that takes a value.
        let cli = Cli::command();
        let mut checked = 0;
        for sub in cli.get_subcommands() {
            for arg in sub.get_arguments() {
                let Some(long) = arg.get_long() else { continue };
                if !arg.get_action().takes_values() {
                    continue;
                }
                let mut argv = vec!["amrx".to_string()];
                argv.extend(required(sub.get_name()).iter().map(|a| a.to_string()));
                argv.push(format!("--{long}"));
                argv.push("-2".to_string());
                if let Err(e) = Cli::try_parse_from(&argv) {
                    assert_ne!(
                        e.kind(),
                        clap::error::ErrorKind::UnknownArgument,
                        "{argv:?}: {e}"
                    );
                }
                checked += 1;
            }
        }
        assert!(checked > 30, "{checked}");
        // A channel plan starting below the centre.
        let plan = ["amrx", "watch", "x.wav", "--mode", "am", "--out-dir", "d"];
        let mut argv = plan.to_vec();
        argv.extend(["--offsets", "-180000:25000:20"]);
        assert!(Cli::try_parse_from(&argv).is_ok());
    }

    #[test]
    fn help_works_however_it_is_asked() {
        for argv in [
            vec!["amrx", "--help"],
            vec!["amrx", "help", "--help"],
            vec!["amrx", "demod", "--help"],
        ] {
            let e = Cli::try_parse_from(&argv).unwrap_err();
            assert_eq!(e.kind(), clap::error::ErrorKind::DisplayHelp, "{argv:?}");
        }
        assert!(matches!(
            Cli::try_parse_from(["amrx", "help", "demod"]).unwrap().command,
            Command::Help { command: Some(ref c) } if c == "demod"
        ));
        assert!(help(Some("nosuch")).unwrap_err().contains("demod, measure"));
    }

    #[test]
    fn counts_read_in_millions_with_a_sensible_precision() {
        assert_eq!(mega(52_000.0), "0.052");
        assert_eq!(mega(5_393_500.817_8), "5.39");
        assert_eq!(mega(72_000_000.0), "72.0");
        assert_eq!(mega(1.44e9), "1440");
        assert_eq!(mega(f64::NAN), "-");
    }

    #[test]
    fn the_progress_templates_parse_and_a_total_turns_the_counter_into_a_bar() {
        for template in [BAR_TEMPLATE, COUNT_TEMPLATE, SWEEP_TEMPLATE] {
            assert!(ProgressStyle::with_template(template).is_ok(), "{template}");
        }
        let bar = ProgressBar::hidden();
        show_progress(
            &bar,
            Progress {
                done: 5,
                total: None,
            },
        );
        assert_eq!(bar.length(), None);
        show_progress(
            &bar,
            Progress {
                done: 6,
                total: Some(10),
            },
        );
        assert_eq!((bar.position(), bar.length()), (6, Some(10)));
    }
}

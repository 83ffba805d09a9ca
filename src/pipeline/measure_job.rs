//! The measure job: a full-carrier receiver over (part of) a recording, its measurement
//! windows turned into events and a verdict ([`Timeline`]).

use super::job::{resolve_offset, Tuning};
use super::progress::Progress;
use crate::demod::{build_receiver, Mode, ReceiverConfig, ReceiverOptions};
use crate::io::{open_input, InputOptions};
use crate::measure::carrier_meter::DEFAULT_WINDOW_S;
use crate::measure::{Limits, Timeline};
use crate::{Complex32, Error, Result};
use std::path::{Path, PathBuf};

/// Samples read per step.
const READ_LEN: usize = 1 << 15;

/// Everything a `measure` run needs.
#[derive(Debug, Clone, PartialEq)]
pub struct MeasureRequest {
    /// The IQ input (`-` for standard input).
    pub input: PathBuf,
    /// Format, rate and channel options for the input.
    pub input_options: InputOptions,
    /// Tuning.
    pub tuning: Tuning,
    /// Message bandwidth in Hz (the am mode's default when `None`).
    pub bandwidth_hz: Option<f64>,
    /// Window length in seconds.
    pub window_s: f64,
    /// Peak limits, as fractions.
    pub limits: Limits,
    /// Seconds of input to skip first.
    pub start_s: f64,
    /// Seconds to measure (to the end when `None`).
    pub duration_s: Option<f64>,
}

impl MeasureRequest {
    /// A request with the default window, no limits, the whole input.
    pub fn new(input: impl Into<PathBuf>, tuning: Tuning) -> Self {
        MeasureRequest {
            input: input.into(),
            input_options: InputOptions::default(),
            tuning,
            bandwidth_hz: None,
            window_s: DEFAULT_WINDOW_S,
            limits: Limits::default(),
            start_s: 0.0,
            duration_s: None,
        }
    }
}

/// What a measure run found.
#[derive(Debug, Clone, PartialEq)]
pub struct MeasureOutcome {
    /// Windows, events and summary.
    pub timeline: Timeline,
    /// Things the user should know (from the input and the measurement stage).
    pub warnings: Vec<String>,
    /// The tuned offset from the recording centre, Hz.
    pub offset_hz: f64,
}

fn seconds(name: &'static str, v: f64) -> Result<f64> {
    if v.is_finite() && v >= 0.0 {
        Ok(v)
    } else {
        Err(Error::parameter(name, v, "must be a time of 0 s or more"))
    }
}

fn limit(name: &'static str, v: Option<f64>) -> Result<()> {
    match v {
        Some(x) if !(x.is_finite() && x > 0.0 && x <= 10.0) => Err(Error::parameter(
            name,
            format!("{}", 100.0 * x),
            "must be a percentage above 0 and at most 1000",
        )),
        _ => Ok(()),
    }
}

/// Refuses outputs that would overwrite the input (the path given, or either SigMF file),
/// before any work starts.
pub fn check_outputs(input: &Path, outputs: &[&Path]) -> Result<()> {
    let inputs = super::job::input_files(input, input);
    let inputs: Vec<&Path> = inputs.iter().map(PathBuf::as_path).collect();
    for output in outputs {
        crate::io::check_not_input(output, &inputs)?;
    }
    Ok(())
}

/// Runs the request: an envelope (am) receiver measures every window; `progress` gets the
/// samples read so far (and the total, when known).
pub fn run_measure(
    request: &MeasureRequest,
    progress: &dyn Fn(Progress),
) -> Result<MeasureOutcome> {
    let start_s = seconds("start_s", request.start_s)?;
    limit("limit_positive", request.limits.positive)?;
    limit("limit_negative", request.limits.negative)?;
    let mut input_options = request.input_options.clone();
    input_options.stream.start_s = start_s;
    input_options.stream.duration_s = request.duration_s;
    let mut source = open_input(&request.input, &input_options)?;
    let offset_hz = resolve_offset(request.tuning, source.as_ref())?;
    let config = ReceiverConfig {
        input_rate: source.info().sample_rate,
        offset_hz,
        options: ReceiverOptions {
            bandwidth_hz: request.bandwidth_hz,
            ..ReceiverOptions::default()
        },
    };
    let mut receiver = build_receiver(Mode::Am, &config)?;
    receiver.set_meter_window(request.window_s)?;
    receiver.record_windows(true);
    let mut buf = vec![Complex32::default(); READ_LEN];
    let mut read = 0u64;
    let mut audio = vec![0.0f32; receiver.max_output_len(READ_LEN)];
    loop {
        let n = source.read(&mut buf)?;
        if n == 0 {
            break;
        }
        read += n as u64;
        progress(Progress {
            done: read,
            total: source.info().total_samples,
        });
        let mut at = 0;
        while at < n {
            let (c, _) = receiver.process(&buf[at..n], &mut audio);
            at += c;
            if c == 0 {
                break;
            }
        }
    }
    let mut tail = vec![0.0f32; receiver.flush_output_len()];
    receiver.flush(&mut tail);
    let measured = receiver.measurements();
    let meter_summary = receiver.meter_summary().ok_or_else(|| {
        Error::parameter("mode", "am", "has no measurement stage (cannot happen)")
    })?;
    let mut windows = receiver.take_windows();
    for w in &mut windows {
        w.start_s += start_s;
    }
    let timeline = Timeline::new(windows, &meter_summary, request.limits);
    let mut warnings = source.warnings();
    warnings.extend(measured.warnings);
    if timeline.summary.carrier_present_s == 0.0 && timeline.windows.is_empty() {
        warnings.push("no complete sample of the input was measured".to_string());
    }
    Ok(MeasureOutcome {
        timeline,
        warnings,
        offset_hz,
    })
}

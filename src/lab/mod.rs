//! The noise-performance lab: benchmarks detectors' output SNR against the textbook theory.
//!
//! A [`SweepSpec`] lists detectors (any mode's receiver from
//! [`build_receiver`](crate::demod::build_receiver), or the diode-and-RC model), input points on
//! a channel-SNR or CNR [`Axis`], trials per point and the trial settings; `run_sweep` runs
//! every trial in parallel and averages per point; [`write_csv`] and `write_png` save the
//! result, and [`Curve::threshold`] and [`Curve::slope`] analyse it.
//! `run_sweep` (rayon) and `write_png` (plotters) need the `lab` feature; the rest of the lab
//! (detectors, single trials, theory, CSV) is in the core.
//!
//! A sweep may pass its test signal through a [`ChannelCondition`] (Watterson fading,
//! impulses) besides the white noise; its trials can be split into [`Shard`]s run apart and
//! merged ([`shard`]) with a result identical to one run.
//!
//! Convention (Haykin, Communication Systems, ch. 2, at complex baseband): message bandwidth W;
//! complex white noise of two-sided density N0 (E|w|² = N0·fs); channel SNR = mean|s|²/(N0·W);
//! output SNR = tone power over the noise in (0, W] after detection, DC removed; figure of
//! merit = output/channel SNR; CNR ρ = A_c²/(N0·2W), so for tone AM ρ = SNR/(2+μ²).
//! See `docs/noise-lab.md` for the measured results.

pub mod channel;
pub mod csv;
pub mod detector;
pub mod diode_receiver;
#[cfg(feature = "lab")]
pub mod measure_plot;
#[cfg(feature = "lab")]
pub mod plot;
pub mod rc_study;
pub mod sensitivity;
#[cfg(feature = "lab")]
pub mod sensitivity_plot;
pub mod shard;
pub mod signal;
pub mod speech;
pub mod stoi;
pub mod summary;
pub mod sweep;
pub mod theory;
pub mod trial;

pub use channel::{ChannelCondition, Impulses};
pub use csv::{to_csv, write_csv, CSV_HEADER};
pub use detector::{parse_detectors, Detector};
pub use diode_receiver::DiodeReceiver;
#[cfg(feature = "lab")]
pub use measure_plot::write_measure_png;
#[cfg(feature = "lab")]
pub use plot::write_png;
pub use rc_study::{measure_rc, RcMeasurement};
pub use sensitivity::{
    check_noise_figure, sensitivities, sensitivity_lines, Criterion, Sensitivity,
};
#[cfg(feature = "lab")]
pub use sensitivity_plot::write_sensitivity_png;
pub use shard::{merge_trial_files, merge_trial_texts, trials_to_text, write_trials};
pub use signal::{TestSignal, ToneSource};
pub use summary::summary_lines;
pub use sweep::{
    assemble, student_t_975, Axis, Curve, PairedDifference, Progress, Shard, SweepPoint,
    SweepResult, SweepSpec, Threshold,
};
#[cfg(feature = "lab")]
pub use sweep::{run_shard, run_sweep};
pub use trial::{
    run_trial, run_trial_in_channel, tracking_sinad_db, trial_seed, TrialSettings, SIGNAL_POWER,
    TRACKING_BLOCK_S,
};

use std::path::{Path, PathBuf};

/// `dir/.name.tmp` beside `path`: written first, renamed over `path` on success.
fn temp_path(path: &Path) -> PathBuf {
    let name = path
        .file_name()
        .map_or_else(|| "out".into(), |n| n.to_string_lossy().into_owned());
    path.with_file_name(format!(".{name}.tmp"))
}

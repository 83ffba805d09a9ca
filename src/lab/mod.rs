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
//! Convention (Haykin, Communication Systems, ch. 2, at complex baseband): message bandwidth W;
//! complex white noise of two-sided density N0 (E|w|² = N0·fs); channel SNR = mean|s|²/(N0·W);
//! output SNR = tone power over the noise in (0, W] after detection, DC removed; figure of
//! merit = output/channel SNR; CNR ρ = A_c²/(N0·2W), so for tone AM ρ = SNR/(2+μ²).
//! See `docs/noise-lab.md` for the measured results.

pub mod csv;
pub mod detector;
pub mod diode_receiver;
#[cfg(feature = "lab")]
pub mod measure_plot;
#[cfg(feature = "lab")]
pub mod plot;
pub mod rc_study;
pub mod signal;
pub mod summary;
pub mod sweep;
pub mod theory;
pub mod trial;

pub use csv::{to_csv, write_csv, CSV_HEADER};
pub use detector::{parse_detectors, Detector};
pub use diode_receiver::DiodeReceiver;
#[cfg(feature = "lab")]
pub use measure_plot::write_measure_png;
#[cfg(feature = "lab")]
pub use plot::write_png;
pub use rc_study::{measure_rc, RcMeasurement};
pub use signal::{TestSignal, ToneSource};
pub use summary::summary_lines;
#[cfg(feature = "lab")]
pub use sweep::run_sweep;
pub use sweep::{Axis, Curve, Progress, SweepPoint, SweepResult, SweepSpec, Threshold};
pub use trial::{run_trial, trial_seed, TrialSettings, SIGNAL_POWER};

use std::path::{Path, PathBuf};

/// `dir/.name.tmp` beside `path`: written first, renamed over `path` on success.
fn temp_path(path: &Path) -> PathBuf {
    let name = path
        .file_name()
        .map_or_else(|| "out".into(), |n| n.to_string_lossy().into_owned());
    path.with_file_name(format!(".{name}.tmp"))
}

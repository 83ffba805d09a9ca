//! The streaming runtime and the receive jobs behind the command line.

pub mod demo;
pub mod info;
pub mod job;
pub mod live;
pub mod measure_job;
pub mod progress;
pub mod report;
pub mod runtime;
pub mod split;
pub mod synth_job;

pub use job::{
    run_demod, run_demod_live, run_demod_until, AudioTarget, DemodRequest, Tuning,
    INTERRUPTED_WARNING,
};
pub use live::{LiveControl, LiveStatus, BUILD_WITH_SOUND};
pub use measure_job::{check_outputs, run_measure, MeasureOutcome, MeasureRequest};
pub use progress::Progress;
pub use report::Report;
pub use runtime::{run_stream, RunTotals, RuntimeConfig};

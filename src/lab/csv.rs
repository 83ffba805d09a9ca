//! The sweep as CSV: one row per detector and input point.

use super::sweep::SweepResult;
use crate::{Error, Result};
use std::fmt::Write as _;
use std::path::Path;

/// The header row.
pub const CSV_HEADER: &str =
    "detector,axis,input_db,channel_snr_db,cnr_db,output_snr_db,theory_db,trials,stderr_db,channel";

/// The sweep as CSV text: columns as in [`CSV_HEADER`], dB to 3 decimals, `cnr_db` empty
/// without a carrier and `stderr_db` empty for a single trial; `channel` names the fading and
/// impulses besides the white noise (`none`). `output_snr_db` is the mean
/// over the trials of the linear output SNR, in dB; `stderr_db` is its standard error.
pub fn to_csv(result: &SweepResult) -> String {
    let mut out = String::from(CSV_HEADER);
    out.push('\n');
    let optional = |v: Option<f64>| {
        v.filter(|v| v.is_finite())
            .map_or(String::new(), |v| format!("{v:.3}"))
    };
    for curve in &result.curves {
        for p in &curve.points {
            // Writing to a String cannot fail.
            let _ = writeln!(
                out,
                "{},{},{:.3},{:.3},{},{:.3},{:.3},{},{},{}",
                curve.detector.name(),
                result.spec.axis.name(),
                p.input_db,
                p.channel_snr_db,
                optional(p.cnr_db),
                p.output_snr_db,
                p.theory_db,
                p.trials,
                optional(Some(p.stderr_db)),
                result.spec.trial.channel,
            );
        }
    }
    out
}

/// Writes [`to_csv`] to `path` (through a temporary file renamed on success).
pub fn write_csv(result: &SweepResult, path: &Path) -> Result<()> {
    let temp = super::temp_path(path);
    std::fs::write(&temp, to_csv(result)).map_err(|e| Error::io(&temp, e))?;
    // Renamed over a regular file; copied into a device node, FIFO or symlink target.
    crate::io::output::put_in_place(&temp, path)
}

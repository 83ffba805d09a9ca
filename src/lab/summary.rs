//! A short text summary of a sweep: thresholds and slopes per detector.

use super::sweep::SweepResult;

/// The span of channel SNR (dB) where the envelope detector's square-law slope is read, for
/// μ = 0.5 (Haykin, Communication Systems, ch. 2: well below threshold, ~2 dB/dB).
pub const SQUARE_LAW_SPAN_DB: (f64, f64) = (-12.0, -6.0);

/// How far above the measurement floor a slope's points must read (common practice, no source).
const FLOOR_MARGIN_DB: f64 = 10.0;

/// One line per finding: where each detector falls 1 dB and 3 dB below its theory, and its
/// slopes below and above threshold, where the sweep covers them.
pub fn summary_lines(result: &SweepResult) -> Vec<String> {
    let mut lines = Vec::new();
    for curve in &result.curves {
        lines.push(format!("{}:", curve.detector.label()));
        for loss in [1.0, 3.0] {
            lines.push(match curve.threshold(loss) {
                Some(t) => format!(
                    "  {loss} dB below theory at channel SNR {:.2} dB{}",
                    t.channel_snr_db,
                    t.cnr_db
                        .map_or(String::new(), |c| format!(" (CNR {c:.2} dB)"))
                ),
                None => format!("  never {loss} dB below theory in the swept range"),
            });
        }
        let (low, high) = SQUARE_LAW_SPAN_DB;
        let floor = result.measurement_floor_db();
        match curve.slope(low, high) {
            Some(s) if curve.clear_of(floor, FLOOR_MARGIN_DB, low, high) => {
                lines.push(format!("  slope over channel SNR {low}…{high} dB: {s:.2} dB/dB"))
            }
            Some(_) => lines.push(format!(
                "  slope over channel SNR {low}…{high} dB not read: within {FLOOR_MARGIN_DB} dB of the measurement floor ({floor:.1} dB); use longer trials or a wider --bandwidth"
            )),
            None => {}
        }
        if let Some(s) = curve.slope(20.0, 30.0) {
            lines.push(format!("  slope over channel SNR 20…30 dB: {s:.2} dB/dB"));
        }
    }
    lines
}

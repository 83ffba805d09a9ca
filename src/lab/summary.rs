//! A short text summary of a sweep: thresholds and slopes per detector.

use super::sweep::SweepResult;

/// The span of channel SNR (dB) where the envelope detector's square-law slope is read, for
/// μ = 0.5 (Haykin, Communication Systems, ch. 2: well below threshold, ~2 dB/dB).
pub const SQUARE_LAW_SPAN_DB: (f64, f64) = (-12.0, -6.0);

/// How far above the measurement floor a slope's points must read (common practice, no source).
const FLOOR_MARGIN_DB: f64 = 10.0;

/// What the points show when no crossing of `loss` dB was found: every point beyond it, every
/// point within it, or a crossing only at the top of the range.
fn loss_statement(curve: &super::sweep::Curve, loss: f64) -> String {
    let losses: Vec<f64> = curve.points.iter().map(|p| p.loss_db()).collect();
    let (least, most) = losses
        .iter()
        .fold((f64::MAX, f64::MIN), |(a, b), &l| (a.min(l), b.max(l)));
    if losses.is_empty() {
        "  no points".to_string()
    } else if least >= loss {
        format!(
            "  at least {loss} dB below theory at every point of the swept range ({least:.1} to {most:.1} dB below)"
        )
    } else if most < loss {
        format!(
            "  never {loss} dB below theory in the swept range (at most {:.1} dB below)",
            most.max(0.0)
        )
    } else {
        format!(
            "  {loss} dB below theory at the top of the swept range already, not below it throughout ({least:.1} to {most:.1} dB below)"
        )
    }
}

/// The channel SNRs actually measured within [from_db, to_db], in words: "20.0…22.0 dB
/// (2 points)"; `None` with fewer than two points there.
fn measured_span(curve: &super::sweep::Curve, from_db: f64, to_db: f64) -> Option<String> {
    let inside: Vec<f64> = curve
        .points
        .iter()
        .map(|p| p.channel_snr_db)
        .filter(|x| (from_db..=to_db).contains(x))
        .collect();
    let low = inside.iter().copied().fold(f64::INFINITY, f64::min);
    let high = inside.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    (inside.len() >= 2).then(|| format!("{low:.1}…{high:.1} dB ({} points)", inside.len()))
}

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
                None => loss_statement(curve, loss),
            });
        }
        let (low, high) = SQUARE_LAW_SPAN_DB;
        let floor = result.measurement_floor_db();
        match (curve.slope(low, high), measured_span(curve, low, high)) {
            (Some(s), Some(span)) if curve.clear_of(floor, FLOOR_MARGIN_DB, low, high) => {
                lines.push(format!("  slope over channel SNR {span}: {s:.2} dB/dB"))
            }
            (Some(_), Some(span)) => lines.push(format!(
                "  slope over channel SNR {span} not read: within {FLOOR_MARGIN_DB} dB of the measurement floor ({floor:.1} dB); use longer trials or a wider --bandwidth"
            )),
            _ => {}
        }
        if let (Some(s), Some(span)) = (curve.slope(20.0, 30.0), measured_span(curve, 20.0, 30.0)) {
            lines.push(format!("  slope over channel SNR {span}: {s:.2} dB/dB"));
        }
    }
    lines
}

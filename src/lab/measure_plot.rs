//! The `measure` chart: modulation peaks over time with the limit lines and events above,
//! carrier level below. Written for a reader who is not a specialist: positive peaks plotted
//! upwards, negative peaks downwards, limits as labelled dashed lines, trouble shaded.

use super::plot::register_font;
use crate::measure::{EventKind, Limits, Timeline};
use crate::{Error, Result};
use plotters::prelude::*;
use std::path::Path;

const POSITIVE: RGBColor = RGBColor(31, 119, 180);
const NEGATIVE: RGBColor = RGBColor(255, 127, 14);
const LIMIT: RGBColor = RGBColor(200, 30, 30);
const TROUBLE: RGBColor = RGBColor(255, 200, 200);
const NO_CARRIER: RGBColor = RGBColor(220, 220, 220);
const LEVEL: RGBColor = RGBColor(44, 140, 44);

/// Writes the chart (PNG, 1200 × 800) through a temporary file renamed on success.
pub fn write_measure_png(
    timeline: &Timeline,
    limits: Limits,
    title: &str,
    path: &Path,
) -> Result<()> {
    register_font()?;
    let temp = super::temp_path(path).with_extension("tmp.png");
    draw(timeline, limits, title, &temp).map_err(|e| {
        let _ = std::fs::remove_file(&temp);
        Error::file(path, format!("cannot draw the chart: {e}"))
    })?;
    std::fs::rename(&temp, path).map_err(|e| Error::io(path, e))
}

type DrawResult = std::result::Result<(), Box<dyn std::error::Error>>;

/// Consecutive windows where `f` holds, as (start, end) spans in seconds.
fn spans(
    timeline: &Timeline,
    f: impl Fn(&crate::measure::WindowReading) -> bool,
) -> Vec<(f64, f64)> {
    let mut out: Vec<(f64, f64)> = Vec::new();
    for w in timeline.windows.iter().filter(|w| f(w)) {
        match out.last_mut() {
            Some(last) if (w.start_s - last.1).abs() < 1e-6 => last.1 = w.start_s + w.duration_s,
            _ => out.push((w.start_s, w.start_s + w.duration_s)),
        }
    }
    out
}

fn draw(timeline: &Timeline, limits: Limits, title: &str, path: &Path) -> DrawResult {
    let w = &timeline.windows;
    let t0 = w.first().map_or(0.0, |w| w.start_s);
    let t1 = w
        .last()
        .map_or(1.0, |w| w.start_s + w.duration_s)
        .max(t0 + 1e-3);
    let root = BitMapBackend::new(path, (1200, 800)).into_drawing_area();
    root.fill(&WHITE)?;
    let root = root.titled(title, ("sans-serif", 24))?;
    let (top, bottom) = root.split_vertically(500);
    let peak = |v: Option<f64>| v.unwrap_or(0.0) * 100.0;
    let highest = w
        .iter()
        .map(|w| peak(w.positive).max(peak(w.negative)))
        .chain(
            [limits.positive, limits.negative]
                .into_iter()
                .flatten()
                .map(|l| 100.0 * l),
        )
        .fold(100.0, f64::max);
    let y = (highest * 1.15 / 25.0).ceil() * 25.0;
    let mut chart = ChartBuilder::on(&top)
        .margin(12)
        .x_label_area_size(40)
        .y_label_area_size(70)
        .build_cartesian_2d(t0..t1, -y..y)?;
    chart
        .configure_mesh()
        .x_desc("time [s]")
        .y_desc("modulation peaks [%]  (positive up, negative down)")
        .y_label_formatter(&|v| format!("{v:.0}"))
        .label_style(("sans-serif", 15))
        .axis_desc_style(("sans-serif", 16))
        .draw()?;
    // Shading: no carrier (grey), limits exceeded or overmodulation (pink).
    for (a, b) in spans(timeline, |w| !w.carrier_present) {
        chart.draw_series([Rectangle::new([(a, -y), (b, y)], NO_CARRIER.filled())])?;
    }
    for e in timeline.events.iter().filter(|e| {
        matches!(
            e.kind,
            EventKind::Overmodulation | EventKind::PositiveLimit | EventKind::NegativeLimit
        )
    }) {
        chart.draw_series([Rectangle::new(
            [(e.start_s, -y), (e.end_s, y)],
            TROUBLE.filled(),
        )])?;
    }
    chart
        .draw_series([Rectangle::new([(t0, -y), (t0, -y)], NO_CARRIER.filled())])?
        .label("no carrier (grey)")
        .legend(|(x, yy)| Rectangle::new([(x, yy - 6), (x + 20, yy + 6)], NO_CARRIER.filled()));
    chart
        .draw_series([Rectangle::new([(t0, -y), (t0, -y)], TROUBLE.filled())])?
        .label("over a limit or overmodulated (pink)")
        .legend(|(x, yy)| Rectangle::new([(x, yy - 6), (x + 20, yy + 6)], TROUBLE.filled()));
    chart.draw_series(LineSeries::new(
        [(t0, 0.0), (t1, 0.0)],
        BLACK.stroke_width(1),
    ))?;
    for (value, sign, name) in [
        (limits.positive, 1.0, "positive limit"),
        (limits.negative, -1.0, "negative limit"),
    ] {
        if let Some(l) = value {
            let level = sign * 100.0 * l;
            chart.draw_series(DashedLineSeries::new(
                [(t0, level), (t1, level)],
                8,
                5,
                LIMIT.stroke_width(2),
            ))?;
            chart.draw_series([Text::new(
                format!("{name} {:.0} %", 100.0 * l),
                (t0 + 0.01 * (t1 - t0), level + sign * 0.03 * y),
                ("sans-serif", 15).into_font().color(&LIMIT),
            )])?;
        }
    }
    let series = |sign: f64, pick: fn(&crate::measure::WindowReading) -> Option<f64>| {
        let mut lines: Vec<Vec<(f64, f64)>> = vec![Vec::new()];
        for win in w {
            match pick(win) {
                Some(v) => lines
                    .last_mut()
                    .expect("one line at least")
                    .push((win.start_s + 0.5 * win.duration_s, sign * 100.0 * v)),
                None => lines.push(Vec::new()),
            }
        }
        lines.retain(|l| !l.is_empty());
        lines
    };
    for (k, line) in series(1.0, |w| w.positive).into_iter().enumerate() {
        let s = chart.draw_series(LineSeries::new(line, POSITIVE.stroke_width(2)))?;
        if k == 0 {
            s.label("positive peak").legend(|(x, yy)| {
                PathElement::new([(x, yy), (x + 20, yy)], POSITIVE.stroke_width(2))
            });
        }
    }
    for (k, line) in series(-1.0, |w| w.negative).into_iter().enumerate() {
        let s = chart.draw_series(LineSeries::new(line, NEGATIVE.stroke_width(2)))?;
        if k == 0 {
            s.label("negative peak").legend(|(x, yy)| {
                PathElement::new([(x, yy), (x + 20, yy)], NEGATIVE.stroke_width(2))
            });
        }
    }
    chart
        .configure_series_labels()
        .position(SeriesLabelPosition::LowerRight)
        .background_style(WHITE.mix(0.85))
        .border_style(BLACK)
        .label_font(("sans-serif", 14))
        .draw()?;

    let levels: Vec<f64> = w.iter().filter_map(|w| w.carrier_dbfs).collect();
    let (lo, hi) = levels
        .iter()
        .fold((f64::MAX, f64::MIN), |(a, b), &v| (a.min(v), b.max(v)));
    let (lo, hi) = if levels.is_empty() {
        (-100.0, 0.0)
    } else {
        ((lo - 5.0).floor(), (hi + 5.0).ceil())
    };
    let mut level_chart = ChartBuilder::on(&bottom)
        .margin(12)
        .x_label_area_size(40)
        .y_label_area_size(70)
        .build_cartesian_2d(t0..t1, lo..hi)?;
    level_chart
        .configure_mesh()
        .x_desc("time [s]")
        .y_desc("carrier level [dBFS]")
        .label_style(("sans-serif", 15))
        .axis_desc_style(("sans-serif", 16))
        .draw()?;
    for (a, b) in spans(timeline, |w| !w.carrier_present) {
        level_chart.draw_series([Rectangle::new([(a, lo), (b, hi)], NO_CARRIER.filled())])?;
    }
    let mut runs: Vec<Vec<(f64, f64)>> = vec![Vec::new()];
    for win in w {
        match win.carrier_dbfs {
            Some(v) => runs
                .last_mut()
                .expect("one run at least")
                .push((win.start_s + 0.5 * win.duration_s, v)),
            None => runs.push(Vec::new()),
        }
    }
    for (k, run) in runs.into_iter().filter(|r| !r.is_empty()).enumerate() {
        let s = level_chart.draw_series(LineSeries::new(run, LEVEL.stroke_width(2)))?;
        if k == 0 {
            s.label(format!(
                "carrier level (CNR {} in {:.0} Hz)",
                timeline
                    .summary
                    .cnr_db
                    .map_or("-".to_string(), |c| format!("{c:.1} dB")),
                timeline.summary.cnr_bandwidth_hz
            ))
            .legend(|(x, yy)| PathElement::new([(x, yy), (x + 20, yy)], LEVEL.stroke_width(2)));
        }
    }
    level_chart
        .configure_series_labels()
        .position(SeriesLabelPosition::LowerRight)
        .background_style(WHITE.mix(0.85))
        .border_style(BLACK)
        .label_font(("sans-serif", 14))
        .draw()?;
    root.present()?;
    Ok(())
}

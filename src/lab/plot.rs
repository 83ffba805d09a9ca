//! The sweep as a PNG chart: output SNR against the input, measured curves with the
//! theoretical lines overlaid.

use super::sweep::{Axis, SweepResult};
use super::theory::{channel_snr_over_cnr_db, db, envelope_threshold_cnr_db};
use crate::{Error, Result};
use plotters::prelude::*;
use plotters::style::FontStyle;
use std::path::Path;
use std::sync::OnceLock;

/// The vendored DejaVu Sans (Bitstream Vera licence, beside it in assets/fonts).
static FONT: &[u8] = include_bytes!("../../assets/fonts/DejaVuSans.ttf");

/// Registers the font once for the whole process.
pub(crate) fn register_font() -> Result<()> {
    static REGISTERED: OnceLock<bool> = OnceLock::new();
    let ok = *REGISTERED.get_or_init(|| {
        plotters::style::register_font("sans-serif", FontStyle::Normal, FONT).is_ok()
    });
    if ok {
        Ok(())
    } else {
        Err(Error::parameter(
            "plot font",
            "DejaVuSans.ttf",
            "could not be loaded",
        ))
    }
}

const COLOURS: [RGBColor; 6] = [
    RGBColor(31, 119, 180),
    RGBColor(214, 39, 40),
    RGBColor(44, 160, 44),
    RGBColor(148, 103, 189),
    RGBColor(255, 127, 14),
    RGBColor(23, 190, 207),
];

/// Writes the chart of `result` to `path` (PNG, 1000 × 700), through a temporary file renamed
/// on success so that a failed plot leaves no blank image behind.
pub fn write_png(result: &SweepResult, path: &Path) -> Result<()> {
    register_font()?;
    let temp = super::temp_path(path).with_extension("tmp.png");
    draw(result, &temp).map_err(|e| {
        let _ = std::fs::remove_file(&temp);
        Error::file(path, format!("cannot draw the chart: {e}"))
    })?;
    // Renamed over a regular file; copied into a device node, FIFO or symlink target.
    crate::io::output::put_in_place(&temp, path)
}

type DrawResult = std::result::Result<(), Box<dyn std::error::Error>>;

fn draw(result: &SweepResult, path: &Path) -> DrawResult {
    let spec = &result.spec;
    let mu = spec.trial.mu;
    let xs = || spec.input_db.iter().copied();
    let (x0, x1) = xs().fold((f64::MAX, f64::MIN), |(a, b), x| (a.min(x), b.max(x)));
    let (x0, x1) = if x1 > x0 {
        (x0, x1)
    } else {
        (x0 - 1.0, x0 + 1.0)
    };
    let ys = result
        .curves
        .iter()
        .flat_map(|c| c.points.iter().flat_map(|p| [p.output_snr_db, p.theory_db]));
    let (y0, y1) = ys.fold((f64::MAX, f64::MIN), |(a, b), y| (a.min(y), b.max(y)));
    let root = BitMapBackend::new(path, (1000, 700)).into_drawing_area();
    root.fill(&WHITE)?;
    let (axis_name, offset) = match spec.axis {
        Axis::Snr => ("channel SNR  mean|s|²/(N0·W)  [dB]", 0.0),
        Axis::Cnr => ("CNR  ρ = A_c²/(N0·2W)  [dB]", channel_snr_over_cnr_db(mu)),
    };
    let mut chart = ChartBuilder::on(&root)
        .caption(
            format!(
                "Output SNR vs input: tone {} Hz, W = {} Hz, μ = {mu}, {} trials × {} s",
                spec.trial.tone_hz, spec.trial.bandwidth_hz, spec.trials, spec.trial.seconds
            ),
            ("sans-serif", 22),
        )
        .margin(15)
        .x_label_area_size(45)
        .y_label_area_size(60)
        .build_cartesian_2d(x0..x1, (y0 - 3.0).floor()..(y1 + 3.0).ceil())?;
    chart
        .configure_mesh()
        .x_desc(axis_name)
        .y_desc("output SNR in (0, W]  [dB]")
        .label_style(("sans-serif", 15))
        .axis_desc_style(("sans-serif", 17))
        .draw()?;
    draw_theory(&mut chart, result, (x0, x1), offset)?;
    for (i, curve) in result.curves.iter().enumerate() {
        let colour = COLOURS[i % COLOURS.len()];
        let pts: Vec<(f64, f64)> = curve
            .points
            .iter()
            .map(|p| (p.input_db, p.output_snr_db))
            .collect();
        chart
            .draw_series(LineSeries::new(pts.clone(), colour.stroke_width(2)))?
            .label(format!("{} measured", curve.detector.label()))
            .legend(move |(x, y)| PathElement::new([(x, y), (x + 20, y)], colour.stroke_width(2)));
        chart.draw_series(pts.into_iter().map(|p| Circle::new(p, 3, colour.filled())))?;
    }
    let has_carrier = result.curves.iter().any(|c| c.detector.has_carrier());
    let threshold = envelope_threshold_cnr_db()
        + if spec.axis == Axis::Snr {
            channel_snr_over_cnr_db(mu)
        } else {
            0.0
        };
    if has_carrier && (x0..=x1).contains(&threshold) {
        let grey = RGBColor(120, 120, 120);
        chart
            .draw_series(DashedLineSeries::new(
                [(threshold, y0 - 3.0), (threshold, y1 + 3.0)],
                4,
                4,
                grey.stroke_width(1),
            ))?
            .label("1 % rule threshold, ρ = ln 100 (6.6 dB)")
            .legend(move |(x, y)| PathElement::new([(x, y), (x + 20, y)], grey.stroke_width(1)));
    }
    // The tone estimate over-reads by the noise falling on it, P_n/(W·T): a floor for the
    // measured output SNR.
    let floor = -db(spec.trial.bandwidth_hz * spec.trial.seconds);
    if floor > y0 - 3.0 {
        let grey = RGBColor(170, 170, 170);
        chart
            .draw_series(DashedLineSeries::new(
                [(x0, floor), (x1, floor)],
                2,
                4,
                grey.stroke_width(1),
            ))?
            .label("measurement floor −10·log10(W·T)")
            .legend(move |(x, y)| PathElement::new([(x, y), (x + 20, y)], grey.stroke_width(1)));
    }
    chart
        .configure_series_labels()
        .position(SeriesLabelPosition::UpperLeft)
        .background_style(WHITE.mix(0.85))
        .border_style(BLACK)
        .label_font(("sans-serif", 15))
        .draw()?;
    root.present()?;
    Ok(())
}

type Chart<'a> = ChartContext<
    'a,
    BitMapBackend<'a>,
    Cartesian2d<plotters::coord::types::RangedCoordf64, plotters::coord::types::RangedCoordf64>,
>;

/// One dashed line per distinct figure of merit among the detectors.
fn draw_theory(
    chart: &mut Chart<'_>,
    result: &SweepResult,
    (x0, x1): (f64, f64),
    offset: f64,
) -> DrawResult {
    let mu = result.spec.trial.mu;
    let mut drawn: Vec<f64> = Vec::new();
    for curve in &result.curves {
        let fom = curve.detector.figure_of_merit(mu);
        if drawn.iter().any(|f| (f - fom).abs() < 1e-12) {
            continue;
        }
        drawn.push(fom);
        let label = if curve.detector.has_carrier() {
            format!(
                "theory μ²/(2+μ²) = {:.2} dB (envelope above threshold, coherent)",
                db(fom)
            )
        } else {
            "theory FoM = 1 (coherent DSB-SC, SSB)".to_string()
        };
        let line = [(x0, x0 + offset + db(fom)), (x1, x1 + offset + db(fom))];
        chart
            .draw_series(DashedLineSeries::new(line, 8, 5, BLACK.stroke_width(1)))?
            .label(label)
            .legend(|(x, y)| PathElement::new([(x, y), (x + 20, y)], BLACK.stroke_width(1)));
    }
    Ok(())
}

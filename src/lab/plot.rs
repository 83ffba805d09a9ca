//! The sweep as a PNG chart: output SNR against the input, measured curves with the
//! theoretical lines overlaid.

use super::detector::Detector;
use super::sweep::{Axis, SweepResult};
use super::theory::{channel_snr_over_cnr_db, db, envelope_threshold_cnr_db};
use crate::demod::{Mode, Sideband};
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

/// One colour per detector, the same in every plot (the Tableau 10 palette's order; common
/// practice, no source): the modes in table order, then one sideband of sam, then the diode.
pub(crate) fn colour_for(detector: &Detector) -> RGBColor {
    const PALETTE: [RGBColor; 10] = [
        RGBColor(31, 119, 180),
        RGBColor(214, 39, 40),
        RGBColor(44, 160, 44),
        RGBColor(148, 103, 189),
        RGBColor(255, 127, 14),
        RGBColor(23, 190, 207),
        RGBColor(140, 86, 75),
        RGBColor(227, 119, 194),
        RGBColor(188, 189, 34),
        RGBColor(127, 127, 127),
    ];
    let slot = match detector {
        Detector::Receiver(mode) => Mode::all().position(|m| m == *mode).unwrap_or(0),
        Detector::SamSideband(Sideband::Upper) => 7,
        Detector::SamSideband(Sideband::Lower) => 8,
        Detector::Diode { rc_s } if *rc_s == Detector::DIODE_RC_S => 9,
        // Other RCs: a darker grey per time constant.
        Detector::Diode { rc_s } => {
            let shade = (60.0 + (rc_s * 1e6).ln().abs() * 15.0).min(110.0) as u8;
            return RGBColor(shade, shade, shade);
        }
    };
    PALETTE[slot % PALETTE.len()]
}

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
    let ys = result.curves.iter().flat_map(|c| {
        c.points.iter().flat_map(|p| {
            let e = if p.stderr_db.is_finite() {
                p.stderr_db
            } else {
                0.0
            };
            [p.output_snr_db - e, p.output_snr_db + e, p.theory_db]
        })
    });
    let (y0, y1) = ys.fold((f64::MAX, f64::MIN), |(a, b), y| (a.min(y), b.max(y)));
    let (ylo, yhi) = ((y0 - 3.0).floor(), (y1 + 3.0).ceil());
    let root = BitMapBackend::new(path, (1000, 700)).into_drawing_area();
    root.fill(&WHITE)?;
    let has_carrier = result.curves.iter().any(|c| c.detector.has_carrier());
    let snr_over_cnr = channel_snr_over_cnr_db(mu);
    let (axis_name, offset) = match spec.axis {
        Axis::Snr => ("channel SNR  mean|s|²/(N0·W)  [dB]", 0.0),
        Axis::Cnr => ("CNR  ρ = A_c²/(N0·2W)  [dB]", snr_over_cnr),
    };
    let channel = if spec.trial.channel.is_none() {
        String::new()
    } else {
        format!(", channel: {}", spec.trial.channel)
    };
    // A CNR scale along the top for full-carrier detectors on a channel-SNR axis, where the
    // threshold (a CNR) is read.
    let cnr_on_top = has_carrier && spec.axis == Axis::Snr;
    let mut chart = ChartBuilder::on(&root)
        .caption(
            format!(
                "Output SNR vs input: tone {} Hz, W = {} Hz, μ = {mu}, {} trials × {} s{channel}",
                spec.trial.tone_hz, spec.trial.bandwidth_hz, spec.trials, spec.trial.seconds
            ),
            ("sans-serif", 20),
        )
        .margin(15)
        .x_label_area_size(45)
        .top_x_label_area_size(if cnr_on_top { 45 } else { 0 })
        .y_label_area_size(60)
        .build_cartesian_2d(x0..x1, ylo..yhi)?
        .set_secondary_coord(x0 - snr_over_cnr..x1 - snr_over_cnr, ylo..yhi);
    chart
        .configure_mesh()
        .x_desc(axis_name)
        .y_desc(if spec.trial.channel.fading.is_some() {
            "output SINAD, tone tracked every 20 ms  [dB]"
        } else {
            "output SNR in (0, W]  [dB]"
        })
        .label_style(("sans-serif", 15))
        .axis_desc_style(("sans-serif", 17))
        .draw()?;
    if cnr_on_top {
        chart
            .configure_secondary_axes()
            .x_desc("CNR  ρ = A_c²/(N0·2W)  [dB]  (full-carrier test signal)")
            .label_style(("sans-serif", 15))
            .axis_desc_style(("sans-serif", 17))
            .draw()?;
    }
    for curve in &result.curves {
        let colour = colour_for(&curve.detector);
        let pts: Vec<(f64, f64)> = curve
            .points
            .iter()
            .map(|p| (p.input_db, p.output_snr_db))
            .collect();
        chart
            .draw_series(LineSeries::new(pts.clone(), colour.stroke_width(2)))?
            .label(format!("{} measured ± 1 s.e.", curve.detector.label()))
            .legend(move |(x, y)| PathElement::new([(x, y), (x + 20, y)], colour.stroke_width(2)));
        chart.draw_series(pts.into_iter().map(|p| Circle::new(p, 3, colour.filled())))?;
        // Error bars: ± one standard error, from the same numbers as the CSV's stderr_db.
        chart.draw_series(
            curve
                .points
                .iter()
                .filter(|p| p.stderr_db.is_finite() && p.stderr_db > 0.0)
                .map(|p| {
                    let (lo, hi) = (p.output_snr_db - p.stderr_db, p.output_snr_db + p.stderr_db);
                    PathElement::new([(p.input_db, lo), (p.input_db, hi)], colour.stroke_width(2))
                }),
        )?;
    }
    // Theory last, so that the measured curves never hide it.
    draw_theory(&mut chart, result, (x0, x1), offset)?;
    let threshold = envelope_threshold_cnr_db()
        + if spec.axis == Axis::Snr {
            snr_over_cnr
        } else {
            0.0
        };
    if has_carrier && (x0..=x1).contains(&threshold) {
        let grey = RGBColor(90, 90, 90);
        chart
            .draw_series(DashedLineSeries::new(
                [(threshold, ylo), (threshold, yhi)],
                4,
                4,
                grey.stroke_width(2),
            ))?
            .label(format!(
                "envelope threshold by the 1 % rule: CNR ρ = ln 100 = {:.1} dB{}",
                envelope_threshold_cnr_db(),
                if cnr_on_top { " (top axis)" } else { "" }
            ))
            .legend(move |(x, y)| PathElement::new([(x, y), (x + 20, y)], grey.stroke_width(2)));
    }
    // The tone estimate over-reads by the noise falling on it, P_n/(W·T): a floor for the
    // measured output SNR.
    let floor = -db(spec.trial.bandwidth_hz * spec.trial.seconds);
    if floor > ylo && spec.trial.channel.fading.is_none() {
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
        .label_font(("sans-serif", 14))
        .draw()?;
    root.present()?;
    Ok(())
}

type Cartesian =
    Cartesian2d<plotters::coord::types::RangedCoordf64, plotters::coord::types::RangedCoordf64>;
type Chart<'a> =
    plotters::chart::DualCoordChartContext<'a, BitMapBackend<'a>, Cartesian, Cartesian>;

/// One dashed black line per distinct figure of merit among the detectors, over a white halo
/// so that it shows on top of the measured curves.
fn draw_theory(
    chart: &mut Chart<'_>,
    result: &SweepResult,
    (x0, x1): (f64, f64),
    offset: f64,
) -> DrawResult {
    let mu = result.spec.trial.mu;
    let mut drawn: Vec<f64> = Vec::new();
    for curve in &result.curves {
        let fom = curve
            .detector
            .figure_of_merit(mu, result.spec.trial.bandwidth_hz);
        if drawn.iter().any(|f| (f - fom).abs() < 1e-12) {
            continue;
        }
        drawn.push(fom);
        let what = match curve.detector {
            Detector::SamSideband(_) => "μ²/(2(2+μ²)), one sideband of full-carrier AM",
            Detector::Receiver(Mode::Vsb) => "μ²/(4+μ²)·W/(W−f_v/3), VSB",
            _ if curve.detector.has_carrier() => "μ²/(2+μ²), envelope above threshold and coherent",
            _ => "1, coherent DSB-SC and SSB",
        };
        let fading = if result.spec.trial.channel.is_none() {
            ""
        } else {
            ", white noise only"
        };
        let label = format!("theory FoM {what} = {:.2} dB{fading}", db(fom));
        let line = [(x0, x0 + offset + db(fom)), (x1, x1 + offset + db(fom))];
        chart.draw_series(LineSeries::new(line, WHITE.stroke_width(5)))?;
        chart
            .draw_series(DashedLineSeries::new(line, 10, 6, BLACK.stroke_width(2)))?
            .label(label)
            .legend(|(x, y)| PathElement::new([(x, y), (x + 20, y)], BLACK.stroke_width(2)));
    }
    Ok(())
}

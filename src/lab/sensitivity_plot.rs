//! The sensitivity chart: each detector's audio SINAD against the RF level at the antenna
//! input for a receiver of a given noise figure, with the 12 dB SINAD and 10 dB (S+N)/N
//! criteria and where each curve meets them.

use super::plot::{colour_for, register_font};
use super::sensitivity::{reference_offset_db, sensitivities, thermal_noise_dbm_per_hz, Criterion};
use super::sweep::SweepResult;
use super::theory::{db, from_db};
use crate::{Error, Result};
use plotters::prelude::*;
use std::path::Path;

/// Writes the chart (PNG, 1000 × 700) through a temporary file renamed on success.
pub fn write_sensitivity_png(
    result: &SweepResult,
    noise_figure_db: f64,
    path: &Path,
) -> Result<()> {
    register_font()?;
    let temp = super::temp_path(path).with_extension("tmp.png");
    draw(result, noise_figure_db, &temp).map_err(|e| {
        let _ = std::fs::remove_file(&temp);
        Error::file(path, format!("cannot draw the chart: {e}"))
    })?;
    crate::io::output::put_in_place(&temp, path)
}

type DrawResult = std::result::Result<(), Box<dyn std::error::Error>>;

fn draw(result: &SweepResult, noise_figure_db: f64, path: &Path) -> DrawResult {
    let spec = &result.spec;
    let noise_dbm = thermal_noise_dbm_per_hz() + noise_figure_db + db(spec.trial.bandwidth_hz);
    // (level dBm, SINAD dB) per detector; SINAD = 1 + S/(N+D).
    let curves: Vec<_> = result
        .curves
        .iter()
        .map(|c| {
            let (offset, name) = reference_offset_db(&c.detector, spec.trial.mu);
            let pts: Vec<(f64, f64)> = c
                .points
                .iter()
                .map(|p| {
                    (
                        noise_dbm + p.channel_snr_db + offset,
                        db(1.0 + from_db(p.output_snr_db)),
                    )
                })
                .collect();
            (c.detector, name, pts)
        })
        .collect();
    let all = curves.iter().flat_map(|c| c.2.iter().copied());
    let (x0, x1, y0, y1) = all.fold((f64::MAX, f64::MIN, f64::MAX, f64::MIN), |a, (x, y)| {
        (a.0.min(x), a.1.max(x), a.2.min(y), a.3.max(y))
    });
    if !(x0.is_finite() && x1 > x0) {
        return Err("a sensitivity chart needs at least two points".into());
    }
    let (ylo, yhi) = ((y0.min(0.0) - 2.0).floor(), (y1 + 3.0).ceil());
    let root = BitMapBackend::new(path, (1000, 700)).into_drawing_area();
    root.fill(&WHITE)?;
    let mut chart = ChartBuilder::on(&root)
        .caption(
            format!(
                "Sensitivity: noise figure {noise_figure_db} dB, W = {} Hz, tone {} Hz, μ = {}, {} trials",
                spec.trial.bandwidth_hz, spec.trial.tone_hz, spec.trial.mu, spec.trials
            ),
            ("sans-serif", 20),
        )
        .margin(15)
        .x_label_area_size(45)
        .y_label_area_size(60)
        .build_cartesian_2d(x0..x1, ylo..yhi)?;
    chart
        .configure_mesh()
        .x_desc("RF level at the antenna input, dBm (carrier for AM, PEP for SSB; 50 Ω)")
        .y_desc("audio SINAD (S+N+D)/(N+D)  [dB]")
        .label_style(("sans-serif", 15))
        .axis_desc_style(("sans-serif", 17))
        .draw()?;
    for (detector, name, pts) in &curves {
        let colour = colour_for(detector);
        chart
            .draw_series(LineSeries::new(pts.clone(), colour.stroke_width(2)))?
            .label(format!("{} ({name} level)", detector.label()))
            .legend(move |(x, y)| PathElement::new([(x, y), (x + 20, y)], colour.stroke_width(2)));
        chart.draw_series(pts.iter().map(|&p| Circle::new(p, 3, colour.filled())))?;
    }
    for (criterion, dashes) in [(Criterion::Sinad12, 8), (Criterion::SPlusNOverN10, 3)] {
        let y = db(1.0 + from_db(criterion.output_snr_db()));
        chart
            .draw_series(DashedLineSeries::new(
                [(x0, y), (x1, y)],
                dashes,
                5,
                BLACK.stroke_width(1),
            ))?
            .label(criterion.label())
            .legend(move |(x, y)| PathElement::new([(x, y), (x + 20, y)], BLACK.stroke_width(1)));
    }
    for s in sensitivities(result, noise_figure_db) {
        let y = db(1.0 + from_db(s.criterion.output_snr_db()));
        let colour = colour_for(&s.detector);
        chart.draw_series([Cross::new((s.level_dbm, y), 7, colour.stroke_width(3))])?;
        if s.criterion == Criterion::Sinad12 {
            chart.draw_series([Text::new(
                format!("{:.1} dBm, {:.2} µV", s.level_dbm, s.microvolts),
                (s.level_dbm + 0.6, y - 0.4),
                ("sans-serif", 14).into_font().color(&colour),
            )])?;
        }
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

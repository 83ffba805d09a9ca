//! The scan's pictures: the averaged spectrum with the floor, the threshold and the emissions
//! found, and a waterfall (time down, frequency across) with its colour scale.
//!
//! The colour map is the project's own: a ramp through the OKLab space (B. Ottosson, "A
//! perceptual color space for image processing", 2020) with lightness rising linearly from
//! 0.16 to 0.97 while the hue turns from blue-violet through teal and green to yellow, so equal
//! steps in dB look like equal steps in brightness, in greyscale too.

use super::detect::Detection;
use super::recorder::BandRecord;
use crate::lab::plot::register_font;
use crate::{Error, Result};
use plotters::prelude::*;
use std::path::Path;

type DrawResult = std::result::Result<(), Box<dyn std::error::Error>>;

const SPECTRUM: RGBColor = RGBColor(20, 60, 140);
const FLOOR: RGBColor = RGBColor(40, 140, 60);
const THRESHOLD: RGBColor = RGBColor(200, 110, 20);
const MARK: RGBColor = RGBColor(255, 228, 170);
const LABEL: RGBColor = RGBColor(120, 40, 20);

/// OKLab → 8-bit sRGB, `None` outside the gamut.
fn oklab_to_srgb(l: f64, a: f64, b: f64) -> Option<[u8; 3]> {
    let l_ = l + 0.396_337_777_4 * a + 0.215_803_757_3 * b;
    let m_ = l - 0.105_561_345_8 * a - 0.063_854_172_8 * b;
    let s_ = l - 0.089_484_177_5 * a - 1.291_485_548_0 * b;
    let (l3, m3, s3) = (l_.powi(3), m_.powi(3), s_.powi(3));
    let rgb = [
        4.076_741_662_1 * l3 - 3.307_711_591_3 * m3 + 0.230_969_929_2 * s3,
        -1.268_438_004_6 * l3 + 2.609_757_401_1 * m3 - 0.341_319_396_5 * s3,
        -0.004_196_086_3 * l3 - 0.703_418_614_7 * m3 + 1.707_614_701_0 * s3,
    ];
    let mut out = [0u8; 3];
    for (o, c) in out.iter_mut().zip(rgb) {
        if !(-1e-6..=1.0 + 1e-6).contains(&c) {
            return None;
        }
        let c = c.clamp(0.0, 1.0);
        // sRGB transfer function (IEC 61966-2-1).
        let v = if c <= 0.003_130_8 {
            12.92 * c
        } else {
            1.055 * c.powf(1.0 / 2.4) - 0.055
        };
        *o = (v * 255.0).round() as u8;
    }
    Some(out)
}

/// The colour for `t` in [0, 1] (clamped): lightness linear in `t`, hue turning, chroma reduced
/// until the colour fits in sRGB.
pub fn colour(t: f64) -> RGBColor {
    let t = if t.is_finite() {
        t.clamp(0.0, 1.0)
    } else {
        0.0
    };
    let l = 0.16 + 0.81 * t;
    let hue = (275.0 - 175.0 * t).to_radians();
    let mut chroma = 0.10 + 0.07 * (std::f64::consts::PI * t).sin();
    loop {
        if let Some([r, g, b]) = oklab_to_srgb(l, chroma * hue.cos(), chroma * hue.sin()) {
            return RGBColor(r, g, b);
        }
        chroma *= 0.9;
        if chroma < 1e-4 {
            let v = (l.powi(3).clamp(0.0, 1.0) * 255.0) as u8;
            return RGBColor(v, v, v);
        }
    }
}

fn db(x: f64) -> f64 {
    10.0 * x.max(1e-30).log10()
}

/// Writes a PNG through a temporary file renamed on success.
fn write_via_temp(path: &Path, draw: impl FnOnce(&Path) -> DrawResult) -> Result<()> {
    register_font()?;
    let temp = crate::io::output::temp_path(path).with_extension("tmp.png");
    draw(&temp).map_err(|e| {
        let _ = std::fs::remove_file(&temp);
        Error::file(path, format!("cannot draw the picture: {e}"))
    })?;
    crate::io::output::put_in_place(&temp, path)
}

/// The frequency axis's words.
fn axis_words(centre_hz: Option<f64>) -> String {
    match centre_hz {
        Some(c) => format!("offset from the centre, {:.6} MHz [kHz]", c / 1e6),
        None => "offset from the centre (centre frequency unknown) [kHz]".to_string(),
    }
}

/// The spectrum picture (PNG, 1400 × 720).
pub fn write_spectrum_png(
    record: &BandRecord,
    detection: &Detection,
    centre_hz: Option<f64>,
    title: &str,
    path: &Path,
) -> Result<()> {
    write_via_temp(path, |temp| {
        draw_spectrum(record, detection, centre_hz, title, temp)
    })
}

fn draw_spectrum(
    record: &BandRecord,
    detection: &Detection,
    centre_hz: Option<f64>,
    title: &str,
    path: &Path,
) -> DrawResult {
    let n = record.fft_len;
    let khz = |i: usize| record.frequency(i) / 1e3;
    let (f_lo, f_hi) = (khz(0), khz(n - 1));
    // Max over the bins of each of about 1300 columns: narrow carriers stay visible.
    let columns = 1300.min(n);
    let mut points = Vec::with_capacity(columns);
    let mut floor_points = Vec::with_capacity(columns);
    for c in 0..columns {
        let a = c * n / columns;
        let b = ((c + 1) * n / columns).max(a + 1);
        let peak = record.average[a..b].iter().cloned().fold(0.0, f64::max);
        points.push((khz(a), db(peak)));
        floor_points.push((khz(a), db(detection.floor[a])));
    }
    let floor_db = detection.noise_floor_dbfs_hz;
    let top = points.iter().map(|p| p.1).fold(floor_db, f64::max);
    let (y_lo, y_hi) = ((floor_db - 15.0).floor(), (top + 12.0).ceil());
    let root = BitMapBackend::new(path, (1400, 720)).into_drawing_area();
    root.fill(&WHITE)?;
    let root = root.titled(title, ("sans-serif", 22))?;
    let mut chart = ChartBuilder::on(&root)
        .margin(14)
        .x_label_area_size(44)
        .y_label_area_size(72)
        .build_cartesian_2d(f_lo..f_hi, y_lo..y_hi)?;
    chart
        .configure_mesh()
        .x_desc(axis_words(centre_hz))
        .y_desc("power density [dBFS/Hz]")
        .label_style(("sans-serif", 15))
        .axis_desc_style(("sans-serif", 16))
        .light_line_style(RGBColor(235, 235, 235))
        .draw()?;
    let min_width = (f_hi - f_lo) / 700.0;
    for e in &detection.emissions {
        let (a, b) = (e.lower_edge_hz / 1e3, e.upper_edge_hz / 1e3);
        let mid = 0.5 * (a + b);
        let half = (0.5 * (b - a)).max(min_width);
        chart.draw_series([Rectangle::new(
            [(mid - half, y_lo), (mid + half, y_hi)],
            MARK.filled(),
        )])?;
    }
    chart
        .draw_series(LineSeries::new(points, SPECTRUM.stroke_width(1)))?
        .label("averaged spectrum (largest bin per pixel)")
        .legend(|(x, y)| PathElement::new([(x, y), (x + 22, y)], SPECTRUM.stroke_width(2)));
    chart
        .draw_series(LineSeries::new(floor_points.clone(), FLOOR.stroke_width(2)))?
        .label(format!("noise floor (median {floor_db:.1} dBFS/Hz)"))
        .legend(|(x, y)| PathElement::new([(x, y), (x + 22, y)], FLOOR.stroke_width(2)));
    let t = db(detection.threshold_factor);
    chart
        .draw_series(DashedLineSeries::new(
            floor_points.into_iter().map(|(x, y)| (x, y + t)),
            6,
            4,
            THRESHOLD.stroke_width(1),
        ))?
        .label(format!(
            "detection threshold (+{t:.1} dB, 1e-6 false alarms per bin)"
        ))
        .legend(|(x, y)| PathElement::new([(x, y), (x + 22, y)], THRESHOLD.stroke_width(2)));
    chart
        .draw_series([Rectangle::new([(f_lo, y_lo), (f_lo, y_lo)], MARK.filled())])?
        .label("emission found: its 99 % occupied band")
        .legend(|(x, y)| Rectangle::new([(x, y - 6), (x + 22, y + 6)], MARK.filled()));
    for (i, e) in detection.emissions.iter().enumerate() {
        let x = e.offset_hz / 1e3;
        let y = y_hi - 3.0 - 3.0 * (i % 3) as f64;
        chart.draw_series([Text::new(
            format!("{} {:+.1}k", e.class.name(), x),
            (x, y),
            ("sans-serif", 14).into_font().color(&LABEL),
        )])?;
    }
    chart
        .configure_series_labels()
        .position(SeriesLabelPosition::LowerRight)
        .background_style(WHITE.mix(0.9))
        .border_style(BLACK)
        .label_font(("sans-serif", 14))
        .draw()?;
    root.present()?;
    Ok(())
}

/// The waterfall picture (PNG, 1400 × 900): time down, frequency across, colour for power
/// density with its scale printed beside it; the emissions found are outlined.
pub fn write_waterfall_png(
    record: &BandRecord,
    detection: &Detection,
    centre_hz: Option<f64>,
    title: &str,
    path: &Path,
) -> Result<()> {
    write_via_temp(path, |temp| {
        draw_waterfall(record, detection, centre_hz, title, temp)
    })
}

fn draw_waterfall(
    record: &BandRecord,
    detection: &Detection,
    centre_hz: Option<f64>,
    title: &str,
    path: &Path,
) -> DrawResult {
    let n = record.fft_len;
    let rows = record.row_count().max(1);
    let duration = (record.samples as f64 / record.sample_rate).max(1e-6);
    let (f_lo, f_hi) = (record.frequency(0) / 1e3, record.frequency(n - 1) / 1e3);
    let root = BitMapBackend::new(path, (1400, 900)).into_drawing_area();
    root.fill(&WHITE)?;
    let root = root.titled(title, ("sans-serif", 22))?;
    let (main, bar) = root.split_horizontally(1240);
    let mut chart = ChartBuilder::on(&main)
        .margin(14)
        .x_label_area_size(44)
        .y_label_area_size(64)
        .build_cartesian_2d(f_lo..f_hi, duration..0.0)?;
    chart
        .configure_mesh()
        .disable_mesh()
        .x_desc(axis_words(centre_hz))
        .y_desc("time from the start [s]")
        .label_style(("sans-serif", 15))
        .axis_desc_style(("sans-serif", 16))
        .draw()?;
    // Colour scale: from 3 dB under the floor to the strongest value.
    let lo = detection.noise_floor_dbfs_hz - 3.0;
    let hi = record
        .rows
        .iter()
        .map(|&v| db(f64::from(v)))
        .fold(lo + 10.0, f64::max);
    let area = chart.plotting_area().strip_coord_spec();
    let (w, h) = area.dim_in_pixel();
    let (w, h) = (w as usize, h as usize);
    for x in 0..w {
        let a = x * n / w;
        let b = ((x + 1) * n / w).max(a + 1).min(n);
        for y in 0..h {
            let t = (y as f64 + 0.5) / h as f64 * duration;
            let r = row_at(record, t).min(rows - 1);
            let value = if record.row_count() == 0 {
                0.0
            } else {
                record.row(r)[a..b].iter().fold(0.0f32, |m, &v| m.max(v))
            };
            let c = colour((db(f64::from(value)) - lo) / (hi - lo));
            area.draw_pixel((x as i32, y as i32), &c)?;
        }
    }
    // Outlines kept at least 6 pixels clear of a narrow emission, so it stays visible.
    let pad = 6.0 * (f_hi - f_lo) / w as f64;
    for e in &detection.emissions {
        let (a, b) = (e.lower_edge_hz / 1e3, e.upper_edge_hz / 1e3);
        let mid = 0.5 * (a + b);
        let half = 0.5 * (b - a) + pad;
        chart.draw_series([Rectangle::new(
            [(mid - half, e.start_s), (mid + half, e.end_s)],
            RGBColor(235, 235, 235).stroke_width(1),
        )])?;
    }
    // The colour scale, with its meaning.
    let mut scale = ChartBuilder::on(&bar)
        .margin_top(40)
        .margin_bottom(58)
        .margin_right(40)
        .margin_left(20)
        .y_label_area_size(0)
        .right_y_label_area_size(50)
        .caption("colour: dBFS/Hz", ("sans-serif", 15))
        .build_cartesian_2d(0.0..1.0, lo..hi)?;
    scale
        .configure_mesh()
        .disable_mesh()
        .disable_x_axis()
        .label_style(("sans-serif", 14))
        .axis_desc_style(("sans-serif", 14))
        .draw()?;
    let steps = 200;
    scale.draw_series((0..steps).map(|s| {
        let a = lo + (hi - lo) * s as f64 / steps as f64;
        let b = lo + (hi - lo) * (s + 1) as f64 / steps as f64;
        Rectangle::new(
            [(0.0, a), (1.0, b)],
            colour((s as f64 + 0.5) / steps as f64).filled(),
        )
    }))?;
    root.present()?;
    Ok(())
}

/// The row that covers time `t`.
fn row_at(record: &BandRecord, t: f64) -> usize {
    let rows = record.row_count();
    let mut r = 0;
    while r + 1 < rows && record.row_boundary_s(r + 1) <= t {
        r += 1;
    }
    r
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn colour_map_lightness_rises_evenly() {
        // Lightness read back as CIE relative luminance Y (IEC 61966-2-1 linearisation) rises
        // monotonically: the map has no dark band that could hide or invent a level.
        let luminance = |c: RGBColor| {
            let lin = |v: u8| {
                let v = f64::from(v) / 255.0;
                if v <= 0.04045 {
                    v / 12.92
                } else {
                    ((v + 0.055) / 1.055).powf(2.4)
                }
            };
            0.2126 * lin(c.0) + 0.7152 * lin(c.1) + 0.0722 * lin(c.2)
        };
        let mut last = -1.0;
        for i in 0..=100 {
            let y = luminance(colour(i as f64 / 100.0));
            assert!(y > last, "step {i}: {y} after {last}");
            last = y;
        }
        assert!(luminance(colour(0.0)) < 0.02 && luminance(colour(1.0)) > 0.85);
    }
}

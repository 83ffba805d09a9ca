//! STOI of the speech-like message through am, sam and dsb against channel SNR, in white
//! noise and under `good` fading: writes `speech-stoi.csv` and `speech-stoi.png` into the
//! folder given (default `docs`).
//!
//! ```sh
//! cargo run --release --example speech_lab -- docs
//! ```

use amrx::channel::HfCondition;
use amrx::demod::Mode;
use amrx::lab::speech::speech_trial;
use amrx::lab::{trial_seed, Detector, TrialSettings};
use plotters::prelude::*;
use rayon::prelude::*;
use std::path::PathBuf;

const SEEDS: usize = 4;

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let dir = PathBuf::from(std::env::args().nth(1).unwrap_or_else(|| "docs".into()));
    let detectors = [Mode::Am, Mode::Sam, Mode::Dsb].map(Detector::Receiver);
    let snrs: Vec<f64> = (0..=10).map(|k| f64::from(k) * 3.0).collect();
    let mut rows = Vec::new();
    for fading in [None, Some(HfCondition::Good)] {
        let mut s = TrialSettings {
            seconds: 2.0,
            ..Default::default()
        };
        s.channel.fading = fading;
        for d in &detectors {
            let means: Vec<f64> = snrs
                .par_iter()
                .enumerate()
                .map(|(p, &snr)| {
                    (0..SEEDS)
                        .map(|t| {
                            let seed = trial_seed(1, "channel", p, t);
                            let noise = trial_seed(1, &d.name(), p, t);
                            speech_trial(d, &s, snr, seed, noise).unwrap_or(f64::NAN)
                        })
                        .sum::<f64>()
                        / SEEDS as f64
                })
                .collect();
            let label = format!(
                "{}{}",
                d.label(),
                if fading.is_some() {
                    ", good fading"
                } else {
                    ", white noise"
                }
            );
            rows.push((label, fading.is_some(), snrs.clone(), means));
        }
    }
    let mut csv = String::from("detector_channel,channel_snr_db,stoi\n");
    for (label, _, x, y) in &rows {
        for (a, b) in x.iter().zip(y) {
            csv.push_str(&format!("{label},{a},{b:.4}\n"));
        }
    }
    std::fs::write(dir.join("speech-stoi.csv"), csv)?;
    plotters::style::register_font(
        "sans-serif",
        FontStyle::Normal,
        include_bytes!("../assets/fonts/DejaVuSans.ttf"),
    )
    .map_err(|_| "font")?;
    let path = dir.join("speech-stoi.png");
    let root = BitMapBackend::new(&path, (1000, 700)).into_drawing_area();
    root.fill(&WHITE)?;
    let mut chart = ChartBuilder::on(&root)
        .caption(
            "STOI of a speech-like message (no recorded voice) vs channel SNR, W = 4 kHz, μ = 0.5 peak, 4 seeds × 2 s",
            ("sans-serif", 18),
        )
        .margin(15)
        .x_label_area_size(45)
        .y_label_area_size(60)
        .build_cartesian_2d(0.0..30.0, 0.0..1.05)?;
    chart
        .configure_mesh()
        .x_desc("channel SNR  mean|s|²/(N0·W)  [dB]")
        .y_desc("STOI (Taal et al., 2011)")
        .label_style(("sans-serif", 15))
        .axis_desc_style(("sans-serif", 17))
        .draw()?;
    let colours = [
        RGBColor(31, 119, 180),
        RGBColor(214, 39, 40),
        RGBColor(44, 160, 44),
    ];
    for (i, (label, faded, x, y)) in rows.iter().enumerate() {
        let colour = colours[i % 3];
        let pts: Vec<(f64, f64)> = x.iter().copied().zip(y.iter().copied()).collect();
        let style = colour.stroke_width(2);
        if *faded {
            chart
                .draw_series(DashedLineSeries::new(pts, 8, 5, style))?
                .label(label.as_str())
                .legend(move |(x, y)| PathElement::new([(x, y), (x + 20, y)], style));
        } else {
            chart
                .draw_series(LineSeries::new(pts, style))?
                .label(label.as_str())
                .legend(move |(x, y)| PathElement::new([(x, y), (x + 20, y)], style));
        }
    }
    chart
        .configure_series_labels()
        .position(SeriesLabelPosition::LowerRight)
        .background_style(WHITE.mix(0.85))
        .border_style(BLACK)
        .label_font(("sans-serif", 14))
        .draw()?;
    root.present()?;
    println!("wrote {}", path.display());
    Ok(())
}

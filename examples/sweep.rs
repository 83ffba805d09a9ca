//! Runs the noise-performance sweep that makes `docs/sweep.csv` and `docs/sweep.png`, and
//! prints the measured thresholds and slopes.
//!
//! ```text
//! cargo run --release --example sweep -- [detectors] [out-dir]
//! cargo run --release --example sweep -- am,diode docs
//! ```
//!
//! Detectors default to am and diode plus sam, dsb and usb when their receivers are built;
//! the sweep is channel SNR −10 to 35 dB in 1 dB steps, μ = 0.5, 16 trials of 1 s (the
//! measurement floor −10·log10(W·T) is then −37 dB), seed 1.

use amrx::demod::Mode;
use amrx::lab::{self, Axis, Detector, SweepSpec};
use std::path::PathBuf;

fn main() -> anyhow::Result<()> {
    let mut args = std::env::args().skip(1);
    let detectors = match args.next() {
        Some(list) => lab::parse_detectors(&list)?,
        None => available(),
    };
    let out_dir = PathBuf::from(args.next().unwrap_or_else(|| "docs".into()));
    let mut spec = SweepSpec::new(detectors, Axis::Snr, SweepSpec::range_db(-10.0, 35.0, 1.0)?);
    spec.trials = 16;
    spec.trial.seconds = 1.0;
    let result = lab::run_sweep(&spec, |p| {
        if p.done % 100 == 0 || p.done == p.total {
            eprint!("\r{}/{} trials", p.done, p.total);
        }
    })?;
    eprintln!();
    std::fs::create_dir_all(&out_dir)?;
    lab::write_csv(&result, &out_dir.join("sweep.csv"))?;
    lab::write_png(&result, &out_dir.join("sweep.png"))?;
    for line in lab::summary_lines(&result) {
        println!("{line}");
    }
    Ok(())
}

/// am and diode, plus the coherent receivers that are built already.
fn available() -> Vec<Detector> {
    let settings = lab::TrialSettings::default().receiver_config();
    let mut list = vec![Detector::Receiver(Mode::Am), Detector::diode()];
    for mode in [Mode::Sam, Mode::Dsb, Mode::Usb] {
        let d = Detector::Receiver(mode);
        if d.build(&settings).is_ok() {
            list.push(d);
        }
    }
    list
}

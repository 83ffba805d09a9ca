//! The sweep's CSV and PNG outputs.

mod common;

use amrx::demod::Mode;
use amrx::lab::{run_sweep, to_csv, write_csv, write_png, Axis, Detector, SweepSpec, CSV_HEADER};

fn small_sweep(axis: Axis) -> amrx::lab::SweepResult {
    let mut spec = SweepSpec::new(
        vec![Detector::Receiver(Mode::Am), Detector::diode()],
        axis,
        vec![0.0, 10.0, 20.0],
    );
    spec.trials = 2;
    spec.trial.seconds = 0.2;
    run_sweep(&spec, |_| {}).unwrap()
}

/// A folder removed with all it holds when the test ends.
fn scratch(name: &str) -> common::TempDir {
    common::TempDir::new(name)
}

#[test]
fn csv_has_one_row_per_detector_and_point() {
    let result = small_sweep(Axis::Cnr);
    let text = to_csv(&result);
    let mut lines = text.lines();
    assert_eq!(lines.next(), Some(CSV_HEADER));
    let rows: Vec<Vec<&str>> = lines.map(|l| l.split(',').collect()).collect();
    assert_eq!(rows.len(), 6);
    for row in &rows {
        assert_eq!(row.len(), CSV_HEADER.split(',').count());
        assert_eq!(row[1], "cnr");
        // Channel SNR = CNR + 10·log10(2 + μ²) = CNR + 3.522 dB at μ = 0.5.
        let cnr: f64 = row[2].parse().unwrap();
        let snr: f64 = row[3].parse().unwrap();
        assert!((snr - cnr - 3.522).abs() < 2e-3);
        assert_eq!(row[4], row[2]);
        assert_eq!(row[7], "2");
    }
    let dir = scratch("csv");
    let path = dir.join("sweep.csv");
    write_csv(&result, &path).unwrap();
    assert_eq!(std::fs::read_to_string(&path).unwrap(), text);
    assert_eq!(
        std::fs::read_dir(&dir).unwrap().count(),
        1,
        "no temporary left"
    );
}

#[test]
fn png_is_written_whole() {
    let dir = scratch("png");
    let path = dir.join("sweep.png");
    write_png(&small_sweep(Axis::Snr), &path).unwrap();
    let bytes = std::fs::read(&path).unwrap();
    assert_eq!(&bytes[..8], b"\x89PNG\r\n\x1a\n");
    // IHDR: width and height, big-endian, at bytes 16..24.
    assert_eq!(u32::from_be_bytes(bytes[16..20].try_into().unwrap()), 1000);
    assert_eq!(u32::from_be_bytes(bytes[20..24].try_into().unwrap()), 700);
    assert_eq!(
        std::fs::read_dir(&dir).unwrap().count(),
        1,
        "no temporary left"
    );
    // A path in a missing folder is an error, not a panic, and leaves nothing behind.
    assert!(write_png(&small_sweep(Axis::Snr), &dir.join("missing/sweep.png")).is_err());
}

#[test]
fn unavailable_detectors_are_reported() {
    let spec = SweepSpec::new(vec![Detector::Receiver(Mode::Isb)], Axis::Snr, vec![0.0]);
    assert!(run_sweep(&spec, |_| {}).is_err());
}

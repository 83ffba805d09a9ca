//! The sweep summary's slope lines state the span that was measured, not the span asked for.

use amrx::demod::Mode;
use amrx::lab::{run_sweep, summary_lines, Axis, Detector, SweepSpec};

#[test]
fn a_slope_over_a_short_sweep_names_only_the_points_measured() {
    let mut spec = SweepSpec::new(
        vec![Detector::Receiver(Mode::Am)],
        Axis::Snr,
        vec![20.0, 21.0, 22.0],
    );
    spec.trials = 1;
    spec.trial.seconds = 0.1;
    let result = run_sweep(&spec, |_| {}).unwrap();
    let lines = summary_lines(&result);
    let slope = lines
        .iter()
        .find(|l| l.contains("slope"))
        .unwrap_or_else(|| panic!("no slope line in {lines:?}"));
    assert!(
        slope.contains("20.0…22.0 dB (3 points)") && !slope.contains("30"),
        "{slope}"
    );
}

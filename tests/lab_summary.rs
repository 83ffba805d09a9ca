//! Row "sweep --detectors am,dsb --from -12 --to 0": the summary states what the points show.
//! (The CLI printed "am: never 1 dB below theory" while every point was 2.5–7.3 dB below.)

use amrx::demod::Mode;
use amrx::lab::{run_sweep, summary_lines, Axis, Detector, SweepSpec};

#[test]
fn summary_states_only_what_the_points_show() {
    let mut spec = SweepSpec::new(
        vec![Detector::Receiver(Mode::Am), Detector::Receiver(Mode::Dsb)],
        Axis::Snr,
        SweepSpec::range_db(-12.0, 0.0, 2.0).unwrap(),
    );
    spec.trials = 2;
    spec.trial.seconds = 0.2;
    let result = run_sweep(&spec, |_| {}).unwrap();
    let lines = summary_lines(&result);
    eprintln!("{}", lines.join("\n"));
    for curve in &result.curves {
        let losses: Vec<f64> = curve.points.iter().map(|p| p.loss_db()).collect();
        let label = format!("{}:", curve.detector.label());
        let at = lines.iter().position(|l| *l == label).unwrap();
        let one_db = &lines[at + 1];
        if losses.iter().all(|&l| l >= 1.0) {
            assert!(one_db.contains("at every point"), "{one_db} for {losses:?}");
        }
        if one_db.contains("never 1 dB below") {
            assert!(losses.iter().all(|&l| l < 1.0), "{one_db} for {losses:?}");
        }
    }
}

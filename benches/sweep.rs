//! A whole noise-lab sweep: 4 detectors × 25 channel-SNR points (−10 … 38 dB in 2 dB steps),
//! 4 trials of 0.5 s (after 0.25 s settling) per point, rayon-parallel over all trials.
//!
//! The detectors are am and diode, plus sam, dsb and usb as their receivers become available;
//! until then the missing places are filled by am at μ = 0.3 and μ = 0.8 (separate sweeps of
//! the same size, since μ is a sweep setting), so the work is always 4 × 25 points.

use amrx::demod::Mode;
use amrx::lab::{run_sweep, Axis, Detector, SweepSpec, TrialSettings};
use criterion::{criterion_group, criterion_main, Criterion};
use std::hint::black_box;

fn specs() -> Vec<SweepSpec> {
    let points = SweepSpec::range_db(-10.0, 38.0, 2.0).unwrap();
    let config = TrialSettings::default().receiver_config();
    let mut main = vec![Detector::Receiver(Mode::Am), Detector::diode()];
    for mode in [Mode::Sam, Mode::Dsb, Mode::Usb] {
        let d = Detector::Receiver(mode);
        if main.len() < 4 && d.build(&config).is_ok() {
            main.push(d);
        }
    }
    let fill = 4 - main.len();
    let make = |detectors: Vec<Detector>, mu: f64| {
        let mut spec = SweepSpec::new(detectors, Axis::Snr, points.clone());
        spec.trials = 4;
        spec.trial.mu = mu;
        spec
    };
    let mut specs = vec![make(main, 0.5)];
    for mu in [0.3, 0.8].into_iter().take(fill) {
        specs.push(make(vec![Detector::Receiver(Mode::Am)], mu));
    }
    let names: Vec<String> = specs
        .iter()
        .flat_map(|s| {
            s.detectors
                .iter()
                .map(move |d| format!("{d} (μ {})", s.trial.mu))
        })
        .collect();
    eprintln!("sweep bench detectors: {}", names.join(", "));
    specs
}

fn sweep(c: &mut Criterion) {
    let specs = specs();
    let mut group = c.benchmark_group("sweep");
    group.sample_size(10);
    group.bench_function("4_detectors_x_25_points_x_4_trials", |b| {
        b.iter(|| {
            for spec in &specs {
                black_box(run_sweep(spec, |_| {}).unwrap());
            }
        })
    });
    group.finish();
}

criterion_group! {
    name = benches;
    // Criterion's HTML charts draw with plotters, whose only font source in this build is the
    // one the lab registers; the timing does not need them.
    config = Criterion::default().without_plots();
    targets = sweep
}
criterion_main!(benches);

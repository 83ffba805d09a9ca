//! Throughput of the polyphase FFT channelizer on preallocated buffers (elements = input
//! samples). The 8.33 kHz raster over 2.4 MS/s is 288 channels, decimated by 144 (two outputs
//! per channel spacing: 16.7 kS/s per channel); the 25 kHz raster is 96 channels by 48.
//!
//! Two prototypes: the strict one (passband 0.4 of the spacing, 70 dB from 0.6, the design of
//! the adjacent-channel test) and the one the 8.33 kHz raster needs for neighbours 40 dB down
//! with 3 kHz audio: passband to 3 kHz (0.36 of 8.33 kHz), 50 dB (40 dB plus a 10 dB margin)
//! from where the neighbour's lower sideband begins, 8.33 − 3 kHz (0.64). Last, the banks
//! `amrx watch` itself builds for 3 kHz channels (`BankDesign::for_plan`): the 8.33 kHz raster
//! at 2.4 MS/s, on the fs/STEP grid (288 bins by 144, a 50 dB prototype that only guards
//! against folding), and the general bank it builds off the grid (1024 bins at 2.4 MS/s).

use amrx::block::Block;
use amrx::channelize::channelizer::{design_prototype, PolyphaseChannelizer};
use amrx::channelize::watch::BankDesign;
use amrx::Complex32;
use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use std::hint::black_box;

const N: usize = 1 << 17;

fn bench(c: &mut Criterion) {
    let x: Vec<Complex32> = (0..N)
        .map(|i| {
            let p = 1e-6 * (i * i) as f32;
            Complex32::new(p.cos(), p.sin())
        })
        .collect();
    let mut group = c.benchmark_group("channelizer");
    group.throughput(Throughput::Elements(N as u64));
    let step = 25_000.0 / 3.0;
    let raster: Vec<f64> = (0..281).map(|k| (k as f64 - 140.0) * step).collect();
    let on_grid = BankDesign::for_plan(2.4e6, 3000.0, step, &raster).unwrap();
    let general = BankDesign::new(2.4e6, 3000.0).unwrap();
    let cases = [
        (288usize, 144usize, 0.4, 70.0, "70 dB"),
        (96, 48, 0.4, 70.0, "70 dB"),
        (288, 144, 0.36, 50.0, "3 kHz, 50 dB"),
    ];
    let mut banks: Vec<(String, PolyphaseChannelizer)> = cases
        .iter()
        .map(|&(m, d, pass, db, what)| {
            let taps = design_prototype(m, d, pass, db).unwrap();
            let label = format!("{m} channels, decimation {d}, {what}, {} taps", taps.len());
            (label, PolyphaseChannelizer::new(m, d, taps).unwrap())
        })
        .collect();
    for (what, design) in [("on the grid", on_grid), ("general", general)] {
        banks.push((
            format!(
                "watch at 2.4 MS/s, {what}: {} bins, decimation {}, {} taps",
                design.bins,
                design.decimation,
                design.taps.len()
            ),
            PolyphaseChannelizer::new(design.bins, design.decimation, design.taps).unwrap(),
        ));
    }
    for (label, bank) in &mut banks {
        let mut out = vec![Complex32::default(); bank.max_output_len(N)];
        group.bench_function(label.as_str(), |b| {
            b.iter(|| black_box(bank.process(black_box(&x), &mut out)))
        });
    }
    group.finish();
}

criterion_group! {
    name = benches;
    // No plots: plotters here has no system fonts (DEPENDENCIES.md).
    config = Criterion::default().without_plots();
    targets = bench
}
criterion_main!(benches);

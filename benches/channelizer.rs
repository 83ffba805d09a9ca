//! Throughput of the polyphase FFT channelizer on preallocated buffers (elements = input
//! samples). The 8.33 kHz raster over 2.4 MS/s is 288 channels, decimated by 144 (two outputs
//! per channel spacing: 16.7 kS/s per channel); the 25 kHz raster is 96 channels by 48.

use amrx::block::Block;
use amrx::channelize::channelizer::{design_prototype, PolyphaseChannelizer};
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
    for (m, d) in [(288usize, 144usize), (96, 48)] {
        let taps = design_prototype(m, d, 0.4, 70.0).unwrap();
        let mut bank = PolyphaseChannelizer::new(m, d, taps).unwrap();
        let mut out = vec![Complex32::default(); bank.max_output_len(N)];
        group.bench_function(format!("{m} channels, decimation {d}"), |b| {
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

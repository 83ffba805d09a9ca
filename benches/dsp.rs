//! Throughput of the hot DSP blocks on preallocated buffers (elements = input samples).

use amrx::block::Block;
use amrx::dsp::{DecimationPlan, FirDecimator, Mixer, MultiStageDecimator};
use amrx::Complex32;
use criterion::{criterion_group, criterion_main, BatchSize, Criterion, Throughput};
use std::hint::black_box;

const N: usize = 1 << 16;

fn input() -> Vec<Complex32> {
    // Deterministic, non-trivial data (a slow chirp); the values do not affect the timing.
    (0..N)
        .map(|i| {
            let p = 1e-6 * (i * i) as f32;
            Complex32::new(p.cos(), p.sin())
        })
        .collect()
}

fn bench_block<B>(c: &mut Criterion, name: &str, mut block: B)
where
    B: Block<Input = Complex32, Output = Complex32>,
{
    let x = input();
    let mut out = vec![Complex32::default(); block.max_output_len(N)];
    let mut group = c.benchmark_group("dsp");
    group.throughput(Throughput::Elements(N as u64));
    group.bench_function(name, |b| {
        b.iter_batched_ref(
            || (),
            |_| black_box(block.process(black_box(&x), &mut out)),
            BatchSize::SmallInput,
        )
    });
    group.finish();
}

fn benches(c: &mut Criterion) {
    bench_block(c, "mixer", Mixer::new(12_345.678, 2_400_000.0).unwrap());
    let plan = DecimationPlan::new(2_400_000.0, 48_000.0, 10_000.0, 70.0).unwrap();
    eprintln!("plan: {plan}");
    let first = &plan.stages[0];
    let name = format!("fir_decimator_{}taps_by{}", first.taps.len(), first.factor);
    bench_block(
        c,
        &name,
        FirDecimator::new(&first.taps, first.factor).unwrap(),
    );
    bench_block(
        c,
        "multistage_2M4_to_48k",
        MultiStageDecimator::new(&plan).unwrap(),
    );
}

// Criterion's own charts need system fonts that plotters (ab_glyph) does not load here.
criterion_group! {
    name = dsp;
    config = Criterion::default().without_plots();
    targets = benches
}
criterion_main!(dsp);

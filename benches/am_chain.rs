//! The full `am` chain from cu8 at 2.4 MS/s to 48 kHz audio, on one thread: decoding, tuning,
//! decimation, channel filter, envelope detection, DC removal, audio filter and resampling.
//! Reports input samples per second.

use amrx::block::Block;
use amrx::channel::quantize_cu8;
use amrx::demod::{AmReceiver, Mode, ReceiverConfig};
use amrx::dsp::ComplexNoise;
use amrx::io::SampleFormat;
use amrx::synth::AmToneTransmitter;
use amrx::Complex32;
use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use std::hint::black_box;

const RATE: f64 = 2_400_000.0;
const PIECE: usize = 1 << 16;

fn cu8_recording() -> Vec<u8> {
    let mut tx = AmToneTransmitter::new(0.3, 0.5, 1000.0, -300_000.0, RATE).unwrap();
    let mut iq = vec![Complex32::default(); PIECE * 4];
    tx.fill(&mut iq);
    ComplexNoise::new(1e-4, 3).add_to(&mut iq);
    let mut bytes = Vec::new();
    quantize_cu8(&iq, &mut bytes);
    bytes
}

fn am_chain(c: &mut Criterion) {
    let bytes = cu8_recording();
    let mut rx = AmReceiver::new(Mode::Am, &ReceiverConfig::new(RATE, -300_000.0)).unwrap();
    let mut iq = vec![Complex32::default(); PIECE];
    let mut audio = vec![0.0f32; rx.max_output_len(PIECE)];
    let mut group = c.benchmark_group("am_chain");
    group.throughput(Throughput::Elements((bytes.len() / 2) as u64));
    group.bench_function("cu8_2M4_to_48k", |b| {
        b.iter(|| {
            for piece in bytes.chunks_exact(2 * PIECE) {
                SampleFormat::Cu8.decode_slice(piece, &mut iq);
                let (_, n) = rx.process(&iq, &mut audio);
                black_box(&audio[..n]);
            }
        })
    });
    group.finish();
}

// Criterion's own charts need system fonts that plotters (ab_glyph) does not load here.
criterion_group! {
    name = benches;
    config = Criterion::default().without_plots();
    targets = am_chain
}
criterion_main!(benches);

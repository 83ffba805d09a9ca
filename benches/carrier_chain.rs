//! The full `sam` and `dsb` chains from cu8 at 2.4 MS/s to 48 kHz audio, on one thread:
//! decoding, tuning, decimation, channel filter, carrier acquisition and loop, coherent
//! detection, AGC, DC removal, audio filter and resampling. Reports input samples per second.

use amrx::block::Block;
use amrx::channel::quantize_cu8;
use amrx::demod::{DsbReceiver, Mode, ReceiverConfig, SamReceiver, Sideband};
use amrx::dsp::ComplexNoise;
use amrx::io::SampleFormat;
use amrx::synth::AmToneTransmitter;
use amrx::Complex32;
use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use std::f64::consts::TAU;
use std::hint::black_box;

const RATE: f64 = 2_400_000.0;
const OFFSET: f64 = -300_000.0;
const PIECE: usize = 1 << 16;

fn to_cu8(mut iq: Vec<Complex32>) -> Vec<u8> {
    ComplexNoise::new(1e-4, 3).add_to(&mut iq);
    let mut bytes = Vec::new();
    quantize_cu8(&iq, &mut bytes);
    bytes
}

/// Full-carrier AM 120 Hz off the tuned frequency.
fn am_recording() -> Vec<u8> {
    let mut tx = AmToneTransmitter::new(0.3, 0.5, 1000.0, OFFSET + 120.0, RATE).unwrap();
    let mut iq = vec![Complex32::default(); PIECE * 4];
    tx.fill(&mut iq);
    to_cu8(iq)
}

/// DSB-SC with a tone, 35 Hz off the tuned frequency.
fn dsb_recording() -> Vec<u8> {
    let iq = (0..PIECE * 4)
        .map(|n| {
            let t = n as f64 / RATE;
            let m = 0.4 * (TAU * 1000.0 * t).cos();
            Complex32::from_polar(m as f32, (TAU * (OFFSET + 35.0) * t) as f32)
        })
        .collect();
    to_cu8(iq)
}

fn run<R: Block<Input = Complex32, Output = f32>>(
    c: &mut Criterion,
    name: &str,
    bytes: &[u8],
    mut rx: R,
) {
    let mut iq = vec![Complex32::default(); PIECE];
    let mut audio = vec![0.0f32; rx.max_output_len(PIECE)];
    let mut group = c.benchmark_group("carrier_chain");
    group.throughput(Throughput::Elements((bytes.len() / 2) as u64));
    group.bench_function(name, |b| {
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

fn carrier_chain(c: &mut Criterion) {
    let am = am_recording();
    let sam = SamReceiver::new(Mode::Sam, &ReceiverConfig::new(RATE, OFFSET)).unwrap();
    run(c, "sam_cu8_2M4_to_48k", &am, sam);
    let mut upper = ReceiverConfig::new(RATE, OFFSET);
    upper.options.sideband = Some(Sideband::Upper);
    run(
        c,
        "sam_upper_cu8_2M4_to_48k",
        &am,
        SamReceiver::new(Mode::Sam, &upper).unwrap(),
    );
    let dsb = DsbReceiver::new(Mode::Dsb, &ReceiverConfig::new(RATE, OFFSET)).unwrap();
    run(c, "dsb_cu8_2M4_to_48k", &dsb_recording(), dsb);
}

// Criterion's own charts need system fonts that plotters (ab_glyph) does not load here.
criterion_group! {
    name = benches;
    config = Criterion::default().without_plots();
    targets = carrier_chain
}
criterion_main!(benches);

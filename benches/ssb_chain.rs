//! The full `usb` chain from cu8 at 2.4 MS/s to 48 kHz audio, on one thread, for both SSB
//! methods: decoding, tuning, decimation, channel filter, SSB detector, AGC, DC removal, audio
//! filter and resampling. Reports input samples per second.

use amrx::block::Block;
use amrx::channel::quantize_cu8;
use amrx::demod::{Mode, ReceiverConfig, SsbMethod, SsbReceiver};
use amrx::dsp::ComplexNoise;
use amrx::io::SampleFormat;
use amrx::Complex32;
use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use std::f64::consts::TAU;
use std::hint::black_box;

const RATE: f64 = 2_400_000.0;
const DIAL: f64 = -300_000.0;
const PIECE: usize = 1 << 16;

/// A 1 kHz upper-sideband tone at the dial, in noise, quantised to cu8.
fn cu8_recording() -> Vec<u8> {
    let mut iq: Vec<Complex32> = (0..PIECE * 4)
        .map(|n| {
            let cycles = ((DIAL + 1000.0) * n as f64 / RATE).fract();
            Complex32::from_polar(0.4, (TAU * cycles) as f32)
        })
        .collect();
    ComplexNoise::new(1e-4, 3).add_to(&mut iq);
    let mut bytes = Vec::new();
    quantize_cu8(&iq, &mut bytes);
    bytes
}

fn ssb_chain(c: &mut Criterion) {
    let bytes = cu8_recording();
    let mut group = c.benchmark_group("ssb_chain");
    group.throughput(Throughput::Elements((bytes.len() / 2) as u64));
    for (name, method) in [
        ("phasing", SsbMethod::Phasing),
        ("weaver", SsbMethod::Weaver),
    ] {
        let mut config = ReceiverConfig::new(RATE, DIAL);
        config.options.ssb_method = method;
        let mut rx = SsbReceiver::new(Mode::Usb, &config).unwrap();
        let mut iq = vec![Complex32::default(); PIECE];
        let mut audio = vec![0.0f32; rx.max_output_len(PIECE)];
        group.bench_function(format!("usb_{name}_cu8_2M4_to_48k"), |b| {
            b.iter(|| {
                for piece in bytes.chunks_exact(2 * PIECE) {
                    SampleFormat::Cu8.decode_slice(piece, &mut iq);
                    let (_, n) = rx.process(&iq, &mut audio);
                    black_box(&audio[..n]);
                }
            })
        });
    }
    group.finish();
}

// Criterion's own charts need system fonts that plotters (ab_glyph) does not load here.
criterion_group! {
    name = benches;
    config = Criterion::default().without_plots();
    targets = ssb_chain
}
criterion_main!(benches);

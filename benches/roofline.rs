//! The roofline figure: the core's attainable floating-point peak, measured with a tight
//! fused-multiply-add loop, against the operations each receiver chain does per input sample
//! and the rate it runs at. Prints one line per chain. Not criterion: one figure each, the
//! median of repeated timed runs (the machine may be shared; say so when quoting).
//!
//! Operation count per input sample (a hand count, our own, from the chain's structure and
//! its decimation plan; real floating-point operations, a multiply-add counted as two):
//! overload guard 6 (|x|² 3, two comparisons with the block's bounds 2, the mantissa product
//! 1; its level moves once per block of 256), mixer 12 (the rotation start·table[k] formed
//! per sample 6, the product 6), decimation 4 × the plan's real-tap multiplies per input (a complex
//! sample times a real tap is 2 multiplies and 2 adds). Stages at the detection rate (channel
//! filter, detector, audio) run 50 times less often and are left out, so the count is a
//! lower bound.

use amrx::block::Block;
use amrx::channel::quantize_cu8;
use amrx::demod::{AmReceiver, DsbReceiver, Mode, ReceiverConfig, SamReceiver, SsbReceiver};
use amrx::dsp::{ComplexNoise, DecimationPlan};
use amrx::io::SampleFormat;
use amrx::synth::AmToneTransmitter;
use amrx::Complex32;
use std::hint::black_box;
use std::time::Instant;

const RATE: f64 = 2_400_000.0;
const OFFSET: f64 = -300_000.0;
const PIECE: usize = 1 << 16;
const REPEATS: usize = 15;

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(f64::total_cmp);
    v[v.len() / 2]
}

/// 8 independent 8-lane accumulators: enough multiply-adds in flight to fill both FMA ports.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
unsafe fn fma_loop(iterations: usize, acc: &mut [f32; 64]) {
    let (a, b) = (0.999_999_9f32, 1e-7f32);
    for _ in 0..iterations {
        for x in acc.iter_mut() {
            *x = x.mul_add(a, b);
        }
    }
}

/// Peak GFLOP/s of one core (median of REPEATS runs of 2·64·iterations operations).
fn peak_gflops() -> Option<f64> {
    #[cfg(target_arch = "x86_64")]
    if std::arch::is_x86_feature_detected!("avx2") && std::arch::is_x86_feature_detected!("fma") {
        let iterations = 2_000_000;
        let runs = (0..REPEATS)
            .map(|_| {
                let mut acc = [1.0f32; 64];
                let t = Instant::now();
                // SAFETY: the CPU has AVX2 and FMA (checked above).
                unsafe { fma_loop(iterations, &mut acc) };
                black_box(&acc);
                2.0 * 64.0 * iterations as f64 / t.elapsed().as_secs_f64() / 1e9
            })
            .collect();
        return Some(median(runs));
    }
    None
}

fn recording() -> Vec<u8> {
    let mut tx = AmToneTransmitter::new(0.3, 0.5, 1000.0, OFFSET, RATE).unwrap();
    let mut iq = vec![Complex32::default(); PIECE * 4];
    tx.fill(&mut iq);
    ComplexNoise::new(1e-4, 3).add_to(&mut iq);
    let mut bytes = Vec::new();
    quantize_cu8(&iq, &mut bytes);
    bytes
}

/// Input samples per second through `rx` (decode included), median of REPEATS passes.
fn rate<R: Block<Input = Complex32, Output = f32>>(bytes: &[u8], mut rx: R) -> f64 {
    let mut iq = vec![Complex32::default(); PIECE];
    let mut audio = vec![0.0f32; rx.max_output_len(PIECE)];
    let runs = (0..REPEATS)
        .map(|_| {
            let t = Instant::now();
            for piece in bytes.chunks_exact(2 * PIECE) {
                SampleFormat::Cu8.decode_slice(piece, &mut iq);
                let (_, n) = rx.process(&iq, &mut audio);
                black_box(&audio[..n]);
            }
            (bytes.len() / 2) as f64 / t.elapsed().as_secs_f64()
        })
        .collect();
    median(runs)
}

/// Hand-counted operations per input sample (module doc) for a channel of ±`bandwidth_hz`.
fn ops_per_input(bandwidth_hz: f64) -> f64 {
    // The front end's plan, as `ChannelFrontEnd::new` makes it.
    let min_rate = 48_000f64.max(6.0 * bandwidth_hz);
    let view = (2.0 * bandwidth_hz).min(0.45 * min_rate);
    let plan = DecimationPlan::new(RATE, min_rate, view, 70.0).unwrap();
    6.0 + 12.0 + 4.0 * plan.macs_per_input()
}

fn main() {
    let bytes = recording();
    let peak = peak_gflops();
    match peak {
        Some(p) => println!("peak (AVX2 FMA loop, one core): {p:.1} GFLOP/s"),
        None => println!("peak: no AVX2 + FMA on this CPU"),
    }
    let config = ReceiverConfig::new(RATE, OFFSET);
    let chains: Vec<(&str, f64, f64)> = vec![
        (
            "am",
            5000.0,
            rate(&bytes, AmReceiver::new(Mode::Am, &config).unwrap()),
        ),
        (
            "sam",
            5000.0,
            rate(&bytes, SamReceiver::new(Mode::Sam, &config).unwrap()),
        ),
        (
            "dsb",
            3000.0,
            rate(&bytes, DsbReceiver::new(Mode::Dsb, &config).unwrap()),
        ),
        (
            "usb",
            2700.0,
            rate(&bytes, SsbReceiver::new(Mode::Usb, &config).unwrap()),
        ),
    ];
    println!("| chain | ops/input | M samples/s | GFLOP/s | fraction of peak |");
    println!("|---|---|---|---|---|");
    for (name, bw, r) in chains {
        let ops = ops_per_input(bw);
        let gflops = ops * r / 1e9;
        let fraction = peak.map_or("–".to_string(), |p| {
            format!("{:.1} %", 100.0 * gflops / p)
        });
        println!(
            "| {name} | {ops:.0} | {:.0} | {gflops:.2} | {fraction} |",
            r / 1e6
        );
    }
}

//! Properties that must hold for any input (proptest, seeded by proptest's own deterministic
//! runner configuration below): every receiver of the mode table gives finite audio for any
//! finite IQ of any magnitude and the same audio however the input is split; the AGC stays
//! finite and bounded on zeros, constants, full-scale square waves and huge values.

use amrx::block::{process_in_chunks, process_to_vec};
use amrx::demod::{build_receiver, ReceiverConfig, MODES};
use amrx::dsp::{Agc, AgcSettings};
use amrx::Complex32;
use proptest::prelude::*;
use proptest::test_runner::{Config, RngAlgorithm, TestRng, TestRunner};

const RATE: f64 = 48_000.0;

/// A runner with a fixed seed, so that every run tries the same cases.
fn runner(cases: u32) -> TestRunner {
    let config = Config {
        cases,
        failure_persistence: None,
        ..Config::default()
    };
    TestRunner::new_with_rng(config, TestRng::from_seed(RngAlgorithm::ChaCha, &[7; 32]))
}

/// IQ of random values scaled by 10^`exponent`, with runs of zeros and of a constant.
fn iq(values: &[(f32, f32)], exponent: i32) -> Vec<Complex32> {
    let scale = 10f32.powi(exponent);
    let mut out: Vec<Complex32> = values
        .iter()
        .map(|&(re, im)| Complex32::new(re * scale, im * scale))
        .collect();
    out.extend(std::iter::repeat_n(Complex32::default(), 500));
    out.extend(std::iter::repeat_n(Complex32::new(scale, -scale), 500));
    out
}

#[test]
fn every_receiver_gives_finite_audio_for_any_finite_input() {
    // f32 holds magnitudes up to 3.4e38; 1e36 leaves room for a few gains above one.
    let strategy = (
        proptest::collection::vec((-1f32..1.0, -1f32..1.0), 1..3000),
        -30i32..=36,
    );
    for spec in MODES {
        runner(24)
            .run(&strategy, |(values, exponent)| {
                let input = iq(&values, exponent);
                let mut boxed =
                    build_receiver(spec.mode, &ReceiverConfig::new(RATE, 1000.0)).unwrap();
                let out = process_to_vec(&mut boxed, &input);
                let bad = out.iter().position(|x| !x.is_finite());
                prop_assert!(
                    bad.is_none(),
                    "{}: non-finite audio at {:?} for input scale 1e{exponent}",
                    spec.name,
                    bad
                );
                Ok(())
            })
            .unwrap();
    }
}

#[test]
fn every_receiver_is_chunk_invariant_under_random_splits() {
    let strategy = (
        proptest::collection::vec((-1f32..1.0, -1f32..1.0), 500..4000),
        proptest::collection::vec(1usize..2000, 1..12),
    );
    for spec in MODES {
        let make = || build_receiver(spec.mode, &ReceiverConfig::new(RATE, 1000.0)).unwrap();
        runner(8)
            .run(&strategy, |(values, sizes)| {
                let input = iq(&values, 0);
                let whole = process_to_vec(&mut make(), &input);
                let split = process_in_chunks(&mut make(), &input, &sizes);
                // Bit-for-bit: the block contract says output never depends on chunking.
                prop_assert_eq!(whole, split, "{} with pieces {:?}", spec.name, sizes);
                Ok(())
            })
            .unwrap();
    }
}

/// Zeros, a constant, a full-scale square wave and a huge square wave, each `len` long.
fn agc_inputs(kind: u8, level: f32, period: usize, len: usize) -> Vec<f32> {
    (0..len)
        .map(|n| match kind {
            0 => 0.0,
            1 => level,
            _ => {
                if (n / period) % 2 == 0 {
                    level
                } else {
                    -level
                }
            }
        })
        .collect()
}

#[test]
fn agc_output_is_finite_and_bounded_once_settled() {
    let strategy = (
        0u8..3,
        prop_oneof![Just(1.0f32), Just(1e30f32), Just(3e38f32), 1e-30f32..1e30],
        1usize..500,
    );
    for settings in [AgcSettings::SPEECH, AgcSettings::SLOW] {
        runner(64)
            .run(&strategy, |(kind, level, period)| {
                let len = RATE as usize; // one second: past every attack time
                let input = agc_inputs(kind, level, period, len);
                let mut agc = Agc::new(settings, RATE).unwrap();
                let out = process_to_vec(&mut agc, &input);
                prop_assert!(out.iter().all(|y| y.is_finite()));
                // Settled: after 0.2 s (10 attack time constants of the slow AGC) the output
                // peak is at most the target 0.5 with a 2x margin for the detector's ripple.
                let settled = &out[len / 5..];
                let peak = settled.iter().fold(0f32, |m, y| m.max(y.abs()));
                prop_assert!(
                    peak <= 1.0,
                    "kind {kind} level {level:e} period {period}: peak {peak}"
                );
                Ok(())
            })
            .unwrap();
    }
}

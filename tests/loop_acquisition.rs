//! Carrier loops against theory: acquisition far off the expected frequency, lock time against
//! the loop design, and the lock detector on noise.

use amrx::block::{process_in_chunks, Block};
use amrx::dsp::ComplexNoise;
use amrx::sync::{CarrierAcquisition, CarrierKind, CarrierPll, CostasLoop, PllConfig};
use amrx::synth::AmToneTransmitter;
use amrx::Complex32;
use rand::rngs::StdRng;
use rand::{RngExt, SeedableRng};
use std::f64::consts::TAU;

const FS: f64 = 48_000.0;
const LOOP_HZ: f64 = 30.0;

/// AM at `freq_hz` (μ = 0.5, 1 kHz tone), A_c = 0.25, with complex noise of power `noise`.
fn am(freq_hz: f64, seconds: f64, noise: f64, seed: u64) -> Vec<Complex32> {
    let mut tx = AmToneTransmitter::new(0.25, 0.5, 1000.0, freq_hz, FS).unwrap();
    let mut x = vec![Complex32::default(); (seconds * FS) as usize];
    tx.fill(&mut x);
    ComplexNoise::new(noise, seed).add_to(&mut x);
    x
}

/// The first sample from which `good` holds to the end, if any.
fn settled_from(flags: &[bool]) -> Option<usize> {
    let last_bad = flags.iter().rposition(|&ok| !ok);
    match last_bad {
        None => Some(0),
        Some(n) if n + 1 < flags.len() => Some(n + 1),
        Some(_) => None,
    }
}

/// A carrier 200 Hz from where it is expected: the loop alone would need seconds to pull in
/// (type-2 pull-in time T_P ≈ Δω²/(2ζω_n³) ≈ 6 s here; Gardner, Phaselock Techniques, ch. 4),
/// so the coarse FFT search must bring it within lock-in range. Requirement: locked with the
/// frequency within 1 Hz in under 0.5 s.
#[test]
fn carrier_200_hz_off_is_acquired_in_under_half_a_second() {
    for (offset, seed) in [(200.0, 1), (-200.0, 2), (650.0, 3)] {
        // CNR ≈ 40 dB in 10 kHz: carrier power 0.0625, noise N0 = 1e-3/FS.
        let x = am(offset, 1.0, 1e-3, seed);
        let pll = CarrierPll::new(PllConfig::new(FS, LOOP_HZ)).unwrap();
        let mut acq = CarrierAcquisition::new(pll, CarrierKind::Line, 1000.0, FS).unwrap();
        let mut good = Vec::with_capacity(x.len());
        let mut y = [Complex32::default()];
        for s in &x {
            acq.process(std::slice::from_ref(s), &mut y);
            let pll = acq.carrier_loop();
            good.push(pll.is_locked() && (pll.frequency_hz() - offset).abs() < 1.0);
        }
        let at = settled_from(&good).expect("locked by the end");
        let seconds = at as f64 / FS;
        eprintln!(
            "carrier {offset:+} Hz: coarse {:.2} Hz, locked within 1 Hz after {seconds:.3} s ({at} samples; decision at {})",
            acq.acquired_hz().unwrap(),
            acq.window()
        );
        assert!(seconds < 0.5, "{offset} Hz: locked after {seconds:.3} s");
    }
}

/// Lock time for a small frequency step against the loop design. Linear model of a type-2,
/// second-order loop (Gardner, Phaselock Techniques, ch. 2, response to a frequency step):
/// φ(t) = (Δω/ω_n)·e^{−ζω_n t}·sin(ω_n√(1−ζ²)·t)/√(1−ζ²). The time after which |φ| stays
/// below 0.1 rad is found from that formula and from the loop; they agree within 5 % (measured:
/// 0.3 %; the margin covers the detector being sin φ rather than φ, and the loop being discrete:
/// ω_n·T = √K2 and ζ = K1/(2√K2) hold in the small-B_L·T limit). Order of magnitude: Gardner's lock-in time ≈ 1/B_L and Best's
/// T_L ≈ 2π/ω_n (Best, Phase-Locked Loops, ch. 2) bracket it.
#[test]
fn lock_time_for_a_small_offset_matches_the_loop_design() {
    for step_hz in [3.0, 6.0] {
        let len = (FS * 0.6) as usize;
        let mut pll = CarrierPll::new(PllConfig::new(FS, LOOP_HZ)).unwrap();
        let mut small = Vec::with_capacity(len);
        let mut locked = Vec::with_capacity(len);
        for n in 0..len {
            let truth = TAU * step_hz * n as f64 / FS;
            let x = Complex32::from_polar(1.0, truth as f32);
            pll.next_sample(x);
            let error =
                (truth - pll.phase() + std::f64::consts::PI).rem_euclid(TAU) - std::f64::consts::PI;
            small.push(error.abs() < 0.1);
            locked.push(pll.is_locked());
        }
        let measured = settled_from(&small).unwrap() as f64 / FS;
        let gains = pll.gains();
        let omega_n = gains.k2.sqrt() * FS;
        let zeta = gains.k1 / (2.0 * gains.k2.sqrt());
        let model = model_settling_time(TAU * step_hz, omega_n, zeta, 0.1);
        let detector = settled_from(&locked).unwrap() as f64 / FS;
        eprintln!(
            "step {step_hz} Hz: |φ| < 0.1 rad after {measured:.4} s, model {model:.4} s; lock detector after {detector:.4} s; 1/B_L = {:.4} s, 2π/ω_n = {:.4} s",
            1.0 / LOOP_HZ,
            TAU / omega_n
        );
        assert!(
            (measured / model - 1.0).abs() < 0.05,
            "{step_hz} Hz: measured {measured:.4} s, model {model:.4} s"
        );
        assert!(measured > 0.5 / LOOP_HZ && measured < 2.0 * TAU / omega_n);
        assert!(detector < 0.5, "lock detector after {detector} s");
    }
}

/// Last time the linear-model phase error exceeds `tolerance`, by dense sampling.
fn model_settling_time(delta_omega: f64, omega_n: f64, zeta: f64, tolerance: f64) -> f64 {
    let root = (1.0 - zeta * zeta).sqrt();
    let phi = |t: f64| {
        delta_omega / omega_n * (-zeta * omega_n * t).exp() * (omega_n * root * t).sin() / root
    };
    let dt = 1e-5;
    (0..200_000)
        .rev()
        .map(|k| k as f64 * dt)
        .find(|&t| phi(t).abs() >= tolerance)
        .unwrap_or(0.0)
}

/// Pure noise: neither loop reports lock at any sample, and the output stays finite.
#[test]
fn noise_alone_never_locks() {
    let mut x = vec![Complex32::default(); (2.0 * FS) as usize];
    ComplexNoise::new(0.1, 40).add_to(&mut x);
    let pll = CarrierPll::new(PllConfig::new(FS, LOOP_HZ)).unwrap();
    let mut acq = CarrierAcquisition::new(pll, CarrierKind::Line, 1000.0, FS).unwrap();
    let costas = CostasLoop::new(PllConfig::new(FS, LOOP_HZ)).unwrap();
    let mut sq = CarrierAcquisition::new(costas, CarrierKind::Suppressed, 1000.0, FS).unwrap();
    let mut y = [Complex32::default()];
    for s in &x {
        acq.process(std::slice::from_ref(s), &mut y);
        assert!(y[0].re.is_finite() && y[0].im.is_finite());
        sq.process(std::slice::from_ref(s), &mut y);
        assert!(y[0].re.is_finite() && y[0].im.is_finite());
        assert!(!acq.carrier_loop().is_locked());
        assert!(!sq.carrier_loop().is_locked());
    }
    assert_eq!(acq.acquired_hz(), None, "no line stands out of noise");
}

/// The acquisition block on a realistic input, random chunkings: bit-exact (the decision is
/// at a fixed sample count, every stage is per sample).
#[test]
fn acquisition_is_chunk_invariant_on_random_splits() {
    let x = am(-321.0, 0.6, 1e-3, 9);
    let make = || {
        let pll = CarrierPll::new(PllConfig::new(FS, LOOP_HZ)).unwrap();
        CarrierAcquisition::new(pll, CarrierKind::Line, 1000.0, FS).unwrap()
    };
    let whole = process_in_chunks(&mut make(), &x, &[x.len()]);
    let mut rng = StdRng::seed_from_u64(99);
    for _ in 0..4 {
        let sizes: Vec<usize> = (0..50).map(|_| rng.random_range(1..9000)).collect();
        assert_eq!(process_in_chunks(&mut make(), &x, &sizes), whole);
    }
}

/// The carrier filter (one-sideband synchronous AM's loop: 10 Hz, filter at 200 Hz) does not
/// slow acquisition: behind the coarse FFT search, for carriers 200 Hz, −200 Hz and 650 Hz off,
/// the time until the loop is locked with the frequency within 1 Hz is within 5 % of the same
/// loop's without the filter (tolerance: the filter's delay, about 1.6 ms, costs a little
/// damping; the linear model puts its B_L 2.7 % higher); and the small-step settling of the
/// phase to 0.1 rad likewise, compared with the loop without the filter and with
/// `model_settling_time` (Gardner, Phaselock Techniques, ch. 2) within 10 % (5 % for the
/// unfiltered loop above, plus the filter's delay).
#[test]
fn carrier_filter_does_not_slow_acquisition() {
    let bandwidth = 10.0;
    let lock_time = |config: PllConfig, offset: f64, seed: u64| {
        let x = am(offset, 1.0, 1e-3, seed);
        let pll = CarrierPll::new(config).unwrap();
        let mut acq = CarrierAcquisition::new(pll, CarrierKind::Line, 1000.0, FS).unwrap();
        let mut good = Vec::with_capacity(x.len());
        let mut y = [Complex32::default()];
        for s in &x {
            acq.process(std::slice::from_ref(s), &mut y);
            let pll = acq.carrier_loop();
            good.push(pll.is_locked() && (pll.frequency_hz() - offset).abs() < 1.0);
        }
        settled_from(&good).expect("locked by the end") as f64 / FS
    };
    for (offset, seed) in [(200.0, 1), (-200.0, 2), (650.0, 3)] {
        let plain = lock_time(PllConfig::new(FS, bandwidth), offset, seed);
        let filtered = lock_time(
            PllConfig::new(FS, bandwidth).with_carrier_filter(),
            offset,
            seed,
        );
        eprintln!("carrier {offset:+} Hz: locked within 1 Hz after {plain:.4} s without the carrier filter, {filtered:.4} s with it");
        assert!(
            filtered <= 1.05 * plain,
            "{offset} Hz: {filtered:.4} s against {plain:.4} s"
        );
    }

    let settle = |config: PllConfig, step_hz: f64| {
        let len = (FS * 1.5) as usize;
        let mut pll = CarrierPll::new(config).unwrap();
        let mut small = Vec::with_capacity(len);
        for n in 0..len {
            let truth = TAU * step_hz * n as f64 / FS;
            pll.next_sample(Complex32::from_polar(1.0, truth as f32));
            let error =
                (truth - pll.phase() + std::f64::consts::PI).rem_euclid(TAU) - std::f64::consts::PI;
            small.push(error.abs() < 0.1);
        }
        settled_from(&small).unwrap() as f64 / FS
    };
    for step_hz in [1.0, 2.0] {
        let plain = settle(PllConfig::new(FS, bandwidth), step_hz);
        let config = PllConfig::new(FS, bandwidth).with_carrier_filter();
        let filtered = settle(config, step_hz);
        let gains = CarrierPll::new(config).unwrap().gains();
        let omega_n = gains.k2.sqrt() * FS;
        let zeta = gains.k1 / (2.0 * gains.k2.sqrt());
        let model = model_settling_time(TAU * step_hz, omega_n, zeta, 0.1);
        eprintln!("step {step_hz} Hz: |φ| < 0.1 rad after {plain:.4} s without the filter, {filtered:.4} s with it, model {model:.4} s");
        assert!(
            filtered <= 1.05 * plain,
            "{filtered:.4} s against {plain:.4} s"
        );
        assert!(
            (filtered / model - 1.0).abs() < 0.1,
            "{filtered:.4} s, model {model:.4} s"
        );
    }
}

//! DSB-SC end to end: Costas recovery of an offset suppressed carrier, the 180° ambiguity,
//! coherent-detection noise performance against the textbook, noise alone, chunk invariance.

use amrx::block::{process_in_chunks, process_to_vec};
use amrx::demod::{build_receiver, DsbReceiver, Mode, Receiver, ReceiverConfig};
use amrx::dsp::AgcSettings;
use amrx::dsp::ComplexNoise;
use amrx::measure::{sinad_db, snr_in_band_db};
use amrx::Complex32;
use rand::rngs::StdRng;
use rand::{RngExt, SeedableRng};
use std::f64::consts::{PI, TAU};

const RATE: f64 = 96_000.0;
const AUDIO: f64 = 48_000.0;
const OFFSET: f64 = -20_000.0;
const TONE: f64 = 1000.0;

/// DSB-SC with a tone: A·cos(2πf_m t)·e^{j(2πf_c t + φ)}, plus complex white noise of power
/// `noise` (E|w|² = N0·fs).
fn dsb(
    carrier_hz: f64,
    phase: f64,
    amplitude: f64,
    seconds: f64,
    noise: f64,
    seed: u64,
) -> Vec<Complex32> {
    let mut x: Vec<Complex32> = (0..(seconds * RATE) as usize)
        .map(|n| {
            let t = n as f64 / RATE;
            let m = amplitude * (TAU * TONE * t).cos();
            Complex32::from_polar(m as f32, (TAU * carrier_hz * t + phase) as f32)
        })
        .collect();
    ComplexNoise::new(noise, seed).add_to(&mut x);
    x
}

fn config() -> ReceiverConfig {
    with_agc(AgcSettings::OFF)
}

fn with_agc(agc: AgcSettings) -> ReceiverConfig {
    let mut c = ReceiverConfig::new(RATE, OFFSET);
    c.options.agc = Some(agc);
    c
}

fn receive(config: ReceiverConfig, x: &[Complex32]) -> (Vec<f32>, DsbReceiver) {
    let mut rx = DsbReceiver::new(Mode::Dsb, &config).unwrap();
    let audio = process_to_vec(&mut rx, x);
    (audio, rx)
}

fn after(audio: &[f32], seconds: f64) -> &[f32] {
    &audio[(seconds * AUDIO) as usize..]
}

/// Requirement: a suppressed carrier 35 Hz off the given offset is recovered with SINAD ≥ 30 dB
/// at high CNR (here SNR_C = 60 dB), locked, frequency within 0.1 Hz; with the default speech
/// AGC too.
#[test]
fn carrier_35_hz_off_is_recovered() {
    let x = dsb(OFFSET + 35.0, 0.4, 0.3, 2.0, 1e-7, 1);
    for agc in [AgcSettings::OFF, Mode::Dsb.spec().agc] {
        let (audio, rx) = receive(with_agc(agc), &x);
        let m = rx.measurements();
        let sinad = sinad_db(after(&audio, 0.8), AUDIO, TONE).unwrap();
        let carrier = m.carrier_offset_hz.unwrap();
        eprintln!(
            "agc {agc:?}: SINAD {sinad:.1} dB, carrier {carrier:.3} Hz (coarse {:?}), locked {:?}",
            rx.detector().acquisition().acquired_hz(),
            m.locked
        );
        assert_eq!(m.locked, Some(true));
        assert!(
            (carrier - OFFSET - 35.0).abs() < 0.1,
            "carrier at {carrier}"
        );
        assert!(sinad >= 30.0, "SINAD {sinad:.1} dB");
        assert_eq!(m.cnr_db, None, "no carrier to measure CNR against");
        assert!(m.warnings.is_empty(), "{:?}", m.warnings);
    }
}

/// The Costas loop's 180° ambiguity only flips the audio. Two checks: (a) an input negated
/// (carrier phase + π) gives exactly the same or exactly the negated audio, since every stage is
/// linear or odd and the Costas detector I·Q is even; (b) over carrier phases round the circle the audio comes out
/// either upright or inverted, both occur, and carrier phases π apart give the same SINAD
/// (within 0.02 dB; other phase pairs differ by up to 0.2 dB at 71 dB SINAD because the noise
/// is projected onto a different axis).
#[test]
fn half_turn_ambiguity_only_flips_the_audio() {
    let x = dsb(OFFSET + 35.0, 0.2, 0.3, 1.5, 1e-7, 2);
    let negated: Vec<Complex32> = x.iter().map(|s| -s).collect();
    let (a, _) = receive(config(), &x);
    let (b, _) = receive(config(), &negated);
    // The loops start at the phase of their first sample, so a negated input starts the NCO
    // half a turn round and the audio comes out the same; without that alignment it would come
    // out negated. Either way it is exact: the same audio or its exact negation.
    let same = a.iter().zip(&b).all(|(p, q)| p == q);
    let flipped = a.iter().zip(&b).all(|(p, q)| *p == -*q);
    assert!(
        same || flipped,
        "neither the same audio nor its exact negation"
    );

    let polarity_and_sinad = |phase: f64| {
        let (audio, rx) = receive(config(), &dsb(OFFSET, phase, 0.3, 1.5, 1e-7, 3));
        assert_eq!(rx.measurements().locked, Some(true));
        let audio = after(&audio, 0.8);
        let fit = amrx::measure::fit_tone(audio, AUDIO, TONE).unwrap();
        (fit.phase, sinad_db(audio, AUDIO, TONE).unwrap())
    };
    // Carrier phases round the circle: each run settles at one of the two stable points.
    let runs: Vec<(f64, f64)> = (0..8)
        .map(|k| polarity_and_sinad(0.1 + k as f64 * PI / 4.0))
        .collect();
    let reference = runs[0].0;
    let inverted = runs
        .iter()
        .filter(|(p, _)| (p - reference).cos() < -0.999)
        .count();
    let upright = runs
        .iter()
        .filter(|(p, _)| (p - reference).cos() > 0.999)
        .count();
    let sinads: Vec<f64> = runs.iter().map(|r| r.1).collect();
    // Phases π apart project the same noise onto the same axis (up to sign): same SINAD.
    let pair_gap = (0..4)
        .map(|k| (sinads[k] - sinads[k + 4]).abs())
        .fold(0.0, f64::max);
    eprintln!("upright {upright}, inverted {inverted}; SINADs {sinads:.2?} dB (phases π apart differ by ≤ {pair_gap:.4} dB)");
    assert_eq!(
        upright + inverted,
        runs.len(),
        "audio is either upright or inverted"
    );
    // The loop aligns its NCO to the first sample, whose sign here is the message's at t = 0,
    // so every run settles upright; the inverted stable point is shown in the Costas loop's own
    // tests, which start it from a set phase.
    assert!(upright > 0, "upright runs");
    assert!(pair_gap < 0.02, "SINAD differs by {pair_gap:.3} dB");
}

/// Coherent detection of DSB-SC (Haykin, Communication Systems, ch. 2): figure of merit
/// SNR_O/SNR_C = 1.
///
/// Definitions at complex baseband, message bandwidth W, complex white noise of two-sided
/// density N0 (E|w|² = N0·fs): SNR_C = mean|s|²/(N0·W), mean|s|² = A²/2 for s = A cos(ω_m t)
/// e^{jθ}. De-rotated, Re(y) = A cos ω_m t + w_I: only the in-phase noise w_I = Re(w) is kept,
/// density N0/2, so in (0, W] of the real audio (both signs of frequency) its power is
/// 2·(N0/2)·W = N0·W, while the tone has A²/2: SNR_O = A²/(2·N0·W) = SNR_C, figure of merit 1
/// (the quadrature noise is rejected, exactly compensating the sidebands' coherent addition).
/// Within 0.5 dB (requirement): the noise estimate from 4 s in 3 kHz scatters by about ±0.1 dB
/// between noise seeds (seen: −0.11 to +0.10 dB); Costas jitter here costs < 0.01 dB.
#[test]
fn coherent_dsb_figure_of_merit_is_one() {
    let w = Mode::Dsb.spec().bandwidth_hz;
    for (snr_c_db, seed) in [(20.0, 4), (25.0, 5), (30.0, 6)] {
        let amplitude: f64 = 0.3;
        let n0 = amplitude * amplitude / 2.0 / (w * 10f64.powf(snr_c_db / 10.0));
        let x = dsb(OFFSET + 12.0, 1.0, amplitude, 5.0, n0 * RATE, seed);
        let (audio, rx) = receive(config(), &x);
        assert_eq!(rx.measurements().locked, Some(true));
        let snr_o = snr_in_band_db(after(&audio, 0.8), AUDIO, TONE, w).unwrap();
        eprintln!(
            "SNR_C {snr_c_db} dB: SNR_O {snr_o:.2} dB, figure of merit {:.3}",
            10f64.powf((snr_o - snr_c_db) / 10.0)
        );
        assert!((snr_o - snr_c_db).abs() < 0.5, "{snr_o:.2} vs {snr_c_db}");
    }
}

/// Pure noise: locked = false, a warning, finite audio, through the receiver and build_receiver.
#[test]
fn noise_alone_reports_no_lock() {
    let mut x = vec![Complex32::default(); (1.5 * RATE) as usize];
    ComplexNoise::new(0.01, 3).add_to(&mut x);
    let (audio, rx) = receive(config(), &x);
    let m = rx.measurements();
    assert_eq!(m.locked, Some(false));
    assert!(
        m.warnings.iter().any(|w| w.contains("did not lock")),
        "{:?}",
        m.warnings
    );
    assert!(audio.iter().all(|a| a.is_finite()));

    let mut boxed = build_receiver(Mode::Dsb, &ReceiverConfig::new(RATE, OFFSET)).unwrap();
    assert_eq!(boxed.bandwidth_hz(), 3000.0);
    let audio = process_to_vec(boxed.as_mut(), &x);
    assert_eq!(boxed.measurements().locked, Some(false));
    assert!(audio.iter().all(|a| a.is_finite()));
}

/// Bit-exact under random chunkings, with the default AGC in the chain.
#[test]
fn chunk_invariant() {
    let x = dsb(OFFSET - 60.0, 2.0, 0.3, 0.8, 1e-5, 7);
    let make = || DsbReceiver::new(Mode::Dsb, &ReceiverConfig::new(RATE, OFFSET)).unwrap();
    let whole = process_to_vec(&mut make(), &x);
    let mut rng = StdRng::seed_from_u64(8);
    let random: Vec<usize> = (0..40).map(|_| rng.random_range(1..20_000)).collect();
    for sizes in [vec![1usize, 7, 1024], vec![8191, 8193], random] {
        assert_eq!(
            process_in_chunks(&mut make(), &x, &sizes),
            whole,
            "{sizes:?}"
        );
    }
}

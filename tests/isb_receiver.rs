//! The ISB receiver end to end: stereo layout, crosstalk between the sidebands, chunking.

use amrx::block::{process_in_chunks, process_to_vec, Block};
use amrx::demod::{build_receiver, IsbReceiver, Mode, ReceiverConfig, SsbMethod};
use amrx::dsp::AgcSettings;
use amrx::measure::fit_tone;
use amrx::Complex32;
use rand::{rngs::StdRng, RngExt, SeedableRng};
use std::f64::consts::TAU;

const FS: f64 = 96_000.0;
const AUDIO: f64 = 48_000.0;
const CARRIER: f64 = -15_000.0;

/// Tones (amplitude, frequency relative to the carrier) at [`FS`].
fn tones(list: &[(f32, f64)], seconds: f64) -> Vec<Complex32> {
    (0..(FS * seconds) as usize)
        .map(|n| {
            let t = n as f64 / FS;
            list.iter().fold(Complex32::default(), |acc, &(a, f)| {
                acc + Complex32::from_polar(a, (TAU * ((CARRIER + f) * t).fract()) as f32)
            })
        })
        .collect()
}

fn receiver(method: SsbMethod) -> IsbReceiver {
    let mut c = ReceiverConfig::new(FS, CARRIER);
    c.options.ssb_method = method;
    c.options.agc = Some(AgcSettings::OFF);
    IsbReceiver::new(Mode::Isb, &c).unwrap()
}

/// (left, right) amplitudes of the tone at `f`, after 0.5 s of settling.
fn channel_amplitudes(stereo: &[f32], f: f64) -> (f64, f64) {
    let skip = (0.5 * AUDIO) as usize;
    let left: Vec<f32> = stereo.iter().step_by(2).skip(skip).copied().collect();
    let right: Vec<f32> = stereo
        .iter()
        .skip(1)
        .step_by(2)
        .skip(skip)
        .copied()
        .collect();
    let a = |x: &[f32]| fit_tone(x, AUDIO, f).unwrap().amplitude;
    (a(&left), a(&right))
}

/// A tone in the upper sideband only comes out on the right, ≥ 40 dB above its leak on the
/// left, and a lower-sideband tone the other way round. Expected: the detectors' opposite-
/// sideband rejection (≥ 60 dB by design, see `tests/ssb_receiver.rs`).
#[test]
fn crosstalk_at_least_40_db() {
    for method in [SsbMethod::Phasing, SsbMethod::Weaver] {
        for f in [400.0, 1500.0, 2800.0] {
            let usb = process_to_vec(&mut receiver(method), &tones(&[(0.5, f)], 1.5));
            let (leak, wanted) = channel_amplitudes(&usb, f);
            let upper_db = 20.0 * (wanted / leak).log10();
            let lsb = process_to_vec(&mut receiver(method), &tones(&[(0.5, -f)], 1.5));
            let (wanted_l, leak_r) = channel_amplitudes(&lsb, f);
            let lower_db = 20.0 * (wanted_l / leak_r).log10();
            println!("{method:?} {f} Hz: USB→right {wanted:.4}, crosstalk {upper_db:.1} dB; LSB→left {wanted_l:.4}, crosstalk {lower_db:.1} dB");
            assert!((wanted - 0.5).abs() < 0.01 && (wanted_l - 0.5).abs() < 0.01);
            assert!(upper_db >= 40.0 && lower_db >= 40.0, "{method:?} {f} Hz");
        }
    }
}

/// Two programmes at once: each channel carries its own tone.
#[test]
fn two_programmes_are_separated() {
    let x = tones(&[(0.4, -700.0), (0.4, 1900.0)], 1.5);
    let out = process_to_vec(&mut receiver(SsbMethod::Phasing), &x);
    let (l700, r700) = channel_amplitudes(&out, 700.0);
    let (l1900, r1900) = channel_amplitudes(&out, 1900.0);
    assert!((l700 - 0.4).abs() < 0.01 && (r1900 - 0.4).abs() < 0.01);
    assert!(r700 < 4e-3 && l1900 < 4e-3, "{r700} {l1900}");
}

#[test]
fn stereo_layout_and_chunk_invariance() {
    let rx = build_receiver(Mode::Isb, &ReceiverConfig::new(FS, CARRIER)).unwrap();
    assert_eq!(rx.audio_channels(), 2);
    assert_eq!(rx.bandwidth_hz(), Mode::Isb.spec().bandwidth_hz);
    let x = tones(&[(0.3, -500.0), (0.3, 1200.0)], 0.6);
    for method in [SsbMethod::Phasing, SsbMethod::Weaver] {
        let mut whole_rx = receiver(method);
        let whole = process_to_vec(&mut whole_rx, &x);
        assert_eq!(whole.len() % 2, 0);
        assert!(whole.len() <= whole_rx.max_output_len(x.len()));
        let mut rng = StdRng::seed_from_u64(4);
        let random: Vec<usize> = (0..64).map(|_| rng.random_range(1..20_000)).collect();
        for sizes in [vec![1usize, 7, 1024], random] {
            assert_eq!(process_in_chunks(&mut receiver(method), &x, &sizes), whole);
        }
    }
}

//! Every receiver of the mode table, and the lab's diode receiver, keeps the block contract
//! (`amrx::block::check`): chunk invariance, output bound, reset, rate, flush, and a delay
//! measured from two message tones' phases equal to the one reported, within half an audio
//! sample.

use amrx::block::check::{check_block, BlockCheck, DelayProbe};
use amrx::block::{process_to_vec, Block};
use amrx::demod::{build_receiver, Receiver, ReceiverConfig, Transmission, MODES};
use amrx::Complex32;
use std::f64::consts::TAU;

const RATE: f64 = 240_000.0;
const OFFSET: f64 = 30_000.0;
/// Message tones 1000 and 1020 Hz: inside every mode's band, 20 Hz apart so that delays up
/// to 25 ms are unambiguous.
const TONES_HZ: [f64; 2] = [1000.0, 1020.0];

/// A transmission of `kind` carrying a tone at `f` cycles per input sample, `seconds` long.
fn emission(kind: Transmission, f: f64, seconds: f64) -> Vec<Complex32> {
    let len = (seconds * RATE) as usize;
    let carrier = OFFSET / RATE;
    (0..len)
        .map(|n| {
            let n = n as f64;
            let lo = Complex32::from_polar(1.0, (TAU * ((carrier - f) * n).fract()) as f32);
            let hi = Complex32::from_polar(1.0, (TAU * ((carrier + f) * n).fract()) as f32);
            let c = Complex32::from_polar(1.0, (TAU * (carrier * n).fract()) as f32);
            match kind {
                Transmission::FullCarrier => c * 0.5 + (lo + hi) * 0.125,
                Transmission::SuppressedCarrier => (lo + hi) * 0.25,
                Transmission::UpperSideband => hi * 0.25,
                Transmission::LowerSideband | Transmission::IndependentSidebands => lo * 0.25,
                Transmission::Vestigial => c * 0.5 + hi * 0.25,
            }
        })
        .collect()
}

fn check_receiver(name: &str, make: &dyn Fn() -> Box<dyn Receiver>, kind: Transmission) {
    let channels = make().audio_channels();
    let input = emission(kind, TONES_HZ[0] / RATE, 0.6);
    let signal = |f: f64| emission(kind, f, 1.2);
    eprintln!("{name}: delay {:.1} input samples", make().delay());
    check_block(&BlockCheck {
        channels,
        delay_probe: Some(DelayProbe {
            signal: &signal,
            tones: TONES_HZ.map(|f| f / RATE),
        }),
        ..BlockCheck::new(make, &input)
    });
}

#[test]
fn every_mode_keeps_the_block_contract() {
    for spec in &MODES {
        let make = || build_receiver(spec.mode, &ReceiverConfig::new(RATE, OFFSET)).unwrap();
        check_receiver(spec.name, &make, spec.transmission);
    }
}

#[test]
fn the_diode_receiver_keeps_the_block_contract() {
    let mut config = ReceiverConfig::new(RATE, OFFSET);
    config.options.bandwidth_hz = Some(5000.0);
    let make = || amrx::lab::Detector::diode().build(&config).unwrap();
    check_receiver("diode", &make, Transmission::FullCarrier);
}

/// A 2.000 s recording gives 2.000 s of audio once the delay is trimmed and the tail flushed,
/// to within one audio sample, in every mode and at two audio rates.
#[test]
fn output_duration_equals_input_duration() {
    for audio_rate in [48_000.0, 44_100.0] {
        for spec in &MODES {
            let mut config = ReceiverConfig::new(RATE, OFFSET);
            config.options.audio_rate = audio_rate;
            let mut rx = build_receiver(spec.mode, &config).unwrap();
            let input = emission(spec.transmission, 0.004, 2.0);
            let mut audio = process_to_vec(rx.as_mut(), &input);
            let mut tail = vec![0.0; rx.flush_output_len()];
            let before = audio.len();
            let n = rx.flush(&mut tail);
            audio.extend_from_slice(&tail[..n]);
            eprintln!(
                "{} {audio_rate}: {before} + {n} flushed, delay {}",
                spec.name,
                rx.delay()
            );
            let channels = rx.audio_channels();
            let lead = (rx.delay() * rx.rate_ratio() / channels as f64).round();
            let frames = audio.len() / channels - lead as usize;
            let expected = 2.0 * audio_rate;
            assert!(
                (frames as f64 - expected).abs() <= 1.0,
                "{} at {audio_rate}: {frames} frames for 2.000 s",
                spec.name
            );
        }
    }
}

/// Retuning a running receiver moves it to the new station without a click: the audio
/// around the step stays within the level of the settled audio.
#[test]
fn retuning_is_phase_continuous() {
    let mut rx =
        build_receiver(amrx::demod::Mode::Usb, &ReceiverConfig::new(RATE, OFFSET)).unwrap();
    // A tone 1 kHz above OFFSET, then retune by 10 Hz: the audio tone moves by 10 Hz.
    let input = emission(Transmission::UpperSideband, TONES_HZ[0] / RATE, 1.0);
    let (first, second) = input.split_at(input.len() / 2);
    let mut audio = process_to_vec(rx.as_mut(), first);
    rx.set_offset(OFFSET - 10.0).unwrap();
    assert_eq!(rx.offset_hz(), OFFSET - 10.0);
    audio.extend(process_to_vec(rx.as_mut(), second));
    let settled = &audio[audio.len() / 4..];
    let peak = settled.iter().fold(0.0f32, |m, x| m.max(x.abs()));
    let rms = (settled.iter().map(|x| x * x).sum::<f32>() / settled.len() as f32).sqrt();
    // A sine's crest factor is √2; a click would stand far above it.
    assert!(
        peak / rms < 1.6,
        "crest factor {} around the retune",
        peak / rms
    );
    assert!(
        rx.set_offset(RATE).is_err(),
        "retuning outside the band is refused"
    );
}

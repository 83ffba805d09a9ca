//! The SSB receiver end to end on synthetic IQ: opposite-sideband rejection for both methods,
//! the SSB figure of merit, J3E/R3E/H3E, and carrier lock on a mistuned dial.

use amrx::block::process_to_vec;
use amrx::demod::{Mode, Receiver, ReceiverConfig, Sideband, SsbMethod, SsbReceiver};
use amrx::dsp::AgcSettings;
use amrx::dsp::ComplexNoise;
use amrx::measure::{estimate_tone_hz, fit_tone, sinad_db, snr_in_band_db};
use amrx::Complex32;
use std::f64::consts::TAU;

/// Input rate: low, so the tests stay quick; the receiver decimates by 2 to 48 kHz.
const FS: f64 = 96_000.0;
const AUDIO: f64 = 48_000.0;
/// The dial (carrier) frequency in the recording.
const DIAL: f64 = 12_000.0;
/// Audio skipped while filters, loops and AGC settle, in seconds.
const SETTLE_S: f64 = 0.5;

/// A carrier of amplitude `carrier` at `carrier_hz` plus tones (amplitude, frequency relative
/// to the carrier: positive = upper sideband), `seconds` long at [`FS`].
fn ssb_signal(carrier_hz: f64, carrier: f32, tones: &[(f32, f64)], seconds: f64) -> Vec<Complex32> {
    (0..(FS * seconds) as usize)
        .map(|n| {
            let t = n as f64 / FS;
            let mut x = Complex32::from_polar(carrier, (TAU * (carrier_hz * t).fract()) as f32);
            for &(a, f) in tones {
                x += Complex32::from_polar(a, (TAU * ((carrier_hz + f) * t).fract()) as f32);
            }
            x
        })
        .collect()
}

fn mode_of(sideband: Sideband) -> Mode {
    match sideband {
        Sideband::Upper => Mode::Usb,
        Sideband::Lower => Mode::Lsb,
    }
}

fn receiver(sideband: Sideband, method: SsbMethod, agc: AgcSettings) -> SsbReceiver {
    let mut c = ReceiverConfig::new(FS, DIAL);
    c.options.ssb_method = method;
    c.options.agc = Some(agc);
    SsbReceiver::new(mode_of(sideband), &c).unwrap()
}

fn settled(audio: &[f32]) -> &[f32] {
    &audio[(SETTLE_S * AUDIO) as usize..]
}

fn tone_amplitude(audio: &[f32], f: f64) -> f64 {
    fit_tone(settled(audio), AUDIO, f).unwrap().amplitude
}

/// Opposite-sideband rejection through the whole receiver, AGC off: a tone in the wrong
/// sideband against the same tone in the right one. Required ≥ 50 dB; the phasing method's
/// Hilbert ripple of 0.002 predicts about 20·log10(2/δ) = 60 dB (see `dsp::hilbert`), the
/// Weaver method's low-pass stopband 65 dB.
#[test]
fn opposite_sideband_rejection_at_least_50_db_for_both_methods() {
    for method in [SsbMethod::Phasing, SsbMethod::Weaver] {
        for sideband in [Sideband::Upper, Sideband::Lower] {
            let s = if sideband == Sideband::Upper {
                1.0
            } else {
                -1.0
            };
            for f in [300.0, 1000.0, 2500.0] {
                let run = |side: f64| {
                    let x = ssb_signal(DIAL, 0.0, &[(0.5, side * f)], 1.5);
                    let audio =
                        process_to_vec(&mut receiver(sideband, method, AgcSettings::OFF), &x);
                    tone_amplitude(&audio, f)
                };
                let (wanted, unwanted) = (run(s), run(-s));
                let rejection = 20.0 * (wanted / unwanted).log10();
                println!("{method:?} {sideband:?} {f} Hz: gain {wanted:.4}/0.5, rejection {rejection:.1} dB");
                // Unity gain in the passband (the detectors' ½ undoes the sideband's ×2).
                assert!(
                    (wanted - 0.5).abs() < 0.01,
                    "{method:?} {sideband:?} {f}: {wanted}"
                );
                assert!(
                    rejection >= 50.0,
                    "{method:?} {sideband:?} {f}: {rejection:.1} dB"
                );
            }
        }
    }
}

/// Coherent SSB in white noise has figure of merit 1: output SNR = channel (baseband) SNR
/// (S. Haykin, *Communication Systems*, ch. 2, noise in SSB receivers), with the channel SNR
/// = mean|s|²/(N0·W), N0 the two-sided density of complex white noise (E|w|² = N0·fs), and the
/// output SNR = tone power over the noise in (0, W] after detection, AGC off. Within 0.5 dB:
/// 4 s at 48 kHz put the noise estimate's spread near 0.01 dB; the detectors' 100 Hz low edge
/// moves the in-band noise by at most 100/2700 (0.16 dB).
#[test]
fn figure_of_merit_is_one() {
    let w = Mode::Usb.spec().bandwidth_hz;
    let snr_db = 30.0;
    let a = 0.5f32;
    let n0 = f64::from(a * a) / (w * 10f64.powf(snr_db / 10.0));
    for (i, method) in [SsbMethod::Phasing, SsbMethod::Weaver]
        .into_iter()
        .enumerate()
    {
        let mut x = ssb_signal(DIAL, 0.0, &[(a, 1000.0)], 4.5);
        ComplexNoise::new(n0 * FS, 40 + i as u64).add_to(&mut x);
        let audio = process_to_vec(&mut receiver(Sideband::Upper, method, AgcSettings::OFF), &x);
        let out = snr_in_band_db(settled(&audio), AUDIO, 1000.0, w).unwrap();
        println!("{method:?}: channel SNR {snr_db} dB, output SNR {out:.2} dB");
        assert!((out - snr_db).abs() < 0.5, "{method:?}: {out:.2} dB");
    }
}

/// Suppressed (J3E), reduced (R3E, −16 dB) and full (H3E, carrier equal to the tone) carrier
/// all demodulate with the default AGC: the carrier is a DC term the audio DC blocker removes.
/// Channel SNR 50 dB, so SINAD well above 30 dB is expected (TIA-603 definition, see
/// `measure::sinad_db`).
#[test]
fn j3e_r3e_h3e_give_sinad_above_30_db() {
    let w = Mode::Usb.spec().bandwidth_hz;
    let n0 = 0.25 / (w * 1e5);
    for method in [SsbMethod::Phasing, SsbMethod::Weaver] {
        for (name, carrier) in [("J3E", 0.0f32), ("R3E", 0.5 * 0.158_489), ("H3E", 0.5)] {
            for sideband in [Sideband::Upper, Sideband::Lower] {
                let f = if sideband == Sideband::Upper {
                    1000.0
                } else {
                    -1000.0
                };
                let mut x = ssb_signal(DIAL, carrier, &[(0.5, f)], 2.0);
                ComplexNoise::new(n0 * FS, 9).add_to(&mut x);
                let mut rx = receiver(sideband, method, AgcSettings::SPEECH);
                let audio = process_to_vec(&mut rx, &x);
                let sinad = sinad_db(settled(&audio), AUDIO, 1000.0).unwrap();
                println!("{method:?} {name} {sideband:?}: SINAD {sinad:.1} dB");
                assert!(
                    sinad >= 30.0,
                    "{method:?} {name} {sideband:?}: {sinad:.1} dB"
                );
                let m = rx.measurements();
                assert_eq!((m.locked, m.carrier_offset_hz), (None, None));
            }
        }
    }
}

/// With carrier lock and a −16 dB pilot, a dial 40 Hz low is corrected: the tone comes out at
/// its modulating frequency within 0.5 Hz (without lock it is 40 Hz off), and the reported
/// carrier is the true one within 0.5 Hz.
#[test]
fn carrier_lock_corrects_a_40_hz_dial_error() {
    let error = 40.0;
    let x = {
        let mut x = ssb_signal(DIAL + error, 0.5 * 0.158_489, &[(0.5, 1000.0)], 4.0);
        ComplexNoise::new(0.25 / (2700.0 * 1e4) * FS, 2).add_to(&mut x);
        x
    };
    for method in [SsbMethod::Phasing, SsbMethod::Weaver] {
        for lock in [false, true] {
            let mut c = ReceiverConfig::new(FS, DIAL);
            c.options.ssb_method = method;
            c.options.carrier_lock = lock;
            let mut rx = SsbReceiver::new(Mode::Usb, &c).unwrap();
            let audio = process_to_vec(&mut rx, &x);
            let last = &audio[audio.len() - 2 * AUDIO as usize..];
            let f = estimate_tone_hz(last, AUDIO).unwrap();
            let m = rx.measurements();
            println!("{method:?} lock {lock}: tone {f:.3} Hz, {m:?}");
            if lock {
                assert!((f - 1000.0).abs() < 0.5, "{method:?}: {f} Hz");
                assert_eq!(m.locked, Some(true));
                let carrier = m.carrier_offset_hz.unwrap();
                assert!((carrier - (DIAL + error)).abs() < 0.5, "{carrier}");
                assert!(m.cnr_db.is_some());
            } else {
                assert!((f - 1000.0 - error).abs() < 0.5, "{method:?}: {f} Hz");
                assert_eq!(m.locked, None);
            }
        }
    }
}

/// Carrier lock on a suppressed carrier (J3E) finds nothing, whether the channel is nearly
/// noise-free (the loop sees only the sideband's leak through the pilot filter) or noisy
/// (channel SNR 20 dB): reported as not locked, with a warning; at high SNR the audio is still
/// the clean, uncorrected sideband.
#[test]
fn carrier_lock_without_a_carrier_reports_no_lock() {
    let w = Mode::Usb.spec().bandwidth_hz;
    for snr_db in [50.0, 20.0] {
        let mut x = ssb_signal(DIAL, 0.0, &[(0.5, 1000.0)], 3.0);
        let n0 = 0.25 / (w * 10f64.powf(snr_db / 10.0));
        ComplexNoise::new(n0 * FS, 5).add_to(&mut x);
        let mut c = ReceiverConfig::new(FS, DIAL);
        c.options.carrier_lock = true;
        let mut rx = SsbReceiver::new(Mode::Usb, &c).unwrap();
        let audio = process_to_vec(&mut rx, &x);
        let m = rx.measurements();
        println!("SNR {snr_db} dB: {m:?}");
        assert_eq!(m.locked, Some(false));
        assert_eq!(m.carrier_offset_hz, None);
        assert!(!m.warnings.is_empty());
        if snr_db > 30.0 {
            let sinad = sinad_db(settled(&audio), AUDIO, 1000.0).unwrap();
            assert!(sinad > 30.0, "{sinad}");
        }
    }
}

/// The mode builder makes SSB receivers from the shared options, and bad loop parameters come
/// back as `InvalidParameter` naming the option (from `sync::LoopGains`).
#[test]
fn built_by_mode_with_loop_errors_propagated() {
    use amrx::demod::{build_receiver, Mode, ReceiverConfig};
    use amrx::Error;
    for mode in [Mode::Usb, Mode::Lsb] {
        let rx = build_receiver(mode, &ReceiverConfig::new(FS, DIAL)).unwrap();
        assert_eq!((rx.audio_channels(), rx.bandwidth_hz()), (1, 2700.0));
        for (bandwidth, damping, name) in [
            (Some(0.0), None, "loop_bandwidth_hz"),
            (Some(-5.0), None, "loop_bandwidth_hz"),
            (Some(1e6), None, "loop_bandwidth_hz"),
            (None, Some(0.0), "loop_damping"),
        ] {
            let mut c = ReceiverConfig::new(FS, DIAL);
            c.options.carrier_lock = true;
            c.options.loop_settings.bandwidth_hz = bandwidth;
            c.options.loop_settings.damping = damping;
            match build_receiver(mode, &c) {
                Err(Error::InvalidParameter { name: got, .. }) => assert_eq!(got, name),
                Err(other) => panic!("{other:?}"),
                Ok(_) => panic!("{bandwidth:?} {damping:?} accepted"),
            }
        }
    }
    let mut c = ReceiverConfig::new(FS, DIAL);
    c.options.loop_settings.bandwidth_hz = Some(0.0);
    assert!(build_receiver(Mode::Vsb, &c).is_err());
}

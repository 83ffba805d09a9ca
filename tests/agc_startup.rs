//! Row "AGC start-up": every mode with gain control, from the first sample, keeps its audio
//! within 1 dB of full scale (|y| ≤ 10^(1/20)) on a strong signal, including `am --agc slow`
//! and 16-bit PCM (no clipped samples).

use amrx::block::process_to_vec;
use amrx::demod::{build_receiver, Mode, ReceiverConfig, MODES};
use amrx::dsp::AgcSettings;
use amrx::Complex32;

const RATE: f64 = 96_000.0;

#[test]
fn no_mode_overshoots_full_scale_at_start_up() {
    // A strong two-tone-ish signal: a carrier plus a tone 1 kHz above it, amplitude 0.5.
    let x: Vec<Complex32> = (0..(0.5 * RATE) as usize)
        .map(|i| {
            let t = i as f64 / RATE;
            let a = 0.3 + 0.2 * (std::f64::consts::TAU * 700.0 * t).cos();
            Complex32::from_polar(a as f32, 0.0)
                + Complex32::from_polar(0.2, (std::f64::consts::TAU * 1000.0 * t) as f32)
        })
        .collect();
    let limit = 10f32.powf(1.0 / 20.0);
    let mut cases: Vec<(Mode, Option<AgcSettings>)> = MODES
        .iter()
        .filter(|m| !matches!(m.agc, AgcSettings::Fixed { .. }))
        .map(|m| (m.mode, None))
        .collect();
    cases.push((Mode::Am, Some(AgcSettings::SLOW)));
    cases.push((Mode::Sam, Some(AgcSettings::SPEECH)));
    for (mode, agc) in cases {
        let mut config = ReceiverConfig::new(RATE, 0.0);
        config.options.agc = agc;
        let mut rx = build_receiver(mode, &config).unwrap();
        let audio = process_to_vec(rx.as_mut(), &x);
        let first = &audio[..(0.02 * 48_000.0) as usize];
        let peak_first = first.iter().fold(0.0f32, |p, v| p.max(v.abs()));
        let peak = audio.iter().fold(0.0f32, |p, v| p.max(v.abs()));
        eprintln!("{mode} {agc:?}: first 20 ms peak {peak_first:.3}, overall {peak:.3}");
        assert!(peak <= limit, "{mode} {agc:?}: peak {peak}");
    }
}

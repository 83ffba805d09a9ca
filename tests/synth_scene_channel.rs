//! Channel effects in scene files: per-emission fading, drift and phase noise, scene-wide
//! impulse noise, their errors, seeds and chunk invariance.

mod common;

use amrx::measure::{find_carrier, PowerSpectrum};
use amrx::pipeline::synth_job::write_scene;
use amrx::synth::{Scene, SceneGenerator};
use amrx::{Complex32, Error};
use num_complex::Complex64;
use rand::{rngs::StdRng, RngExt, SeedableRng};
use std::f64::consts::TAU;
use std::path::Path;

fn parse(json: &str) -> Scene {
    Scene::parse(json, Path::new("test.json")).unwrap()
}

/// The whole scene in one piece.
fn generate(scene: &Scene) -> Vec<Complex32> {
    let mut g = SceneGenerator::new(scene, Path::new(".")).unwrap();
    let mut out = vec![Complex32::default(); g.remaining() as usize];
    assert_eq!(g.fill(&mut out), out.len());
    out
}

/// The scene in pieces of the given sizes, cycled.
fn generate_in_pieces(scene: &Scene, sizes: &[usize]) -> Vec<Complex32> {
    let mut g = SceneGenerator::new(scene, Path::new(".")).unwrap();
    let mut out = vec![Complex32::default(); g.remaining() as usize];
    let mut at = 0;
    for n in sizes.iter().cycle() {
        if at == out.len() {
            break;
        }
        let end = (at + n).min(out.len());
        assert_eq!(g.fill(&mut out[at..end]), end - at);
        at = end;
    }
    out
}

fn c64(z: Complex32) -> Complex64 {
    Complex64::new(f64::from(z.re), f64::from(z.im))
}

#[test]
fn moderate_fading_gives_a_rayleigh_carrier() {
    // A unit-power complex Gaussian gain (each Watterson path, and the two equal-power paths'
    // sum at one frequency) makes the carrier power exponential: P(|h|² < x·mean) = 1 − e^{−x}
    // (Rayleigh envelope). Moderate: spread 2σ = 0.5 Hz; |h|²'s correlation e^{−4π²σ²τ²}
    // integrates to 1/(2√π·σ) = 1.13 s, so 2000 s hold ≈ 1770 independent looks: the std of
    // the mean is ≈ 2.4 % (asserted 10 %), of P(< 0.1·mean) ≈ 0.007 (asserted 0.025), of
    // P(< mean) ≈ 0.011 (asserted 0.04). Blocks of 40 samples = 20 ms (≪ the 0.6 s coherence
    // time) span exactly 2 periods of the 100 Hz tone, so the sidebands cancel in the block's
    // carrier estimate mean(z·e^{−j2πf_c n/fs}).
    let (fs, fc, a, block) = (2000.0, 300.0, 0.5, 40usize);
    let scene = parse(
        r#"{"sample_rate":2000,"centre_frequency":5e6,"duration_s":2000,"seed":11,
        "emissions":[{"label":"FADED","mode":"am","offset_hz":300,"amplitude":0.5,"mu":0.5,
          "message":{"type":"tone","frequency_hz":100},"channel":{"fading":"moderate"}}]}"#,
    );
    let z = generate(&scene);
    let powers: Vec<f64> = z
        .chunks_exact(block)
        .enumerate()
        .skip(10)
        .map(|(b, chunk)| {
            let sum: Complex64 = chunk
                .iter()
                .enumerate()
                .map(|(k, v)| {
                    let n = (b * block + k) as f64;
                    c64(*v) * Complex64::from_polar(1.0, -TAU * fc * n / fs)
                })
                .sum();
            (sum / block as f64).norm_sqr() / (a * a)
        })
        .collect();
    let n = powers.len() as f64;
    let mean = powers.iter().sum::<f64>() / n;
    let below = |x: f64| powers.iter().filter(|p| **p < x * mean).count() as f64 / n;
    let (deep, median_ish) = (below(0.1), below(1.0));
    let max = powers.iter().cloned().fold(0.0, f64::max);
    let min = powers.iter().cloned().fold(f64::INFINITY, f64::min);
    eprintln!(
        "moderate fading: mean power {mean:.4} of unfaded, P(<0.1·mean) {deep:.4} (1−e^−0.1 = {:.4}), \
         P(<mean) {median_ish:.4} (1−e^−1 = {:.4}), range {:.1} dB",
        1.0 - (-0.1f64).exp(),
        1.0 - (-1.0f64).exp(),
        10.0 * (max / min).log10()
    );
    assert!((mean - 1.0).abs() < 0.10, "{mean}");
    assert!((deep - (1.0 - (-0.1f64).exp())).abs() < 0.025, "{deep}");
    assert!((median_ish - (1.0 - (-1.0f64).exp())).abs() < 0.04);
    assert!(10.0 * (max / min).log10() > 10.0);
}

#[test]
fn drift_moves_the_carrier_by_drift_times_time() {
    // f[n] = f₀ + Δf + a·n/fs (FrequencyOffset). One 2048-point frame (0.512 s, bin 1.95 Hz;
    // the carrier moves 1 Hz within it) at each end of a 60 s file: the peaks must lie at
    // the frames' mid-point frequencies, and differ by a × (distance of the mid-points),
    // within one bin.
    let (fs, frame, drift) = (4000.0, 2048usize, 2.0);
    let scene = parse(
        r#"{"sample_rate":4000,"centre_frequency":5e6,"duration_s":60,"seed":4,
        "emissions":[{"label":"DRIFTER","mode":"am","offset_hz":500,"amplitude":0.5,"mu":0.3,
          "message":{"type":"tone","frequency_hz":200},
          "channel":{"offset_hz":7,"drift_hz_per_s":2}}]}"#,
    );
    let z = generate(&scene);
    let peak_at = |from: usize| {
        let mut psd = PowerSpectrum::new(frame, fs).unwrap();
        psd.push(&z[from..from + frame]);
        let mid_s = (from as f64 + frame as f64 / 2.0) / fs;
        let want = 507.0 + drift * mid_s;
        (
            find_carrier(&psd, want, 30.0).unwrap().frequency_hz,
            want,
            mid_s,
        )
    };
    let (f_start, want_start, t_start) = peak_at(0);
    let (f_end, want_end, t_end) = peak_at(z.len() - frame);
    let bin = fs / frame as f64;
    eprintln!(
        "drift: carrier {f_start:.2} Hz at {t_start:.3} s (want {want_start:.2}), {f_end:.2} Hz at \
         {t_end:.3} s (want {want_end:.2}); difference {:.2} Hz, drift × Δt {:.2} Hz, drift × duration {:.1} Hz, bin {bin:.2} Hz",
        f_end - f_start,
        drift * (t_end - t_start),
        drift * 60.0
    );
    assert!((f_start - want_start).abs() < bin);
    assert!((f_end - want_end).abs() < bin);
    assert!(((f_end - f_start) - drift * (t_end - t_start)).abs() < bin);
}

#[test]
fn phase_noise_has_the_wiener_increment_variance_and_linewidth() {
    // Wiener phase of linewidth Δν: increments N(0, 2πΔν/fs) (PhaseNoise; C. H. Henry,
    // "Theory of the linewidth of semiconductor lasers", 1982, from memory). An unmodulated
    // carrier (μ = 0): arg(z[n+1]·z*[n]) − 2πf_c/fs is the increment. 4.8·10⁵ increments:
    // the variance's relative std is √(2/N) = 0.2 %, asserted 3 %. Loose second check: the
    // Lorentzian line's −3 dB full width is Δν; the Welch estimate (Hann, 0.98 Hz bins) adds
    // ≈ 1.5 bins of window width and per-bin scatter, so 0.7·Δν ..= 1.5·Δν.
    let (fs, fc, lw) = (8000.0, 1000.0, 10.0);
    let scene = parse(
        r#"{"sample_rate":8000,"centre_frequency":5e6,"duration_s":60,"seed":5,
        "emissions":[{"label":"WOBBLY","mode":"am","offset_hz":1000,"amplitude":0.5,"mu":0,
          "message":{"type":"tone","frequency_hz":300},
          "channel":{"phase_noise_linewidth_hz":10}}]}"#,
    );
    let z = generate(&scene);
    let step = TAU * fc / fs;
    let increments: Vec<f64> = z[1000..]
        .windows(2)
        .map(|w| {
            let d = (c64(w[1]) * c64(w[0]).conj()).arg() - step;
            d - TAU * (d / TAU).round()
        })
        .collect();
    let m = increments.len() as f64;
    let mean = increments.iter().sum::<f64>() / m;
    let var = increments.iter().map(|d| (d - mean).powi(2)).sum::<f64>() / m;
    let want = TAU * lw / fs;

    let mut psd = PowerSpectrum::new(8192, fs).unwrap();
    psd.push(&z);
    let d = psd.density();
    let peak = psd.nearest_bin(fc);
    let top = d[peak];
    let crossing = |dir: isize| {
        let mut k = peak as isize;
        while d[(k + dir) as usize] > top / 2.0 {
            k += dir;
        }
        let (inside, outside) = (d[k as usize], d[(k + dir) as usize]);
        k as f64 + dir as f64 * (inside - top / 2.0) / (inside - outside)
    };
    let width = (crossing(1) - crossing(-1)) * psd.bin_width();
    eprintln!(
        "phase noise: increment variance {var:.4e} (2πΔν/fs = {want:.4e}), −3 dB width {width:.2} Hz (Δν = {lw} Hz)"
    );
    assert!((var / want - 1.0).abs() < 0.03);
    assert!(width > 0.7 * lw && width < 1.5 * lw);
}

#[test]
fn impulse_bursts_cover_the_poisson_fraction() {
    // Coverage of a Poisson process of rate λ by intervals of length T: 1 − e^{−λT}
    // (ImpulseNoise). λ = 50/s, T = 2 ms: 0.0952; 40 s hold ≈ 2000 bursts, so the fraction's
    // relative std is ≈ 2.2 % (Poisson count), asserted 10 %. Burst power −20 dB re full
    // scale²: 0.01 over ≈ 1.8·10⁵ samples, asserted 5 %.
    let scene = parse(
        r#"{"sample_rate":48000,"centre_frequency":5e6,"duration_s":40,"seed":6,
        "impulse_noise":{"rate_hz":50,"duration_s":0.002,"power_db":-20},"emissions":[]}"#,
    );
    let z = generate(&scene);
    let inside: Vec<f64> = z
        .iter()
        .map(|v| f64::from(v.norm_sqr()))
        .filter(|p| *p > 0.0)
        .collect();
    let fraction = inside.len() as f64 / z.len() as f64;
    let want = 1.0 - (-50.0f64 * 0.002).exp();
    let power = inside.iter().sum::<f64>() / inside.len() as f64;
    eprintln!(
        "impulse noise: fraction in bursts {fraction:.4} (1 − e^−λT = {want:.4}), burst power {power:.5} (0.01)"
    );
    assert!((fraction / want - 1.0).abs() < 0.10);
    assert!((power / 0.01 - 1.0).abs() < 0.05);
}

/// A scene with every effect: two emissions with channels, noise, impulses, impairments.
const EVERYTHING: &str = r#"{"sample_rate":48000,"centre_frequency":7e6,"duration_s":1.5,
  "seed":21,"noise":{"cnr_db":30,"reference":"A"},
  "impulse_noise":{"rate_hz":30,"duration_s":0.001,"power_db":-25},
  "impairments":{"dc_i":0.01,"dc_q":-0.005,"gain_db":0.2,"phase_deg":0.5},
  "emissions":[
    {"label":"A","mode":"am","offset_hz":-9000,"amplitude":0.2,"mu":0.6,
     "message":{"type":"noise","bandwidth_hz":3000},
     "channel":{"offset_hz":4,"drift_hz_per_s":3,"phase_noise_linewidth_hz":2,"fading":"moderate"}},
    {"label":"B","mode":"usb","offset_hz":6000,"amplitude":0.1,
     "message":{"type":"two_tone","f1_hz":700,"f2_hz":1900},"start_s":0.2,"stop_s":1.3,
     "channel":{"fading":{"delay_ms":1.5,"doppler_spread_hz":2,"paths":3},"seed":77}}]}"#;

#[test]
fn every_effect_is_chunk_invariant() {
    // Every block runs its per-sample recursion in the same order however fill is called,
    // so bit-exact equality is required.
    let scene = parse(EVERYTHING);
    let whole = generate(&scene);
    let mut rng = StdRng::seed_from_u64(3);
    let random: Vec<usize> = (0..200).map(|_| rng.random_range(1..5000)).collect();
    for sizes in [vec![1usize, 7, 1024, 65_536, 3], random] {
        assert!(
            generate_in_pieces(&scene, &sizes) == whole,
            "{:?}",
            &sizes[..3]
        );
    }
    assert!(whole.iter().all(|z| z.re.is_finite() && z.im.is_finite()));
    // Same scene, same file; and the written file holds the same samples.
    assert!(generate(&scene) == whole);
    let dir = common::TempDir::new("channel");
    let s = write_scene(
        &scene,
        Path::new("everything.json"),
        Path::new("."),
        &dir.join("everything"),
        None,
    )
    .unwrap();
    let bytes = std::fs::read(&s.data_path).unwrap();
    let read: Vec<Complex32> = bytes
        .chunks_exact(8)
        .map(|b| {
            Complex32::new(
                f32::from_le_bytes([b[0], b[1], b[2], b[3]]),
                f32::from_le_bytes([b[4], b[5], b[6], b[7]]),
            )
        })
        .collect();
    assert!(read == whole);
    let meta = std::fs::read_to_string(&s.meta_path).unwrap();
    assert!(meta.contains("fading moderate (1 ms, 0.5 Hz)"), "{meta}");
    assert!(meta.contains("drift 3 Hz/s"));
    assert!(meta.contains("fading 3 paths over 1.5 ms, 2 Hz"));
    // The edges span the drift: A's carrier goes from −8996 to −8996 + 3·1.5 Hz.
    let a = &s.emissions[0];
    assert_eq!(a.carrier_hz, 7e6 - 8996.0);
    assert!((a.upper_edge_hz - (7e6 - 8996.0 + 4.5 + 3000.0)).abs() < 1e-6);
    assert_eq!(a.lower_edge_hz, 7e6 - 8996.0 - 3000.0);
}

#[test]
fn channel_seeds_come_from_the_scene_seed_and_index_unless_given() {
    // A silent emission (amplitude 0) placed first shifts the faded one to index 1: with a
    // derived seed its fading changes, with an explicit seed it does not.
    let faded = |seed: &str| {
        format!(
            r#"{{"label":"F","mode":"am","offset_hz":1000,"amplitude":0.3,
            "message":{{"type":"tone","frequency_hz":200}},"channel":{{"fading":"poor"{seed}}}}}"#
        )
    };
    let silent = r#"{"label":"S","mode":"am","offset_hz":-1000,"amplitude":0,
        "message":{"type":"tone","frequency_hz":200}}"#;
    let scene = |emissions: String| {
        parse(&format!(
            r#"{{"sample_rate":8000,"centre_frequency":1e6,"duration_s":2,"seed":3,"emissions":[{emissions}]}}"#
        ))
    };
    let alone = generate(&scene(faded("")));
    let second = generate(&scene(format!("{silent},{}", faded(""))));
    assert!(alone != second);
    let alone = generate(&scene(faded(",\"seed\":9")));
    let second = generate(&scene(format!("{silent},{}", faded(",\"seed\":9"))));
    assert!(alone == second);
    let other = generate(&scene(faded(",\"seed\":10")));
    assert!(alone != other);
}

const BASE: &str = r#"{"sample_rate":48000,"centre_frequency":1e6,"duration_s":1,"seed":1,
  IMPULSES
  "emissions":[{"label":"OK","mode":"am","offset_hz":0,"amplitude":0.1,
     "message":{"type":"tone","frequency_hz":1000}},
    {"label":"X","mode":"am","offset_hz":20000,"amplitude":0.1,
     "message":{"type":"tone","frequency_hz":1000},"channel":CHANNEL}]}"#;

fn scene_with(channel: &str, impulses: &str) -> String {
    BASE.replace("CHANNEL", channel)
        .replace("IMPULSES", impulses)
}

#[test]
fn bad_channels_and_impulses_are_named() {
    let cases = [
        (
            scene_with(r#"{"fading":"stormy"}"#, ""),
            "emissions[1] 'X'.channel.fading: unknown condition 'stormy' (good, moderate, poor, flutter",
        ),
        (
            scene_with(r#"{"fading":{"delay_ms":-1,"doppler_spread_hz":0.5}}"#, ""),
            "emissions[1] 'X'.channel.fading.delay_ms: -1",
        ),
        (
            scene_with(r#"{"fading":{"delay_ms":1,"doppler_spread_hz":-0.5}}"#, ""),
            "emissions[1] 'X'.channel.fading.doppler_spread_hz: -0.5",
        ),
        (
            scene_with(r#"{"fading":{"delay_ms":1,"doppler_spread_hz":5000}}"#, ""),
            "channel.fading.doppler_spread_hz: 5000 must lie in 0 ..= fs/16",
        ),
        (
            scene_with(
                r#"{"fading":{"delay_ms":1,"doppler_spread_hz":0.5,"paths":0}}"#,
                "",
            ),
            "emissions[1] 'X'.channel.fading.paths: 0",
        ),
        (
            scene_with(r#"{"fading":{"delay_ms":1,"doppler":0.5}}"#, ""),
            "channel.fading: unknown field `doppler`",
        ),
        (scene_with(r#"{"fading":3}"#, ""), "channel.fading: 3 is neither"),
        (scene_with(r#"{"drift":1}"#, ""), "unknown field `drift`"),
        (
            scene_with(r#"{"phase_noise_linewidth_hz":-1}"#, ""),
            "emissions[1] 'X'.channel.phase_noise_linewidth_hz: -1",
        ),
        (
            scene_with(r#"{"phase_noise_linewidth_hz":48000}"#, ""),
            "channel.phase_noise_linewidth_hz: 48000 must be finite, ≥ 0 and below the sample rate",
        ),
        (
            scene_with(r#"{"drift_hz_per_s":5000}"#, ""),
            "emissions[1] 'X'.channel: offset and drift move the emission",
        ),
        (
            scene_with(r#"{"offset_hz":-50000}"#, ""),
            "emissions[1] 'X'.channel: offset and drift move the emission",
        ),
        (
            scene_with(
                "{}",
                r#""impulse_noise":{"rate_hz":-1,"duration_s":0.001,"power_db":-20},"#,
            ),
            "impulse_noise.rate_hz: -1",
        ),
        (
            scene_with(
                "{}",
                r#""impulse_noise":{"rate_hz":10,"duration_s":0,"power_db":-20},"#,
            ),
            "impulse_noise.duration_s: 0",
        ),
        (
            scene_with(
                "{}",
                r#""impulse_noise":{"rate_hz":10,"duration_s":2,"power_db":-20},"#,
            ),
            "impulse_noise.duration_s: 2",
        ),
        (
            scene_with(
                "{}",
                r#""impulse_noise":{"rate_hz":10,"duration_s":0.001,"power_dbfs":-20},"#,
            ),
            "unknown field `power_dbfs`",
        ),
        (
            scene_with("{}", r#""impulse_noise":{"rate_hz":10,"duration_s":0.001},"#),
            "missing field `power_db`",
        ),
    ];
    for (i, (text, want)) in cases.iter().enumerate() {
        let err = Scene::parse(text, Path::new("bad_channel.json")).unwrap_err();
        let msg = err.to_string();
        eprintln!("case {i}: {msg}");
        assert!(matches!(err, Error::InvalidFile { .. }), "case {i}: {msg}");
        assert!(
            msg.contains("bad_channel.json") && msg.contains(want),
            "case {i}: {msg}\nwant: {want}"
        );
    }
    // A good channel parses; so does the scene without channel keys.
    assert!(Scene::parse(
        &scene_with(r#"{"fading":"mid-latitude-quiet"}"#, ""),
        Path::new("a")
    )
    .is_ok());
    assert!(Scene::parse(&scene_with("{}", ""), Path::new("a")).is_ok());
}

#[test]
fn non_finite_values_from_code_are_refused_with_the_file() {
    // JSON cannot carry NaN or ∞ (serde_json refuses 1e999), but a Scene built in code can.
    let mut scene = parse(&scene_with(r#"{"offset_hz":1}"#, ""));
    let out = std::env::temp_dir().join(format!("amrx-channel-never-{}", std::process::id()));
    let channel = scene.emissions[1].channel.as_mut().unwrap();
    channel.offset_hz = f64::INFINITY;
    let err = write_scene(&scene, Path::new("code.json"), Path::new("."), &out, None).unwrap_err();
    let msg = err.to_string();
    assert!(
        matches!(err, Error::InvalidFile { .. }) && msg.contains("code.json"),
        "{msg}"
    );
    assert!(
        msg.contains("emissions[1] 'X'.channel.offset_hz: inf"),
        "{msg}"
    );
    let channel = scene.emissions[1].channel.as_mut().unwrap();
    channel.offset_hz = 0.0;
    channel.drift_hz_per_s = f64::NAN;
    let msg = write_scene(&scene, Path::new("code.json"), Path::new("."), &out, None)
        .unwrap_err()
        .to_string();
    assert!(msg.contains("channel.drift_hz_per_s: NaN"), "{msg}");
    scene.emissions[1].channel = None;
    scene.impulse_noise = Some(amrx::synth::scene::ImpulseNoiseSpec {
        rate_hz: 10.0,
        duration_s: 0.001,
        power_db: f64::NAN,
        seed: None,
    });
    let msg = write_scene(&scene, Path::new("code.json"), Path::new("."), &out, None)
        .unwrap_err()
        .to_string();
    assert!(
        msg.contains("code.json") && msg.contains("impulse_noise.power_db: NaN"),
        "{msg}"
    );
}

#[test]
fn a_too_narrow_noise_message_is_refused_naming_bandwidth_hz() {
    // An ISB lower message 1 Hz or 10 Hz wide at the 48 kHz scene's message rate would need
    // a band-pass of 10⁵–10⁶ taps; the set-up refuses it at once, naming the key.
    for w in [1, 10] {
        let scene = parse(&format!(
            r#"{{"sample_rate":48000,"centre_frequency":5e6,"duration_s":0.05,"seed":1,"emissions":[
              {{"label":"A","mode":"isb","offset_hz":0,"amplitude":0.1,
                "message":{{"type":"tone","frequency_hz":1500}},
                "lower_message":{{"type":"noise","bandwidth_hz":{w},"crest_factor":3}}}}]}}"#
        ));
        match SceneGenerator::new(&scene, Path::new(".")) {
            Err(e) => {
                let text = e.to_string();
                eprintln!("{w} Hz: {text}");
                assert!(
                    text.contains(&format!("invalid bandwidth_hz {w}:")),
                    "{text}"
                );
                assert!(
                    text.contains("-tap FIR") && text.contains("bandwidth_hz ≥"),
                    "{text}"
                );
            }
            Ok(_) => panic!("{w} Hz accepted"),
        }
    }
}

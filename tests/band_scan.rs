//! `amrx scan` on a synthesised band holding every class: AM, DSB, USB, LSB, a bare carrier and
//! a station that comes and goes, with a receiver's DC offset and IQ imbalance on top (whose
//! spike and images must not be reported). Prints the confusion table of true class against
//! the class found.
//!
//! The SSB messages are speech-like: white noise through a one-pole low-pass, falling 6 dB per
//! octave above about 400 Hz, as the long-term speech spectrum does (from memory); the AM and
//! DSB messages are the synthesiser's flat band-limited noise.

use amrx::band::{run_scan, ScanRequest};
use amrx::pipeline::synth_job::run_scene;
use rand::{rngs::StdRng, SeedableRng};
use rand_distr::{Distribution, StandardNormal};
use std::path::{Path, PathBuf};

fn out_dir() -> PathBuf {
    let d = Path::new(env!("CARGO_TARGET_TMPDIR")).join("band_scan");
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// 8 s of speech-like noise at 16 kHz (seeded).
fn write_speech_like(path: &Path) {
    let spec = hound::WavSpec {
        channels: 1,
        sample_rate: 16_000,
        bits_per_sample: 32,
        sample_format: hound::SampleFormat::Float,
    };
    let mut w = hound::WavWriter::create(path, spec).unwrap();
    let mut rng = StdRng::seed_from_u64(77);
    // One-pole low-pass y = a·y + (1 − a)·x with a = exp(−2π·400/16000): corner at 400 Hz.
    let a = (-2.0 * std::f64::consts::PI * 400.0 / 16_000.0).exp();
    let mut y = 0.0f64;
    let samples: Vec<f64> = (0..128_000)
        .map(|_| {
            let x: f64 = StandardNormal.sample(&mut rng);
            y = a * y + (1.0 - a) * x;
            y
        })
        .collect();
    let peak = samples.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    for s in samples {
        w.write_sample((0.9 * s / peak) as f32).unwrap();
    }
    w.finalize().unwrap();
}

/// (label, true class, offset Hz, expected start, expected end)
const TRUTH: [(&str, &str, f64, f64, f64); 6] = [
    ("BND-AM", "am", -80_000.0, 0.0, 6.0),
    ("BND-DSB", "dsb", -40_000.0, 0.0, 6.0),
    ("BND-USB", "usb", 20_000.0, 0.0, 6.0),
    ("BND-LSB", "lsb", 50_000.0, 0.0, 6.0),
    ("BND-CW", "carrier", 70_000.0, 0.0, 6.0),
    ("BND-GO", "am", 95_000.0, 2.0, 4.0),
];

fn scene_file(dir: &Path) -> PathBuf {
    write_speech_like(&dir.join("speech-like.wav"));
    let speech = r#"{"type":"wav","path":"speech-like.wav","bandwidth_hz":2700,"low_hz":300}"#;
    let noise = r#"{"type":"noise","bandwidth_hz":3000}"#;
    let scene = format!(
        r#"{{
  "sample_rate": 240000, "centre_frequency": 7100000, "duration_s": 6.0, "seed": 4242,
  "description": "amrx test band: invented stations of every class",
  "noise": {{ "density_db_hz": -100 }},
  "impairments": {{ "dc_i": 0.01, "dc_q": -0.008, "gain_db": 0.4, "phase_deg": 1.5 }},
  "emissions": [
    {{ "label": "BND-AM", "mode": "am", "offset_hz": -80000, "amplitude": 0.1, "mu": 0.6, "message": {noise} }},
    {{ "label": "BND-DSB", "mode": "dsb", "offset_hz": -40000, "amplitude": 0.1, "message": {noise} }},
    {{ "label": "BND-USB", "mode": "usb", "offset_hz": 20000, "amplitude": 0.1, "message": {speech} }},
    {{ "label": "BND-LSB", "mode": "lsb", "offset_hz": 50000, "amplitude": 0.1, "message": {speech} }},
    {{ "label": "BND-CW", "mode": "am", "offset_hz": 70000, "amplitude": 0.03, "mu": 0.0001,
       "message": {{ "type": "tone", "frequency_hz": 1000 }} }},
    {{ "label": "BND-GO", "mode": "am", "offset_hz": 95000, "amplitude": 0.05, "mu": 0.5,
       "message": {{ "type": "tone", "frequency_hz": 1000 }}, "start_s": 2.0, "stop_s": 4.0 }}
  ]
}}"#
    );
    let path = dir.join("band.json");
    std::fs::write(&path, scene).unwrap();
    path
}

#[test]
fn every_class_is_found_and_named() {
    let dir = out_dir();
    let base = dir.join("band");
    run_scene(&scene_file(&dir), &base, None).unwrap();
    let input = dir.join("band.sigmf-meta");
    let outcome = run_scan(&ScanRequest::new(&input), &|_| {}).unwrap();
    for line in outcome.table_lines() {
        eprintln!("{line}");
    }
    let found = &outcome.report.emissions;
    let classes = ["am", "carrier", "dsb", "usb", "lsb", "unknown", "(missed)"];
    let mut confusion = vec![vec![0usize; classes.len()]; classes.len()];
    let index = |c: &str| classes.iter().position(|x| *x == c).unwrap();
    let mut matched = vec![false; found.len()];
    for &(label, class, offset, start, end) in &TRUTH {
        // The emission whose occupied band holds the true carrier (or dial) within 500 Hz,
        // overlapping the true time.
        let hit = found.iter().position(|e| {
            e.lower_edge_hz - 500.0 <= offset
                && offset <= e.upper_edge_hz + 500.0
                && e.start_s < end
                && start < e.end_s
        });
        match hit {
            Some(i) => {
                matched[i] = true;
                let e = &found[i];
                confusion[index(class)][index(&e.class)] += 1;
                // Carrier frequency: within 30 Hz (half a 58.6 Hz bin) where there is a carrier
                // or a suppressed one; the SSB dial is the channel's inner edge, within 400 Hz
                // of the suppressed carrier (the message starts at 300 Hz).
                let tolerance = if matches!(class, "usb" | "lsb") {
                    400.0
                } else {
                    30.0
                };
                assert!(
                    (e.offset_hz - offset).abs() <= tolerance,
                    "{label}: offset {} vs {offset}",
                    e.offset_hz
                );
                assert_eq!(e.frequency_hz, Some(7_100_000.0 + e.offset_hz));
                // Times within 0.25 s (rows of 0.1 s).
                assert!(
                    (e.start_s - start).abs() <= 0.25 && (e.end_s - end).abs() <= 0.25,
                    "{label}: {}..{} s vs {start}..{end}",
                    e.start_s,
                    e.end_s
                );
                assert!(e.cnr_db > 20.0, "{label}: CNR {}", e.cnr_db);
            }
            None => confusion[index(class)][index("(missed)")] += 1,
        }
    }
    eprintln!("confusion (rows: true class, columns: class found)");
    eprintln!("{:>9} {}", "", classes.map(|c| format!("{c:>9}")).join(""));
    for (i, row) in confusion.iter().enumerate().take(5) {
        if row.iter().sum::<usize>() > 0 {
            eprintln!(
                "{:>9} {}",
                classes[i],
                row.iter().map(|n| format!("{n:>9}")).collect::<String>()
            );
        }
    }
    for (i, row) in confusion.iter().enumerate() {
        for (j, &n) in row.iter().enumerate() {
            if i != j {
                assert_eq!(n, 0, "{} found as {}", classes[i], classes[j]);
            }
        }
    }
    // Nothing else reported: no DC spike, no image, no noise.
    let extra: Vec<_> = found
        .iter()
        .zip(&matched)
        .filter(|(_, m)| !**m)
        .map(|(e, _)| (e.offset_hz, e.class.clone()))
        .collect();
    assert!(extra.is_empty(), "reported but not in the scene: {extra:?}");
    assert!(outcome
        .detection
        .rejected
        .iter()
        .any(|r| r.reason.contains("DC spike")));
    assert!(outcome
        .detection
        .rejected
        .iter()
        .any(|r| r.reason.contains("IQ image")));
    // The noise floor: −100 dBFS/Hz of noise (the 0.4 dB gain imbalance raises the mean power
    // by about 0.2 dB; cf32 has no quantisation noise): within 0.5 dB.
    assert!(
        (outcome.report.noise_floor_dbfs_hz + 100.0).abs() < 0.5,
        "{}",
        outcome.report.noise_floor_dbfs_hz
    );
}

#[test]
fn occupied_bandwidth_follows_itu_r_sm328() {
    // A flat noise message on [300, 3000] Hz: the DSB's 99 % band is two mirrored flat bands,
    // 2W − 0.02(W − f_l) ≈ 5946 Hz, plus the message filter's skirts (tests/synth_obw.rs);
    // the reported edges are within 5 %.
    let dir = out_dir().join("obw");
    std::fs::create_dir_all(&dir).unwrap();
    let scene = r#"{"sample_rate": 48000, "centre_frequency": 3500000, "duration_s": 8.0, "seed": 9,
      "noise": {"density_db_hz": -110},
      "emissions": [{"label": "OBW-D", "mode": "dsb", "offset_hz": 5000, "amplitude": 0.2,
        "message": {"type": "noise", "bandwidth_hz": 3000, "low_hz": 300}}]}"#;
    let path = dir.join("obw.json");
    std::fs::write(&path, scene).unwrap();
    run_scene(&path, &dir.join("obw"), None).unwrap();
    let outcome = run_scan(&ScanRequest::new(dir.join("obw.sigmf-meta")), &|_| {}).unwrap();
    for line in outcome.table_lines() {
        eprintln!("{line}");
    }
    let e = &outcome.report.emissions;
    assert_eq!(e.len(), 1, "{e:?}");
    let want = 2.0 * 3000.0 - 0.02 * 2700.0;
    assert!(
        (e[0].occupied_bandwidth_hz / want - 1.0).abs() < 0.05,
        "{} vs {want}",
        e[0].occupied_bandwidth_hz
    );
    assert_eq!(e[0].class, "dsb");
    assert!((e[0].offset_hz - 5000.0).abs() < 30.0);
    assert!((e[0].lower_edge_hz + e[0].upper_edge_hz - 10_000.0).abs() < 200.0);
}

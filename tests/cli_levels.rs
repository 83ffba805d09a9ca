//! Audio level and SNR for every mode: the report carries both; the command line listens at a
//! comfortable level by default and keeps the signal's level with `--calibrated`.

mod common;

use amrx::pipeline::synth_job::{write_scene, SceneSummary};
use amrx::synth::scene::Scene;
use common::{amrx, TempDir};
use std::path::Path;

/// Invented stations at known levels in white noise (−100 dB/Hz at 480 kS/s).
const SCENE: &str = r#"{
  "sample_rate": 480000, "centre_frequency": 5000000, "duration_s": 2.0, "datatype": "cf32_le",
  "seed": 14, "noise": { "density_db_hz": -100 },
  "emissions": [
    { "label": "QQ-LOUD", "mode": "am", "offset_hz": -150000, "amplitude": 0.2, "mu": 0.5,
      "message": { "type": "tone", "frequency_hz": 1000 } },
    { "label": "QQ-FAINT", "mode": "am", "offset_hz": -90000, "amplitude": 0.005, "mu": 0.5,
      "message": { "type": "tone", "frequency_hz": 1000 } },
    { "label": "QQ-UP", "mode": "usb", "offset_hz": -30000, "amplitude": 0.02,
      "message": { "type": "tone", "frequency_hz": 1000 } },
    { "label": "QQ-DOWN", "mode": "lsb", "offset_hz": 30000, "amplitude": 0.02,
      "message": { "type": "tone", "frequency_hz": 1000 } },
    { "label": "QQ-SUPP", "mode": "dsb", "offset_hz": 90000, "amplitude": 0.02,
      "message": { "type": "tone", "frequency_hz": 1000 } }
  ]
}"#;

fn scene(dir: &Path) -> (String, SceneSummary) {
    let scene = Scene::parse(SCENE, Path::new("levels.json")).unwrap();
    let summary = write_scene(&scene, Path::new("levels.json"), dir, &dir.join("s"), None).unwrap();
    (summary.meta_path.display().to_string(), summary)
}

fn demod(rec: &str, dir: &Path, mode: &str, offset: f64, extra: &[&str]) -> serde_json::Value {
    let wav = dir.join("a.wav").display().to_string();
    let json = dir.join("a.json");
    let json_s = json.display().to_string();
    let offset = offset.to_string();
    let mut args = vec![
        "demod", rec, "--mode", mode, "--offset", &offset, "--out", &wav, "--report", &json_s,
        "--quiet",
    ];
    args.extend(extra);
    let out = amrx(&args);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_str(&std::fs::read_to_string(json).unwrap()).unwrap()
}

fn db(v: &serde_json::Value, key: &str) -> f64 {
    v[key]
        .as_f64()
        .unwrap_or_else(|| panic!("{key} missing: {v}"))
}

#[test]
fn every_mode_reports_its_audio_level_and_an_snr_matching_the_scene() {
    let dir = TempDir::new("levels-snr");
    let (rec, summary) = scene(&dir);
    let snr_of = |label: &str| {
        summary
            .emissions
            .iter()
            .find(|e| e.label == label)
            .and_then(|e| e.snr_db)
            .unwrap()
    };
    // (mode, station, offset)
    for (mode, label, offset) in [
        ("am", "QQ-LOUD", -150_000.0),
        ("sam", "QQ-LOUD", -150_000.0),
        ("vsb", "QQ-LOUD", -150_000.0),
        ("usb", "QQ-UP", -30_000.0),
        ("lsb", "QQ-DOWN", 30_000.0),
        ("dsb", "QQ-SUPP", 90_000.0),
        ("isb", "QQ-SUPP", 90_000.0),
    ] {
        let r = demod(&rec, &dir, mode, offset, &[]);
        let level = db(&r, "audio_rms_dbfs");
        assert!(db(&r, "audio_peak_dbfs") > level, "{mode}: {r}");
        // The scene quotes SNR = S/(N0·W) with W its message bandwidth (the 1 kHz tone); the
        // receiver quotes it in its own bandwidth: the same S and N0, so they differ by
        // 10·log10(W_rx / W_scene) (Haykin's channel-SNR definition, see channel::snr).
        let w_rx = db(&r, "bandwidth_hz");
        let want = snr_of(label) - 10.0 * (w_rx / 1000.0).log10();
        let got = db(&r, "snr_db");
        // Tolerance: the floor estimate over 2 s of input is good to a few per cent; the
        // receiver's band edges hold a little of the channel filter's roll-off (0.5 dB).
        assert!(
            (got - want).abs() < 0.5,
            "{mode}: SNR {got:.2} dB, scene {want:.2} dB"
        );
    }
}

#[test]
fn listening_level_is_comfortable_for_faint_and_loud_stations_and_calibrated_keeps_the_level() {
    let dir = TempDir::new("levels-listen");
    let (rec, _) = scene(&dir);
    for (offset, amplitude) in [(-150_000.0, 0.2f64), (-90_000.0, 0.005)] {
        // Listening (the default): whatever the station's strength, the audio sits in a
        // comfortable range (common practice, no source: −25…−6 dBFS RMS).
        let listening = db(&demod(&rec, &dir, "am", offset, &[]), "audio_rms_dbfs");
        assert!(
            (-25.0..=-6.0).contains(&listening),
            "amplitude {amplitude}: {listening:.1} dBFS"
        );
        // Calibrated: above threshold the envelope detector gives the tone, peak A·μ, plus
        // the noise's in-phase part, power N0·W (S. Haykin, Communication Systems, ch. 2,
        // envelope detection at high CNR); N0 = −100 dB/Hz, W = 5 kHz. The first 0.1 s of
        // settling moves the mean a little, hence 0.5 dB.
        let calibrated = db(
            &demod(&rec, &dir, "am", offset, &["--calibrated"]),
            "audio_rms_dbfs",
        );
        let want = 10.0 * ((amplitude * 0.5).powi(2) / 2.0 + 1e-10 * 5000.0).log10();
        assert!(
            (calibrated - want).abs() < 0.5,
            "amplitude {amplitude}: {calibrated:.2} dBFS, want {want:.2}"
        );
    }
    // --calibrated and a gain choice exclude each other.
    let out = amrx(&[
        "demod",
        &rec,
        "--mode",
        "am",
        "--calibrated",
        "--agc",
        "slow",
        "--out",
        "x.wav",
    ]);
    assert!(!out.status.success());
}

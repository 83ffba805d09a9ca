//! `amrx measure` as external tools drive it (the contract: options, JSON keys, CSV rows,
//! PNG, verdict), `demod`'s new report keys, and `--quiet` keeping the warnings.

mod common;

use amrx::io::SampleFormat;
use amrx::Complex32;
use common::{amrx, scratch_dir, tone_am, write_sigmf};

const RATE: f64 = 240_000.0;

/// 2 s: μ 0.6 from 0.5 s to 1.5 s, noise only before and after.
fn recording(dir: &std::path::Path) -> String {
    let mut samples = tone_am(RATE, 30_000.0, 0.6, 1000.0, 2.0, 1e-7);
    for (i, s) in samples.iter_mut().enumerate() {
        let t = i as f64 / RATE;
        if !(0.5..1.5).contains(&t) {
            *s = Complex32::new(0.0, 0.0);
        }
    }
    amrx::dsp::ComplexNoise::new(1e-7, 9).add_to(&mut samples);
    write_sigmf(dir, "station", SampleFormat::Cf32Le, RATE, &samples)
        .display()
        .to_string()
}

#[test]
fn measure_follows_the_contract() {
    let dir = scratch_dir("cli-measure");
    let rec = recording(&dir);
    let path = |n: &str| dir.join(n).display().to_string();
    let (json, csv, png) = (path("m.json"), path("m.csv"), path("m.png"));
    let out = amrx(&[
        "measure",
        &rec,
        "--offset",
        "30000",
        "--bandwidth",
        "5000",
        "--window",
        "0.1",
        "--limit-positive",
        "125",
        "--limit-negative",
        "100",
        "--json",
        &json,
        "--csv",
        &csv,
        "--png",
        &png,
        "--start",
        "0.2",
        "--duration",
        "1.6",
    ]);
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(stdout.contains("verdict: WITHIN"), "{stdout}");
    let v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&json).unwrap()).unwrap();
    let windows = v["windows"].as_array().unwrap();
    assert_eq!(windows.len(), 16);
    for w in windows {
        for key in [
            "start_s",
            "duration_s",
            "carrier_present",
            "carrier_dbfs",
            "cnr_db",
            "positive",
            "negative",
        ] {
            assert!(w.get(key).is_some(), "window lacks {key}");
        }
        if w["carrier_present"] == false {
            for key in ["carrier_dbfs", "cnr_db", "positive", "negative"] {
                assert!(w[key].is_null());
            }
        }
    }
    assert!((windows[0]["start_s"].as_f64().unwrap() - 0.2).abs() < 0.01);
    let s = &v["summary"];
    for key in [
        "carrier_present_s",
        "positive_peak",
        "negative_peak",
        "cnr_db",
        "cnr_bandwidth_hz",
        "compliant",
    ] {
        assert!(s.get(key).is_some(), "summary lacks {key}");
    }
    assert_eq!(s["compliant"], true);
    assert_eq!(s["cnr_bandwidth_hz"], 10_000.0);
    assert!((s["carrier_present_s"].as_f64().unwrap() - 1.0).abs() <= 0.1);
    assert!(
        (s["positive_peak"].as_f64().unwrap() - 0.6).abs() < 0.02,
        "{s}"
    );
    let kinds: Vec<&str> = v["events"]
        .as_array()
        .unwrap()
        .iter()
        .map(|e| e["kind"].as_str().unwrap())
        .collect();
    assert_eq!(kinds, ["carrier_back", "carrier_lost"]);
    let rows = std::fs::read_to_string(&csv).unwrap();
    assert_eq!(rows.lines().count(), 17);
    assert!(rows
        .starts_with("start_s,duration_s,carrier_present,carrier_dbfs,cnr_db,positive,negative"));
    assert!(std::fs::metadata(&png).unwrap().len() > 10_000);

    // Without limits: no verdict, compliant null.
    let out = amrx(&["measure", &rec, "--offset", "30000", "--json", &json]);
    assert!(out.status.success());
    let v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&json).unwrap()).unwrap();
    assert!(v["summary"]["compliant"].is_null());

    // A tuning is required; a bad window names its flag.
    assert!(!amrx(&["measure", &rec]).status.success());
    let out = amrx(&["measure", &rec, "--offset", "30000", "--window", "0"]);
    assert!(String::from_utf8_lossy(&out.stderr).contains("--window"));
}

/// Row "--quiet also hides the warnings": a demod tuned to nothing still says "no carrier"
/// with --quiet; the report has the new keys.
#[test]
fn quiet_keeps_warnings_and_the_report_is_honest() {
    let dir = scratch_dir("cli-quiet");
    let rec = recording(&dir);
    let wav = dir.join("a.wav").display().to_string();
    let report = dir.join("a.json").display().to_string();
    let out = amrx(&[
        "demod", &rec, "--mode", "am", "--offset", "-50000", "--out", &wav, "--report", &report,
        "--quiet",
    ]);
    assert!(out.status.success());
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(stderr.contains("no carrier"), "{stderr}");
    let out = amrx(&[
        "demod", &rec, "--mode", "sam", "--offset", "30000", "--out", &wav, "--report", &report,
        "--quiet",
    ]);
    assert!(out.status.success());
    let v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&report).unwrap()).unwrap();
    for key in [
        "carrier_dbfs",
        "cnr_bandwidth_hz",
        "carrier_present_s",
        "lock_fraction",
    ] {
        assert!(v.get(key).is_some(), "report lacks {key}");
    }
    assert!(
        (v["carrier_present_s"].as_f64().unwrap() - 1.0).abs() <= 0.1,
        "{v}"
    );
    assert_eq!(v["locked"], true);
    assert!(v["warnings"].as_array().unwrap().is_empty(), "{v}");
}

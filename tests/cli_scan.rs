//! `amrx scan` from the command line: the JSON has exactly the contract's keys, the pictures
//! are PNGs, the annotated metadata carries one annotation per emission, and broken input
//! gives one line of error.

use std::path::{Path, PathBuf};
use std::process::Command;

fn dir() -> PathBuf {
    let d = Path::new(env!("CARGO_TARGET_TMPDIR")).join("cli_scan");
    std::fs::create_dir_all(&d).unwrap();
    d
}

fn amrx() -> Command {
    Command::new(env!("CARGO_BIN_EXE_amrx"))
}

fn keys(v: &serde_json::Value) -> Vec<String> {
    let mut k: Vec<String> = v.as_object().unwrap().keys().cloned().collect();
    k.sort();
    k
}

#[test]
fn scan_writes_the_contract() {
    let d = dir();
    let scene = d.join("two.json");
    std::fs::write(
        &scene,
        r#"{"sample_rate": 96000, "centre_frequency": 5000000, "duration_s": 2.0, "seed": 3,
          "datatype": "ci16_le", "noise": {"density_db_hz": -100},
          "emissions": [
            {"label": "CLI-A", "mode": "am", "offset_hz": -20000, "amplitude": 0.2, "mu": 0.5,
             "message": {"type": "tone", "frequency_hz": 1000}},
            {"label": "CLI-B", "mode": "dsb", "offset_hz": 15000, "amplitude": 0.2,
             "message": {"type": "noise", "bandwidth_hz": 3000}, "start_s": 0.5, "stop_s": 1.5}]}"#,
    )
    .unwrap();
    let base = d.join("two");
    let st = amrx()
        .args([
            "synth",
            scene.to_str().unwrap(),
            "--out",
            base.to_str().unwrap(),
        ])
        .output()
        .unwrap();
    assert!(
        st.status.success(),
        "{}",
        String::from_utf8_lossy(&st.stderr)
    );
    let meta = d.join("two.sigmf-meta");
    let (json, png, wf, ann) = (
        d.join("scan.json"),
        d.join("spectrum.png"),
        d.join("waterfall.png"),
        d.join("scan-annotated.sigmf-meta"),
    );
    let out = amrx()
        .arg("scan")
        .arg(&meta)
        .args([
            "--json",
            json.to_str().unwrap(),
            "--png",
            png.to_str().unwrap(),
        ])
        .args([
            "--waterfall",
            wf.to_str().unwrap(),
            "--annotate",
            ann.to_str().unwrap(),
        ])
        .args(["--min-cnr", "6", "--quiet"])
        .output()
        .unwrap();
    let table = String::from_utf8_lossy(&out.stdout);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(table.contains("2 emission(s)"), "{table}");
    let report: serde_json::Value = serde_json::from_slice(&std::fs::read(&json).unwrap()).unwrap();
    assert_eq!(
        keys(&report),
        [
            "centre_hz",
            "emissions",
            "noise_floor_dbfs_hz",
            "sample_rate"
        ]
    );
    let emissions = report["emissions"].as_array().unwrap();
    assert_eq!(emissions.len(), 2);
    for e in emissions {
        assert_eq!(
            keys(e),
            [
                "class",
                "cnr_bandwidth_hz",
                "cnr_db",
                "end_s",
                "frequency_hz",
                "level_dbfs",
                "lower_edge_hz",
                "occupied_bandwidth_hz",
                "offset_hz",
                "start_s",
                "upper_edge_hz"
            ]
        );
    }
    assert_eq!(emissions[0]["class"], "am");
    assert_eq!(emissions[1]["class"], "dsb");
    // Carrier within 2 Hz: quadratic interpolation on a Hann window's peak is biased by up to
    // about 0.05 bin (23.4 Hz bins here).
    let f = emissions[0]["frequency_hz"].as_f64().unwrap();
    assert!((f - 4_980_000.0).abs() < 2.0, "{f}");
    for p in [&png, &wf] {
        let bytes = std::fs::read(p).unwrap();
        assert_eq!(&bytes[..8], b"\x89PNG\r\n\x1a\n", "{}", p.display());
    }
    let meta: serde_json::Value = serde_json::from_slice(&std::fs::read(&ann).unwrap()).unwrap();
    let scans: Vec<&serde_json::Value> = meta["annotations"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|a| a["core:generator"] == "amrx scan")
        .collect();
    assert_eq!(scans.len(), 2);
    let dsb = scans.iter().find(|a| a["core:label"] == "dsb").unwrap();
    // The DSB is on from 0.5 s to 1.5 s: 48000 to 144000 samples, within a row (0.1 s).
    let start = dsb["core:sample_start"].as_u64().unwrap() as f64;
    let count = dsb["core:sample_count"].as_u64().unwrap() as f64;
    assert!((start - 48_000.0).abs() < 9_600.0, "{start}");
    assert!((start + count - 144_000.0).abs() < 9_600.0, "{count}");
    let lo = dsb["core:freq_lower_edge"].as_f64().unwrap();
    let hi = dsb["core:freq_upper_edge"].as_f64().unwrap();
    assert!(
        lo < 5_015_000.0 && hi > 5_015_000.0 && hi - lo < 7_000.0,
        "{lo} {hi}"
    );
}

#[test]
fn broken_input_is_one_line_of_error() {
    let d = dir();
    let short = d.join("short.cu8");
    std::fs::write(&short, [128u8; 400]).unwrap();
    let out = amrx()
        .arg("scan")
        .arg(&short)
        .args(["--format", "cu8", "--rate", "2400000", "--quiet"])
        .output()
        .unwrap();
    assert!(!out.status.success());
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("too few to scan"), "{err}");
    assert_eq!(err.lines().count(), 1, "{err}");
    let out = amrx()
        .arg("scan")
        .arg(&short)
        .args(["--format", "cu8", "--rate", "2400000", "--min-cnr", "inf"])
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("--min-cnr"), "{err}");
}

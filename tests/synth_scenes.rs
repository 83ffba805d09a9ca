//! The example scenes written as SigMF and read back. The files are left in
//! CARGO_TARGET_TMPDIR/synth_scenes/ so CI can check them with tests/io_sigmf_schema.py.

use amrx::io::{IqSource, SampleFormat, SigmfSource};
use amrx::pipeline::synth_job::run_scene;
use amrx::Complex32;
use std::path::{Path, PathBuf};

fn out_dir() -> PathBuf {
    let dir = Path::new(env!("CARGO_TARGET_TMPDIR")).join("synth_scenes");
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn scene(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data/scenes")
        .join(name)
}

fn read_all(meta: &Path) -> (SigmfSource, Vec<Complex32>) {
    let mut src = SigmfSource::open(meta, None, 0).unwrap();
    let mut all = Vec::new();
    let mut buf = vec![Complex32::default(); 1 << 16];
    loop {
        let n = src.read(&mut buf).unwrap();
        if n == 0 {
            break;
        }
        all.extend_from_slice(&buf[..n]);
    }
    (src, all)
}

#[test]
fn example_scenes_write_and_read_back() {
    for (name, format, samples, emissions) in [
        ("hf_mix.json", SampleFormat::Ci16Le, 240_000u64, 6),
        ("mw_cheap_receiver.json", SampleFormat::Cu8, 480_000, 4),
        ("hf_fading.json", SampleFormat::Ci16Le, 384_000, 3),
    ] {
        let base = out_dir().join(name.trim_end_matches(".json"));
        let summary = run_scene(&scene(name), &base, None).unwrap();
        assert_eq!((summary.format, summary.samples), (format, samples));
        assert_eq!(summary.emissions.len(), emissions);
        assert_eq!(summary.clipped, 0, "{name}");
        let (src, data) = read_all(&summary.meta_path);
        assert_eq!(data.len() as u64, samples);
        let notes = src.annotations();
        assert_eq!(notes.len(), emissions);
        for (a, e) in notes.iter().zip(&summary.emissions) {
            assert_eq!(a.label.as_deref(), Some(e.label.as_str()));
            assert_eq!(
                (a.sample_start, a.sample_count),
                (e.samples.0, Some(e.samples.1 - e.samples.0))
            );
            assert_eq!(
                (a.freq_lower_edge, a.freq_upper_edge),
                (Some(e.lower_edge_hz), Some(e.upper_edge_hz))
            );
        }
        eprintln!(
            "{name}: {} samples, noise power {:.3e}, {:?}",
            summary.samples,
            summary.noise_power,
            summary
                .emissions
                .iter()
                .map(|e| (e.label.clone(), e.cnr_db.map(|c| (c * 10.0).round() / 10.0)))
                .collect::<Vec<_>>()
        );
    }
}

#[test]
fn the_reference_emission_gets_the_requested_cnr() {
    // hf_mix sets CNR 35 dB on "ALPHA A3E": CNR = A_c²/(N0·2W) (channel::snr).
    let base = out_dir().join("cnr_check");
    let s = run_scene(&scene("hf_mix.json"), &base, Some(SampleFormat::Cf32Le)).unwrap();
    let alpha = &s.emissions[0];
    assert!((alpha.cnr_db.unwrap() - 35.0).abs() < 1e-9);
    let n0 = 0.12f64 * 0.12 / (2.0 * 4500.0 * 10f64.powf(3.5));
    assert!((s.noise_power / (n0 * 240e3) - 1.0).abs() < 1e-12);
    assert_eq!(s.format, SampleFormat::Cf32Le);
}

#[test]
fn a_bad_scene_is_reported_with_its_file() {
    let path = out_dir().join("bad_scene.json");
    std::fs::write(
        &path,
        r#"{"sample_rate":48000,"centre_frequency":1e6,"duration_s":1,
        "emissions":[{"label":"X","mode":"am","offset_hz":30000,"amplitude":0.1,
        "message":{"type":"tone","frequency_hz":1000}}]}"#,
    )
    .unwrap();
    let err = run_scene(&path, &out_dir().join("never"), None)
        .unwrap_err()
        .to_string();
    assert!(
        err.contains("bad_scene.json") && err.contains("offset_hz"),
        "{err}"
    );
}

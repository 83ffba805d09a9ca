//! Bad input gets one clear line on stderr naming the file and the problem, a non-zero exit,
//! and never a panic.

mod common;

use amrx::io::SampleFormat;
use amrx::Complex32;
use common::{amrx, scratch_dir, tone_am, write_sigmf};
use std::path::Path;

/// Asserts a failed run with exactly one stderr line that contains every `needle`.
fn assert_one_line_error(args: &[&str], needles: &[&str]) {
    let out = amrx(args);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        !out.status.success(),
        "expected failure for {args:?}; stderr: {stderr}"
    );
    assert!(!stderr.contains("panicked"), "panic for {args:?}: {stderr}");
    let lines: Vec<&str> = stderr.lines().filter(|l| !l.trim().is_empty()).collect();
    assert_eq!(
        lines.len(),
        1,
        "expected one line for {args:?}, got: {stderr}"
    );
    for needle in needles {
        assert!(
            lines[0].contains(needle),
            "'{needle}' missing from: {}",
            lines[0]
        );
    }
}

fn good_recording(dir: &Path) -> String {
    let samples = tone_am(240_000.0, 20_000.0, 0.5, 1000.0, 0.2, 0.0);
    write_sigmf(dir, "good", SampleFormat::Ci16Le, 240_000.0, &samples)
        .display()
        .to_string()
}

fn out_wav(dir: &Path) -> String {
    dir.join("out.wav").display().to_string()
}

#[test]
fn missing_file() {
    let dir = scratch_dir("missing");
    let missing = dir.join("nothing-here.sigmf-meta").display().to_string();
    assert_one_line_error(
        &["demod", &missing, "--mode", "am", "--out", &out_wav(&dir)],
        &["nothing-here.sigmf-meta"],
    );
}

#[test]
fn empty_data_file() {
    let dir = scratch_dir("empty");
    let meta = write_sigmf(&dir, "empty", SampleFormat::Cu8, 240_000.0, &[]);
    let meta = meta.display().to_string();
    assert_one_line_error(
        &["demod", &meta, "--mode", "am", "--out", &out_wav(&dir)],
        &["empty"],
    );
}

#[test]
fn empty_raw_file() {
    let dir = scratch_dir("empty-raw");
    let raw = dir.join("empty.cu8");
    std::fs::write(&raw, b"").unwrap();
    let raw = raw.display().to_string();
    let out = out_wav(&dir);
    let args = [
        "demod", &raw, "--format", "cu8", "--rate", "240000", "--mode", "am", "--out", &out,
    ];
    assert_one_line_error(&args, &["empty.cu8"]);
}

fn meta_case(name: &str, meta_text: &str, extra: &[&str], needles: &[&str]) {
    let dir = scratch_dir(name);
    let meta = dir.join(format!("{name}.sigmf-meta"));
    std::fs::write(&meta, meta_text).unwrap();
    std::fs::write(dir.join(format!("{name}.sigmf-data")), [128u8; 4000]).unwrap();
    let meta = meta.display().to_string();
    let out = out_wav(&dir);
    let mut args = vec![
        "demod",
        meta.as_str(),
        "--mode",
        "am",
        "--out",
        out.as_str(),
    ];
    args.extend_from_slice(extra);
    let mut all = vec![name];
    all.extend_from_slice(needles);
    assert_one_line_error(&args, &all);
}

#[test]
fn unknown_datatype() {
    let text = r#"{"global":{"core:datatype":"cq9","core:version":"1.2.0","core:sample_rate":240000},"captures":[{"core:sample_start":0}],"annotations":[]}"#;
    meta_case("unknown-type", text, &[], &["cq9"]);
}

#[test]
fn missing_datatype() {
    let text = r#"{"global":{"core:version":"1.2.0","core:sample_rate":240000},"captures":[],"annotations":[]}"#;
    meta_case("no-type", text, &[], &["core:datatype"]);
}

#[test]
fn missing_sample_rate_without_rate_option() {
    let text = r#"{"global":{"core:datatype":"cu8","core:version":"1.2.0"},"captures":[{"core:sample_start":0}],"annotations":[]}"#;
    meta_case("no-rate", text, &[], &["core:sample_rate", "--rate"]);
}

#[test]
fn missing_sample_rate_is_supplied_by_rate_option() {
    let dir = scratch_dir("rate-given");
    let meta = dir.join("rate-given.sigmf-meta");
    let text = r#"{"global":{"core:datatype":"cu8","core:version":"1.2.0"},"captures":[{"core:sample_start":0}],"annotations":[]}"#;
    std::fs::write(&meta, text).unwrap();
    std::fs::write(dir.join("rate-given.sigmf-data"), [128u8; 48_000]).unwrap();
    let out = amrx(&[
        "demod",
        &meta.display().to_string(),
        "--rate",
        "240000",
        "--mode",
        "am",
        "--out",
        &out_wav(&dir),
        "--quiet",
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
}

#[test]
fn metadata_that_is_not_json() {
    meta_case(
        "not-json",
        "{\"global\": {\"core:datatype\": \"cu8\",, }",
        &[],
        &["JSON"],
    );
}

#[test]
fn data_size_not_whole_samples_is_a_warning_with_the_byte_count() {
    let dir = scratch_dir("ragged");
    let meta = dir.join("ragged.sigmf-meta");
    let text = r#"{"global":{"core:datatype":"ci16_le","core:version":"1.2.0","core:sample_rate":240000},"captures":[{"core:sample_start":0}],"annotations":[]}"#;
    std::fs::write(&meta, text).unwrap();
    std::fs::write(dir.join("ragged.sigmf-data"), vec![0u8; 4 * 24_000 + 3]).unwrap();
    let report = dir.join("r.json");
    let out = amrx(&[
        "demod",
        &meta.display().to_string(),
        "--mode",
        "am",
        "--out",
        &out_wav(&dir),
        "--report",
        &report.display().to_string(),
    ]);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(out.status.success(), "{stderr}");
    assert!(stderr.contains("3") && stderr.contains("bytes"), "{stderr}");
    let report = std::fs::read_to_string(report).unwrap();
    assert!(report.contains("bytes"), "{report}");
}

#[test]
fn offset_outside_nyquist() {
    let dir = scratch_dir("offset");
    let rec = good_recording(&dir);
    assert_one_line_error(
        &[
            "demod",
            &rec,
            "--mode",
            "am",
            "--offset",
            "-130000",
            "--out",
            &out_wav(&dir),
        ],
        &["good.sigmf-meta", "--offset", "-130000"],
    );
}

#[test]
fn bandwidth_impossible_for_audio_rate() {
    let dir = scratch_dir("bandwidth");
    let rec = good_recording(&dir);
    assert_one_line_error(
        &[
            "demod",
            &rec,
            "--mode",
            "am",
            "--offset",
            "20000",
            "--bandwidth",
            "30000",
            "--out",
            &out_wav(&dir),
        ],
        &["good.sigmf-meta", "--bandwidth"],
    );
}

#[test]
fn audio_rate_impossible() {
    let dir = scratch_dir("audio-rate");
    let rec = good_recording(&dir);
    assert_one_line_error(
        &[
            "demod",
            &rec,
            "--mode",
            "am",
            "--audio-rate",
            "0",
            "--out",
            &out_wav(&dir),
        ],
        &["good.sigmf-meta", "--audio-rate"],
    );
}

#[test]
fn one_channel_wav_as_iq() {
    let dir = scratch_dir("mono-wav");
    let path = dir.join("mono.wav");
    let spec = hound::WavSpec {
        channels: 1,
        sample_rate: 48_000,
        bits_per_sample: 16,
        sample_format: hound::SampleFormat::Int,
    };
    let mut w = hound::WavWriter::create(&path, spec).unwrap();
    for i in 0..4800 {
        w.write_sample((i % 100) as i16).unwrap();
    }
    w.finalize().unwrap();
    assert_one_line_error(
        &[
            "demod",
            &path.display().to_string(),
            "--mode",
            "am",
            "--out",
            &out_wav(&dir),
        ],
        &["mono.wav", "channel"],
    );
}

#[test]
fn non_finite_samples_are_counted_and_never_reach_the_wav() {
    let dir = scratch_dir("nan");
    let mut samples = tone_am(240_000.0, 20_000.0, 0.5, 1000.0, 0.5, 0.0);
    for i in (0..samples.len()).step_by(10_007) {
        samples[i] = Complex32::new(f32::NAN, f32::INFINITY);
    }
    let bad = samples.iter().filter(|s| !s.re.is_finite()).count();
    // Written by hand: the project's own writers refuse to store non-finite samples.
    let raw = dir.join("nan.cf32");
    let bytes: Vec<u8> = samples
        .iter()
        .flat_map(|s| [s.re.to_le_bytes(), s.im.to_le_bytes()])
        .flatten()
        .collect();
    std::fs::write(&raw, bytes).unwrap();
    let wav = dir.join("nan.wav");
    let out = amrx(&[
        "demod",
        &raw.display().to_string(),
        "--format",
        "cf32_le",
        "--rate",
        "240000",
        "--mode",
        "am",
        "--offset",
        "20000",
        "--out",
        &wav.display().to_string(),
    ]);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(out.status.success(), "{stderr}");
    assert!(
        stderr.contains(&bad.to_string()) && stderr.contains("non-finite"),
        "{stderr}"
    );
    let (audio, _) = common::read_wav(&wav);
    assert!(!audio.is_empty() && audio.iter().all(|x| x.is_finite()));
}

#[test]
fn output_path_that_cannot_be_written() {
    let dir = scratch_dir("unwritable");
    let rec = good_recording(&dir);
    let bad = dir
        .join("no-such-folder")
        .join("out.wav")
        .display()
        .to_string();
    assert_one_line_error(
        &[
            "demod", &rec, "--mode", "am", "--offset", "20000", "--out", &bad,
        ],
        &["no-such-folder"],
    );
}

#[test]
fn loop_parameters_out_of_range() {
    let dir = scratch_dir("loop-params");
    let rec = good_recording(&dir);
    let out = out_wav(&dir);
    for (option, value) in [
        ("--loop-bandwidth", "0"),
        ("--loop-bandwidth", "500000"),
        ("--loop-damping", "-1"),
    ] {
        assert_one_line_error(
            &[
                "demod", &rec, "--mode", "sam", "--offset", "20000", option, value, "--out", &out,
            ],
            &["good.sigmf-meta", option],
        );
    }
}

#[test]
fn loop_option_on_a_mode_without_a_loop() {
    let dir = scratch_dir("loop-on-am");
    let rec = good_recording(&dir);
    assert_one_line_error(
        &[
            "demod",
            &rec,
            "--mode",
            "am",
            "--loop-bandwidth",
            "20",
            "--out",
            &out_wav(&dir),
        ],
        &["good.sigmf-meta", "--loop-bandwidth"],
    );
}

/// Pure noise: the loop never locks; the run still succeeds, with locked = false, a warning,
/// and finite audio.
#[test]
fn pure_noise_reports_no_lock() {
    let dir = scratch_dir("noise-only");
    let mut noise = vec![Complex32::default(); 240_000];
    amrx::dsp::ComplexNoise::new(0.01, 3).add_to(&mut noise);
    let rec = write_sigmf(&dir, "noise", SampleFormat::Cf32Le, 240_000.0, &noise);
    for mode in ["sam", "dsb", "vsb"] {
        let wav = dir.join(format!("{mode}.wav"));
        let report = dir.join(format!("{mode}.json"));
        let out = amrx(&[
            "demod",
            &rec.display().to_string(),
            "--mode",
            mode,
            "--offset",
            "20000",
            "--out",
            &wav.display().to_string(),
            "--report",
            &report.display().to_string(),
        ]);
        assert!(
            out.status.success(),
            "{mode}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
        let json: serde_json::Value =
            serde_json::from_str(&std::fs::read_to_string(&report).unwrap()).unwrap();
        assert_eq!(json["locked"], false, "{mode}: {json}");
        assert!(
            json["warnings"].to_string().contains("lock"),
            "{mode}: {json}"
        );
        let (audio, _) = common::read_wav(&wav);
        assert!(audio.iter().all(|x| x.is_finite()), "{mode}");
    }
}

#[test]
fn sideband_option_on_a_mode_without_one() {
    let dir = scratch_dir("sideband");
    let rec = good_recording(&dir);
    assert_one_line_error(
        &[
            "demod",
            &rec,
            "--mode",
            "am",
            "--sideband",
            "upper",
            "--out",
            &out_wav(&dir),
        ],
        &["--sideband"],
    );
}

#[test]
fn raw_input_without_format() {
    let dir = scratch_dir("raw-no-format");
    let raw = dir.join("capture.bin");
    std::fs::write(&raw, [128u8; 1000]).unwrap();
    assert_one_line_error(
        &[
            "demod",
            &raw.display().to_string(),
            "--mode",
            "am",
            "--out",
            &out_wav(&dir),
        ],
        &["capture.bin", "--format"],
    );
}

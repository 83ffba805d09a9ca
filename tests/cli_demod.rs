//! The command-line contract: `demod`, `info` and `demo` as external tools drive them.

mod common;

use amrx::io::SampleFormat;
use amrx::measure::{estimate_tone_hz, sinad_db};
use common::{amrx, read_wav, scratch_dir, tone_am, write_sigmf};
use std::io::Write;
use std::process::{Command, Stdio};

const RATE: f64 = 960_000.0;

fn recording(dir: &std::path::Path) -> String {
    let samples = tone_am(RATE, -25_000.0, 0.6, 1000.0, 0.8, 1e-6);
    write_sigmf(dir, "station", SampleFormat::Cu8, RATE, &samples)
        .display()
        .to_string()
}

fn ok(args: &[&str]) -> std::process::Output {
    let out = amrx(args);
    assert!(
        out.status.success(),
        "{args:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    out
}

#[test]
fn demod_writes_audio_and_a_complete_report() {
    let dir = scratch_dir("cli-demod");
    let rec = recording(&dir);
    let wav = dir.join("a.wav").display().to_string();
    let report = dir.join("a.json").display().to_string();
    ok(&[
        "demod", &rec, "--mode", "am", "--offset", "-25000", "--out", &wav, "--report", &report,
        "--quiet",
    ]);
    let (audio, rate) = read_wav(std::path::Path::new(&wav));
    assert_eq!(rate, 48_000);
    let tone = estimate_tone_hz(&audio[9600..], 48_000.0).unwrap();
    assert!((tone - 1000.0).abs() < 0.5, "tone {tone}");
    let json: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&report).unwrap()).unwrap();
    for key in [
        "mode",
        "input_rate",
        "audio_rate",
        "samples_in",
        "samples_out",
        "carrier_offset_hz",
        "locked",
        "cnr_db",
        "modulation_depth",
        "warnings",
    ] {
        assert!(json.get(key).is_some(), "report lacks {key}: {json}");
    }
    assert_eq!(json["mode"], "am");
    assert_eq!(json["input_rate"], RATE);
    assert_eq!(json["samples_in"], (RATE * 0.8) as u64);
    assert_eq!(json["samples_out"], audio.len() as u64);
    assert!(json["locked"].is_null());
    assert!((json["carrier_offset_hz"].as_f64().unwrap() + 25_000.0).abs() < 2.0);
    let depth = &json["modulation_depth"];
    assert!(
        (depth["positive"].as_f64().unwrap() - 0.6).abs() < 0.02,
        "{depth}"
    );
    assert!(
        (depth["negative"].as_f64().unwrap() - 0.6).abs() < 0.02,
        "{depth}"
    );
}

#[test]
fn carrier_option_uses_the_recording_centre() {
    let dir = scratch_dir("cli-carrier");
    let rec = recording(&dir);
    let wav = dir.join("c.wav").display().to_string();
    let report = dir.join("c.json").display().to_string();
    // write_sigmf records a centre of 10 MHz, so the carrier is at 9.975 MHz.
    ok(&[
        "demod",
        &rec,
        "--mode",
        "am",
        "--carrier",
        "9975000",
        "--out",
        &wav,
        "--report",
        &report,
    ]);
    let json: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&report).unwrap()).unwrap();
    assert!(
        (json["carrier_offset_hz"].as_f64().unwrap() + 25_000.0).abs() < 2.0,
        "{json}"
    );
}

#[test]
fn pcm16_output_and_44k1_audio() {
    let dir = scratch_dir("cli-pcm16");
    let rec = recording(&dir);
    let wav = dir.join("p.wav");
    ok(&[
        "demod",
        &rec,
        "--mode",
        "am",
        "--offset",
        "-25000",
        "--audio-rate",
        "44100",
        "--pcm16",
        "--out",
        &wav.display().to_string(),
    ]);
    let reader = hound::WavReader::open(&wav).unwrap();
    assert_eq!(reader.spec().bits_per_sample, 16);
    assert_eq!(reader.spec().sample_rate, 44_100);
    let (audio, _) = read_wav(&wav);
    let sinad = sinad_db(&audio[8820..], 44_100.0, 1000.0).unwrap();
    assert!(sinad > 30.0, "SINAD {sinad}");
}

#[test]
fn raw_standard_input_to_raw_standard_output() {
    let samples = tone_am(RATE, 40_000.0, 0.5, 1000.0, 0.5, 1e-6);
    let mut bytes = vec![0u8; samples.len() * 4];
    for (s, b) in samples.iter().zip(bytes.chunks_exact_mut(4)) {
        SampleFormat::Ci16Le.encode(*s, b);
    }
    let mut child = Command::new(env!("CARGO_BIN_EXE_amrx"))
        .args([
            "demod", "-", "--format", "ci16_le", "--rate", "960000", "--mode", "am", "--offset",
            "40000", "--out", "-",
        ])
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let mut stdin = child.stdin.take().unwrap();
    let writer = std::thread::spawn(move || stdin.write_all(&bytes));
    let out = child.wait_with_output().unwrap();
    writer.join().unwrap().unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let audio: Vec<f32> = out
        .stdout
        .chunks_exact(4)
        .map(|b| f32::from_le_bytes([b[0], b[1], b[2], b[3]]))
        .collect();
    assert_eq!(audio.len(), 24_000);
    let tone = estimate_tone_hz(&audio[9600..], 48_000.0).unwrap();
    assert!((tone - 1000.0).abs() < 0.5, "tone {tone}");
}

#[test]
fn info_describes_the_recording() {
    let dir = scratch_dir("cli-info");
    let rec = recording(&dir);
    let out = ok(&["info", &rec]);
    let text = String::from_utf8_lossy(&out.stdout);
    for needle in ["cu8", "960000", "10000000", "768000", "0.800"] {
        assert!(text.contains(needle), "'{needle}' missing from:\n{text}");
    }
}

#[test]
fn iq_wav_input() {
    let dir = scratch_dir("cli-wav");
    let samples = tone_am(192_000.0, 30_000.0, 0.5, 1000.0, 0.6, 1e-6);
    let path = dir.join("iq.wav");
    let spec = hound::WavSpec {
        channels: 2,
        sample_rate: 192_000,
        bits_per_sample: 32,
        sample_format: hound::SampleFormat::Float,
    };
    let mut w = hound::WavWriter::create(&path, spec).unwrap();
    for s in &samples {
        w.write_sample(s.re).unwrap();
        w.write_sample(s.im).unwrap();
    }
    w.finalize().unwrap();
    let wav = dir.join("out.wav");
    ok(&[
        "demod",
        &path.display().to_string(),
        "--mode",
        "am",
        "--offset",
        "30000",
        "--out",
        &wav.display().to_string(),
    ]);
    let (audio, _) = read_wav(&wav);
    let sinad = sinad_db(&audio[9600..], 48_000.0, 1000.0).unwrap();
    assert!(sinad > 35.0, "SINAD {sinad}");
}

#[test]
fn demo_runs_and_prints_its_table() {
    let dir = scratch_dir("cli-demo");
    let out = ok(&["demo", &dir.display().to_string()]);
    let text = String::from_utf8_lossy(&out.stdout);
    for needle in [
        "AMRX-A",
        "AMRX-B",
        "AMRX-C",
        "AMRX-D",
        "AMRX-E",
        " sam ",
        " usb ",
        " dsb ",
        "overmodulation",
    ] {
        assert!(text.contains(needle), "'{needle}' missing from:\n{text}");
    }
    assert!(dir.join("demo-scene.sigmf-meta").exists());
    assert!(dir.join("amrx-a-am.wav").exists());
    assert!(!text.contains("not yet available"), "{text}");
}

/// A real IF sampled by an audio interface (ri16_le): the receiver treats it as x + 0j, tunes
/// to the IF and the channel filter removes the mirror image at −IF.
#[test]
fn real_if_recording() {
    let dir = scratch_dir("cli-real-if");
    let complex = tone_am(48_000.0, 12_000.0, 0.5, 800.0, 1.0, 1e-7);
    let real: Vec<amrx::Complex32> = complex
        .iter()
        .map(|s| amrx::Complex32::new(s.re, 0.0))
        .collect();
    let rec = write_sigmf(&dir, "real-if", SampleFormat::Ri16Le, 48_000.0, &real);
    let wav = dir.join("if.wav");
    let report = dir.join("if.json");
    ok(&[
        "demod",
        &rec.display().to_string(),
        "--mode",
        "am",
        "--offset",
        "12000",
        "--out",
        &wav.display().to_string(),
        "--report",
        &report.display().to_string(),
    ]);
    let (audio, _) = read_wav(&wav);
    let sinad = sinad_db(&audio[9600..], 48_000.0, 800.0).unwrap();
    assert!(sinad > 35.0, "SINAD {sinad}");
    let json: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&report).unwrap()).unwrap();
    let depth = json["modulation_depth"]["positive"].as_f64().unwrap();
    assert!((depth - 0.5).abs() < 0.01, "{json}");
}

/// `synth` writes a scene as SigMF; `demod` then receives its emissions.
#[test]
fn synth_then_demod_the_carrier_modes() {
    let dir = scratch_dir("cli-synth");
    let base = dir.join("hf");
    let scene = concat!(env!("CARGO_MANIFEST_DIR"), "/tests/data/scenes/hf_mix.json");
    let out = ok(&["synth", scene, "--out", &base.display().to_string()]);
    assert!(String::from_utf8_lossy(&out.stdout).contains("BRAVO DSB"));
    let meta = base.with_extension("sigmf-meta").display().to_string();
    for (mode, carrier) in [("am", "7070000"), ("sam", "7070000"), ("dsb", "7100000")] {
        let wav = dir.join(format!("{mode}.wav")).display().to_string();
        let report = dir.join(format!("{mode}.json"));
        ok(&[
            "demod",
            &meta,
            "--mode",
            mode,
            "--carrier",
            carrier,
            "--out",
            &wav,
            "--report",
            &report.display().to_string(),
        ]);
        let json: serde_json::Value =
            serde_json::from_str(&std::fs::read_to_string(&report).unwrap()).unwrap();
        let found = json["carrier_offset_hz"].as_f64().unwrap() + 7_150_000.0;
        assert!(
            (found - carrier.parse::<f64>().unwrap()).abs() < 2.0,
            "{mode}: {json}"
        );
        if mode != "am" {
            assert_eq!(json["locked"], true, "{mode}: {json}");
        }
    }
}

#[test]
fn synth_rejects_a_bad_scene_naming_the_field() {
    let dir = scratch_dir("cli-synth-bad");
    let scene = dir.join("bad.json");
    std::fs::write(
        &scene,
        r#"{"sample_rate": 48000, "centre_frequency": 0, "duration_s": 1, "emissions": [{"label": "X", "mode": "am", "offset_hz": 1000, "amplitude": 0.1, "mu": -0.5, "message": {"type": "tone", "frequency_hz": 400}}]}"#,
    )
    .unwrap();
    let out = amrx(&[
        "synth",
        &scene.display().to_string(),
        "--out",
        &dir.join("x").display().to_string(),
    ]);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(!out.status.success());
    assert_eq!(stderr.lines().count(), 1, "{stderr}");
    assert!(
        stderr.contains("bad.json") && stderr.contains("mu"),
        "{stderr}"
    );
}

/// The sideband modes end to end from a synthesised scene: usb, lsb with its reduced carrier
/// locked, isb to a two-channel WAV, and vsb.
#[test]
fn synth_then_demod_the_sideband_modes() {
    let dir = scratch_dir("cli-synth-ssb");
    let base = dir.join("hf");
    let scene = concat!(env!("CARGO_MANIFEST_DIR"), "/tests/data/scenes/hf_mix.json");
    ok(&["synth", scene, "--out", &base.display().to_string()]);
    let meta = base.with_extension("sigmf-meta").display().to_string();
    let cases: [(&str, &str, &[&str], u16); 4] = [
        ("usb", "7130000", &[], 1),
        ("lsb", "7165000", &["--carrier-lock"], 1),
        ("isb", "7195000", &[], 2),
        ("vsb", "7235000", &[], 1),
    ];
    for (mode, carrier, extra, channels) in cases {
        let wav = dir.join(format!("{mode}.wav"));
        let report = dir.join(format!("{mode}.json"));
        let mut args = vec![
            "demod",
            meta.as_str(),
            "--mode",
            mode,
            "--carrier",
            carrier,
            "--quiet",
        ];
        let (wav_s, report_s) = (wav.display().to_string(), report.display().to_string());
        args.extend_from_slice(&["--out", &wav_s, "--report", &report_s]);
        args.extend_from_slice(extra);
        ok(&args);
        let spec = hound::WavReader::open(&wav).unwrap().spec();
        assert_eq!(spec.channels, channels, "{mode}");
        let json: serde_json::Value =
            serde_json::from_str(&std::fs::read_to_string(&report).unwrap()).unwrap();
        assert_eq!(
            json["audio_channels"],
            u64::from(channels),
            "{mode}: {json}"
        );
        if mode == "lsb" {
            assert_eq!(json["locked"], true, "reduced carrier locked: {json}");
        }
        let (audio, _) = read_wav(&wav);
        let rms =
            (audio.iter().map(|x| f64::from(*x).powi(2)).sum::<f64>() / audio.len() as f64).sqrt();
        assert!(
            rms > 1e-3 && audio.iter().all(|x| x.is_finite()),
            "{mode}: rms {rms}"
        );
    }
}

#[test]
fn iq_balance_option_runs_ahead_of_any_mode() {
    let dir = scratch_dir("cli-iq-balance");
    let rec = recording(&dir);
    for mode in ["am", "sam"] {
        let wav = dir.join(format!("{mode}.wav"));
        ok(&[
            "demod",
            &rec,
            "--mode",
            mode,
            "--offset",
            "-25000",
            "--iq-balance",
            "--out",
            &wav.display().to_string(),
        ]);
        let (audio, _) = read_wav(&wav);
        let tone = estimate_tone_hz(&audio[9600..], 48_000.0).unwrap();
        assert!((tone - 1000.0).abs() < 0.5, "{mode}: tone {tone}");
    }
}

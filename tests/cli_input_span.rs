//! Options that apply to every input alike: `--start`/`--duration`, `--swap-iq`, `--centre`,
//! and the raw format read from a file's datatype suffix. Each is checked on a file and on
//! standard input (the same input layer serves both, and a live source after them).

mod common;

use amrx::io::SampleFormat;
use amrx::measure::estimate_tone_hz;
use amrx::Complex32;
use common::{amrx, read_wav, tone_am, write_sigmf, TempDir};
use std::io::Write;
use std::path::Path;
use std::process::{Command, Stdio};

const RATE: f64 = 240_000.0;
const OFFSET: f64 = -25_000.0;

/// One second of a 1000 Hz tone, then one second of a 2500 Hz tone, on one carrier.
fn two_halves() -> Vec<Complex32> {
    let mut samples = tone_am(RATE, OFFSET, 0.5, 1000.0, 1.0, 1e-6);
    samples.extend(tone_am(RATE, OFFSET, 0.5, 2500.0, 1.0, 1e-6));
    samples
}

fn cf32_bytes(samples: &[Complex32]) -> Vec<u8> {
    let mut bytes = vec![0u8; samples.len() * 8];
    for (s, b) in samples.iter().zip(bytes.chunks_exact_mut(8)) {
        SampleFormat::Cf32Le.encode(*s, b);
    }
    bytes
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

/// Runs amrx with `bytes` on standard input.
fn with_stdin(args: &[&str], bytes: Vec<u8>) -> std::process::Output {
    let mut child = Command::new(env!("CARGO_BIN_EXE_amrx"))
        .args(args)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let mut stdin = child.stdin.take().unwrap();
    // The child may stop reading early (a --duration): a broken pipe here is expected.
    let writer = std::thread::spawn(move || {
        let _ = stdin.write_all(&bytes);
    });
    let out = child.wait_with_output().unwrap();
    writer.join().unwrap();
    out
}

fn report(path: &Path) -> serde_json::Value {
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

/// The tone in the audio after the first 0.1 s (the receiver's settling).
fn tone_of(audio: &[f32]) -> f64 {
    estimate_tone_hz(&audio[4800..], 48_000.0).unwrap()
}

#[test]
fn start_and_duration_pick_the_part_of_a_file_and_of_a_stream() {
    let dir = TempDir::new("span");
    let samples = two_halves();
    let rec = write_sigmf(&dir, "two", SampleFormat::Cf32Le, RATE, &samples);
    let rec = rec.display().to_string();
    let wav = dir.path("a.wav").display().to_string();
    let json = dir.path("a.json");
    let span = ["--start", "1.2", "--duration", "0.6"];
    let common_args = ["--mode", "am", "--offset", "-25000", "--quiet"];
    let mut args = vec!["demod", rec.as_str(), "--out", &wav, "--report"];
    let json_s = json.display().to_string();
    args.push(&json_s);
    args.extend(span);
    args.extend(common_args);
    ok(&args);
    let (audio, _) = read_wav(Path::new(&wav));
    // 0.6 s at 48 kHz, to one audio sample (the receive job's alignment).
    assert!((audio.len() as i64 - 28_800).abs() <= 1, "{}", audio.len());
    let tone = tone_of(&audio);
    assert!(
        (tone - 2500.0).abs() < 1.0,
        "tone {tone}: not the second half"
    );
    assert_eq!(report(&json)["samples_in"], 144_000);

    // The same on standard input (raw cf32), audio to standard output.
    let mut args = vec![
        "demod", "-", "--format", "cf32_le", "--rate", "240000", "--out", "-",
    ];
    args.extend(span);
    args.extend(common_args);
    let out = with_stdin(&args, cf32_bytes(&samples));
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
    assert!((audio.len() as i64 - 28_800).abs() <= 1, "{}", audio.len());
    let tone = tone_of(&audio);
    assert!((tone - 2500.0).abs() < 1.0, "tone {tone}");
}

#[test]
fn a_start_past_the_end_is_refused_naming_the_option_and_the_length() {
    let dir = TempDir::new("span-end");
    let rec = write_sigmf(&dir, "two", SampleFormat::Cu8, RATE, &two_halves());
    let wav = dir.path("a.wav").display().to_string();
    let rec = rec.display().to_string();
    let base = ["--mode", "am", "--out", &wav, "--quiet"];
    let mut args = vec!["demod", rec.as_str(), "--start", "5"];
    args.extend(base);
    let out = amrx(&args);
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(!out.status.success());
    assert!(
        err.contains("--start 5") && err.contains("2.000 s"),
        "{err}"
    );
    assert!(!Path::new(&wav).exists(), "no audio for a refused run");
    // On a stream the length is learnt by reading to its end.
    let mut args = vec!["demod", "-", "--format", "cf32_le", "--rate", "240000"];
    args.extend(["--start", "5"]);
    args.extend(base);
    let out = with_stdin(&args, cf32_bytes(&two_halves()));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(!out.status.success());
    assert!(
        err.contains("--start 5") && err.contains("2.000 s"),
        "{err}"
    );
    for bad in [["--duration", "0"], ["--start", "-1"]] {
        let mut args = vec!["demod", rec.as_str()];
        args.extend(bad);
        args.extend(base);
        let out = amrx(&args);
        let err = String::from_utf8_lossy(&out.stderr);
        assert!(!out.status.success() && err.contains(bad[0]), "{err}");
    }
}

#[test]
fn swap_iq_mirrors_the_spectrum_of_a_file_and_of_a_stream() {
    let dir = TempDir::new("swap");
    let samples = tone_am(RATE, OFFSET, 0.5, 1000.0, 0.5, 1e-6);
    let rec = write_sigmf(&dir, "st", SampleFormat::Cf32Le, RATE, &samples);
    let rec = rec.display().to_string();
    let wav = dir.path("a.wav").display().to_string();
    let json = dir.path("a.json");
    let json_s = json.display().to_string();
    // Swapped, the station at −25 kHz appears at +25 kHz.
    ok(&[
        "demod",
        &rec,
        "--swap-iq",
        "--mode",
        "am",
        "--offset",
        "25000",
        "--out",
        &wav,
        "--report",
        &json_s,
        "--quiet",
    ]);
    let carrier = report(&json)["carrier_offset_hz"].as_f64().unwrap();
    assert!((carrier - 25_000.0).abs() < 2.0, "carrier {carrier}");
    let (audio, _) = read_wav(Path::new(&wav));
    assert!((tone_of(&audio) - 1000.0).abs() < 1.0);
    // Without the swap nothing is at +25 kHz: the audio (at unity gain) is 40 dB quieter.
    let rms = |a: &[f32]| (a.iter().map(|x| x * x).sum::<f32>() / a.len() as f32).sqrt();
    let swapped = rms(&audio[4800..]);
    ok(&[
        "demod",
        &rec,
        "--mode",
        "am",
        "--offset",
        "25000",
        "--calibrated",
        "--out",
        &wav,
        "--quiet",
    ]);
    let (plain, _) = read_wav(Path::new(&wav));
    assert!(
        rms(&plain[4800..]) < 0.01 * swapped,
        "{} vs {swapped}",
        rms(&plain[4800..])
    );
    // A stream: the same swap on standard input.
    let out = with_stdin(
        &[
            "demod",
            "-",
            "--format",
            "cf32_le",
            "--rate",
            "240000",
            "--swap-iq",
            "--mode",
            "am",
            "--offset",
            "25000",
            "--out",
            &wav,
            "--report",
            &json_s,
            "--quiet",
        ],
        cf32_bytes(&samples),
    );
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let carrier = report(&json)["carrier_offset_hz"].as_f64().unwrap();
    assert!((carrier - 25_000.0).abs() < 2.0, "carrier {carrier}");
}

#[test]
fn a_raw_capture_named_after_its_datatype_tunes_by_absolute_frequency_with_centre() {
    let dir = TempDir::new("suffix");
    let samples = tone_am(RATE, OFFSET, 0.5, 1000.0, 0.5, 1e-6);
    let meta = write_sigmf(&dir, "cap", SampleFormat::Cu8, RATE, &samples);
    // The SigMF data file alone is a raw cu8 capture: rename it after its datatype.
    let raw = dir.path("night.cu8");
    std::fs::rename(meta.with_extension("sigmf-data"), &raw).unwrap();
    let raw_s = raw.display().to_string();
    let wav = dir.path("a.wav").display().to_string();
    let json = dir.path("a.json");
    let json_s = json.display().to_string();
    ok(&[
        "demod",
        &raw_s,
        "--rate",
        "240000",
        "--centre",
        "7200000",
        "--carrier",
        "7175000",
        "--mode",
        "am",
        "--out",
        &wav,
        "--report",
        &json_s,
        "--quiet",
    ]);
    let r = report(&json);
    assert_eq!(r["tuned_offset_hz"], -25_000.0);
    let carrier = r["carrier_offset_hz"].as_f64().unwrap();
    assert!((carrier + 25_000.0).abs() < 2.0, "carrier {carrier}");
    // info reads the suffix too; --format overrides it.
    let text = String::from_utf8_lossy(
        &ok(&["info", &raw_s, "--rate", "240000", "--centre", "7200000"]).stdout,
    )
    .into_owned();
    assert!(text.contains("cu8") && text.contains("7200000"), "{text}");
    let text = String::from_utf8_lossy(
        &ok(&["info", &raw_s, "--rate", "240000", "--format", "ci8"]).stdout,
    )
    .into_owned();
    assert!(text.contains("ci8"), "{text}");
    // Without --centre, --carrier says how to give it.
    let out = amrx(&[
        "demod",
        &raw_s,
        "--rate",
        "240000",
        "--carrier",
        "7175000",
        "--mode",
        "am",
        "--out",
        &wav,
        "--quiet",
    ]);
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(!out.status.success() && err.contains("--centre"), "{err}");
}

/// A usb "station" (two tones above its suppressed carrier at −25 kHz) as a front end with I
/// and Q crossed delivers it: mirrored, at +25 kHz, its tones below the carrier.
fn swapped_usb() -> Vec<Complex32> {
    let mut rng_state = 7u32;
    let mut noise = move || {
        // A small linear congruential generator (Numerical Recipes' constants) is enough for
        // a floor the spectrum can read; its exact shape does not matter here.
        rng_state = rng_state
            .wrapping_mul(1_664_525)
            .wrapping_add(1_013_904_223);
        (f64::from(rng_state) / f64::from(u32::MAX) - 0.5) * 2e-3
    };
    (0..(RATE as usize))
        .map(|i| {
            let t = i as f64 / RATE;
            let z: Complex32 = [700.0, 1900.0]
                .iter()
                .map(|f| {
                    let phase = std::f64::consts::TAU * (OFFSET + f) * t;
                    Complex32::new((0.1 * phase.cos()) as f32, (0.1 * phase.sin()) as f32)
                })
                .sum();
            // I and Q crossed.
            Complex32::new(z.im + noise() as f32, z.re + noise() as f32)
        })
        .collect()
}

#[test]
fn reversed_sidebands_are_named_in_the_report_with_the_remedy() {
    let dir = TempDir::new("reversed");
    let rec = write_sigmf(&dir, "usb", SampleFormat::Cf32Le, RATE, &swapped_usb());
    let rec = rec.display().to_string();
    let wav = dir.path("a.wav").display().to_string();
    let json = dir.path("a.json");
    let json_s = json.display().to_string();
    let warnings = |extra: &[&str]| {
        let mut args = vec!["demod", &rec, "--mode", "usb", "--offset", "25000"];
        args.extend_from_slice(extra);
        args.extend_from_slice(&["--out", &wav, "--report", &json_s, "--quiet"]);
        ok(&args);
        report(&json)["warnings"]
            .as_array()
            .unwrap()
            .iter()
            .map(|w| w.as_str().unwrap().to_string())
            .collect::<Vec<_>>()
            .join("; ")
    };
    let crossed = warnings(&[]);
    assert!(
        crossed.contains("sidebands look reversed") && crossed.contains("--swap-iq"),
        "{crossed}"
    );
    // Swapped back, the station is a usb one at −25 kHz... tuned there, no hint.
    let mut args = vec![
        "demod",
        &rec,
        "--swap-iq",
        "--mode",
        "usb",
        "--offset",
        "-25000",
    ];
    args.extend_from_slice(&["--out", &wav, "--report", &json_s, "--quiet"]);
    ok(&args);
    let fixed = report(&json)["warnings"].to_string();
    assert!(!fixed.contains("reversed"), "{fixed}");
}

//! Faults as a user meets them (issue "Hardening"): no input overwritten, nothing half-written
//! presented as complete, interruptions finalised, closed or full standard output handled,
//! truncated inputs reported with their numbers, capped and sane error lines.

mod common;

use amrx::io::SampleFormat;
use common::{amrx, scratch_dir, tone_am, write_sigmf};
use std::io::{Read, Write};
use std::path::Path;
use std::process::{Command, Stdio};
use std::time::Duration;

fn bin() -> &'static str {
    env!("CARGO_BIN_EXE_amrx")
}

fn stderr_of(out: &std::process::Output) -> String {
    String::from_utf8_lossy(&out.stderr).into_owned()
}

fn no_panic(out: &std::process::Output) {
    let err = stderr_of(out);
    assert!(!err.contains("panicked"), "panic: {err}");
    assert_ne!(out.status.code(), Some(101), "panic exit: {err}");
}

/// The sizes a RIFF/WAVE header states, checked against the file's length: (RIFF size, data
/// size, data offset). Layout per the RIFF WAVE format (Microsoft/IBM, "Multimedia
/// Programming Interface and Data Specifications 1.0", 1991): chunks of id, u32 size, body.
fn wav_sizes(path: &Path) -> (u32, u32, u64) {
    let bytes = std::fs::read(path).unwrap();
    assert_eq!(&bytes[..4], b"RIFF");
    let riff = u32::from_le_bytes(bytes[4..8].try_into().unwrap());
    let mut at = 12usize;
    loop {
        let id = &bytes[at..at + 4];
        let size = u32::from_le_bytes(bytes[at + 4..at + 8].try_into().unwrap());
        if id == b"data" {
            return (riff, size, at as u64 + 8);
        }
        at += 8 + size as usize + (size as usize & 1);
    }
}

fn recording(dir: &Path) -> String {
    let samples = tone_am(240_000.0, 20_000.0, 0.5, 1000.0, 0.2, 0.0);
    write_sigmf(dir, "rec", SampleFormat::Ci16Le, 240_000.0, &samples)
        .display()
        .to_string()
}

#[test]
fn outputs_naming_an_input_are_refused_and_the_input_is_kept() {
    let dir = scratch_dir("faults-clobber");
    let meta = recording(&dir);
    let data = meta.replace(".sigmf-meta", ".sigmf-data");
    let before_meta = std::fs::read(&meta).unwrap();
    let before_data = std::fs::read(&data).unwrap();
    let wav = dir.join("a.wav").display().to_string();
    let hard = dir.join("hard-link.sigmf-data");
    std::fs::hard_link(&data, &hard).unwrap();
    let hard = hard.display().to_string();
    let cases: [&[&str]; 4] = [
        &["--out", &data],
        &["--out", &wav, "--report", &meta],
        &["--out", &hard],
        &["--out", &wav, "--report", &wav],
    ];
    for extra in cases {
        let mut args = vec!["demod", &meta, "--mode", "am", "--offset", "20000"];
        args.extend_from_slice(extra);
        let out = amrx(&args);
        no_panic(&out);
        assert!(!out.status.success(), "{extra:?} succeeded");
        assert!(
            stderr_of(&out).contains("refusing to write over"),
            "{}",
            stderr_of(&out)
        );
        assert_eq!(std::fs::read(&meta).unwrap(), before_meta);
        assert_eq!(std::fs::read(&data).unwrap(), before_data);
    }
    // An IQ WAV input named as the output.
    let iq_wav = dir.join("iq.wav");
    let spec = hound::WavSpec {
        channels: 2,
        sample_rate: 48_000,
        bits_per_sample: 16,
        sample_format: hound::SampleFormat::Int,
    };
    let mut w = hound::WavWriter::create(&iq_wav, spec).unwrap();
    for i in 0..48_000 {
        w.write_sample((i % 100) as i16).unwrap();
    }
    w.finalize().unwrap();
    let before = std::fs::read(&iq_wav).unwrap();
    let p = iq_wav.display().to_string();
    let out = amrx(&["demod", &p, "--mode", "am", "--out", &p]);
    assert!(!out.status.success());
    assert_eq!(std::fs::read(&iq_wav).unwrap(), before);
    // synth --out naming the scene file.
    let scene = dir.join("scene.sigmf-meta");
    std::fs::copy("assets/scenes/demo.json", &scene).unwrap();
    let before = std::fs::read(&scene).unwrap();
    let s = scene.display().to_string();
    let out = amrx(&["synth", &s, "--out", &s]);
    assert!(!out.status.success());
    assert!(stderr_of(&out).contains("refusing to write over"));
    assert_eq!(std::fs::read(&scene).unwrap(), before);
}

/// Spawns `demod` reading raw `cf32_le` zeros from a pipe that never ends, sends `signal`
/// once audio is being written, and returns (exit code, WAV path, report, and the folder, which
/// is removed when dropped).
fn interrupted_run(
    name: &str,
    signal: &str,
) -> (Option<i32>, std::path::PathBuf, String, common::TempDir) {
    let dir = scratch_dir(name);
    let wav = dir.join("cut.wav");
    let report = dir.join("cut.json");
    let mut child = Command::new(bin())
        .args(["demod", "-", "--format", "cf32_le", "--rate", "240000"])
        .args(["--mode", "am", "--quiet", "--out"])
        .arg(&wav)
        .arg("--report")
        .arg(&report)
        .stdin(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let mut stdin = child.stdin.take().unwrap();
    let feeder = std::thread::spawn(move || {
        let zeros = vec![0u8; 64 * 1024];
        // Ends when the child stops reading and closes the pipe.
        while stdin.write_all(&zeros).is_ok() {}
    });
    // Wait until the run is under way (its temporary output exists), then signal it.
    let started = std::time::Instant::now();
    while std::fs::read_dir(&dir).unwrap().count() == 0 {
        assert!(started.elapsed() < Duration::from_secs(60), "never started");
        std::thread::sleep(Duration::from_millis(20));
    }
    std::thread::sleep(Duration::from_millis(300));
    let status = Command::new("kill")
        .args([signal, &child.id().to_string()])
        .status()
        .unwrap();
    assert!(status.success());
    let mut err = String::new();
    child
        .stderr
        .take()
        .unwrap()
        .read_to_string(&mut err)
        .unwrap();
    let code = child.wait().unwrap().code();
    feeder.join().unwrap();
    assert!(err.contains("interrupted"), "stderr: {err}");
    let report = std::fs::read_to_string(&report).expect("report written");
    (code, wav, report, dir)
}

fn assert_finalised(wav: &Path, report: &str) {
    let len = std::fs::metadata(wav).unwrap().len();
    let (riff, data, offset) = wav_sizes(wav);
    assert_eq!(u64::from(riff) + 8, len, "RIFF size matches the file");
    assert_eq!(u64::from(data) + offset, len, "data size matches the file");
    assert!(data > 0, "audio before the signal is kept");
    let r: serde_json::Value = serde_json::from_str(report).unwrap();
    let warnings = r["warnings"].as_array().unwrap();
    assert!(warnings[0].as_str().unwrap().contains("interrupted"));
    let frames = r["samples_out"].as_u64().unwrap();
    assert_eq!(frames * 4, u64::from(data), "report and WAV agree");
    // The WAV is readable by hound (a reader the project did not write).
    assert_eq!(
        hound::WavReader::open(wav).unwrap().duration() as u64,
        frames
    );
}

#[test]
fn sigint_finalises_the_wav_and_the_report_and_exits_130() {
    let (code, wav, report, _dir) = interrupted_run("faults-sigint", "-INT");
    assert_eq!(code, Some(130));
    assert_finalised(&wav, &report);
}

#[test]
fn sigterm_finalises_the_wav_and_the_report_and_exits_143() {
    let (code, wav, report, _dir) = interrupted_run("faults-sigterm", "-TERM");
    assert_eq!(code, Some(143));
    assert_finalised(&wav, &report);
}

#[test]
fn a_file_size_limit_is_an_error_that_keeps_what_was_written() {
    let dir = scratch_dir("faults-ulimit");
    let input = dir.join("zeros.cf32");
    std::fs::write(&input, vec![0u8; 8 * 240_000]).unwrap();
    let wav = dir.join("big.wav");
    // 100 blocks of 512 bytes (POSIX `ulimit -f` unit) = 51,200 bytes, far below the
    // 192 kB of audio (1 s at 48 kHz, f32).
    let out = Command::new("sh")
        .arg("-c")
        .arg(format!(
            "ulimit -f 100 && exec {} demod {} --format cf32_le --rate 240000 --mode am --out {}",
            bin(),
            input.display(),
            wav.display()
        ))
        .output()
        .unwrap();
    no_panic(&out);
    let err = stderr_of(&out);
    assert_eq!(out.status.code(), Some(1), "{err}");
    assert!(err.contains("big.wav") && err.contains("kept the"), "{err}");
    assert_eq!(err.lines().count(), 1, "one line: {err}");
    // What fitted is kept: whole frames, a header that states exactly them, readable by
    // hound, and no temporary file left.
    let len = std::fs::metadata(&wav).unwrap().len();
    assert!(len <= 51_200 && len > 40_000, "{len} bytes");
    let (riff, data, offset) = wav_sizes(&wav);
    assert_eq!(u64::from(riff) + 8, len, "RIFF size matches the file");
    assert_eq!(u64::from(data) + offset, len, "data size matches the file");
    let frames = hound::WavReader::open(&wav).unwrap().duration();
    assert_eq!(u64::from(frames) * 4, u64::from(data));
    let kept = format!("kept the {frames} frames");
    assert!(err.contains(&kept), "{err} (expected '{kept}')");
    assert_eq!(
        std::fs::read_dir(&dir).unwrap().count(),
        2,
        "input and WAV only"
    );
}

#[test]
fn a_wav_left_by_a_killed_run_is_named_by_the_next_run() {
    let dir = scratch_dir("faults-sigkill");
    let wav = dir.join("cut.wav");
    let mut child = Command::new(bin())
        .args(["demod", "-", "--format", "cf32_le", "--rate", "240000"])
        .args(["--mode", "am", "--quiet", "--out"])
        .arg(&wav)
        .stdin(Stdio::piped())
        .stderr(Stdio::null())
        .spawn()
        .unwrap();
    let mut stdin = child.stdin.take().unwrap();
    let feeder = std::thread::spawn(move || {
        let zeros = vec![0u8; 64 * 1024];
        while stdin.write_all(&zeros).is_ok() {}
    });
    // Wait until audio has reached the temporary file (past its 94-byte header).
    let started = std::time::Instant::now();
    let temp = loop {
        assert!(started.elapsed() < Duration::from_secs(60), "never started");
        let written = std::fs::read_dir(&dir)
            .unwrap()
            .flatten()
            .find(|e| e.metadata().is_ok_and(|m| m.len() > 300_000));
        if let Some(entry) = written {
            break entry.path();
        }
        std::thread::sleep(Duration::from_millis(20));
    };
    child.kill().unwrap(); // SIGKILL: no chance to clean up
    child.wait().unwrap();
    feeder.join().unwrap();
    assert!(!wav.exists());
    // The killed run's file opens as a WAV of unknown length (sizes 0xFFFFFFFF).
    let (riff, data, _) = wav_sizes(&temp);
    assert_eq!((riff, data), (u32::MAX, u32::MAX));

    let input = dir.join("zeros.cf32");
    std::fs::write(&input, vec![0u8; 8 * 24_000]).unwrap();
    let out = amrx(&[
        "demod",
        input.to_str().unwrap(),
        "--format",
        "cf32_le",
        "--rate",
        "240000",
        "--mode",
        "am",
        "--quiet",
        "--out",
        wav.to_str().unwrap(),
    ]);
    no_panic(&out);
    assert!(out.status.success(), "{}", stderr_of(&out));
    let err = stderr_of(&out);
    let name = temp.file_name().unwrap().to_str().unwrap();
    assert!(
        err.contains("warning") && err.contains(name) && err.contains("killed"),
        "{err}"
    );
    assert!(
        temp.exists(),
        "the leftover is the user's to keep or delete"
    );
}

#[test]
fn a_removed_output_folder_is_an_error_not_a_silent_loss() {
    let dir = scratch_dir("faults-rmdir");
    let out_dir = dir.join("out");
    std::fs::create_dir(&out_dir).unwrap();
    let wav = out_dir.join("a.wav");
    let mut child = Command::new(bin())
        .args(["demod", "-", "--format", "cf32_le", "--rate", "240000"])
        .args(["--mode", "am", "--out"])
        .arg(&wav)
        .stdin(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let mut stdin = child.stdin.take().unwrap();
    stdin.write_all(&vec![0u8; 8 * 24_000]).unwrap();
    stdin.flush().unwrap();
    std::thread::sleep(Duration::from_millis(300));
    std::fs::remove_dir_all(&out_dir).unwrap();
    stdin.write_all(&vec![0u8; 8 * 24_000]).unwrap();
    drop(stdin);
    let out = child.wait_with_output().unwrap();
    no_panic(&out);
    assert!(!out.status.success(), "exit 0 with the audio lost");
    assert!(stderr_of(&out).contains("a.wav"), "{}", stderr_of(&out));
}

#[test]
fn truncated_and_empty_wav_inputs_are_reported_with_numbers() {
    let dir = scratch_dir("faults-truncated");
    let path = dir.join("iq.wav");
    let spec = hound::WavSpec {
        channels: 2,
        sample_rate: 48_000,
        bits_per_sample: 16,
        sample_format: hound::SampleFormat::Int,
    };
    let mut w = hound::WavWriter::create(&path, spec).unwrap();
    for i in 0..2 * 48_000 {
        w.write_sample(((i * 37) % 2000) as i16).unwrap();
    }
    w.finalize().unwrap();
    // Keep the header (44 bytes) and 10,000 of the 48,000 samples (4 bytes each).
    let file = std::fs::OpenOptions::new().write(true).open(&path).unwrap();
    file.set_len(44 + 40_000).unwrap();
    let p = path.display().to_string();
    let wav = dir.join("out.wav").display().to_string();
    let out = amrx(&["demod", &p, "--mode", "am", "--out", &wav]);
    no_panic(&out);
    assert!(out.status.success(), "{}", stderr_of(&out));
    let err = stderr_of(&out);
    assert!(
        err.contains(
            "announces 192000 data bytes (48000 samples) but the file holds 40000 (10000 samples)"
        ),
        "{err}"
    );
    assert_eq!(
        err.matches("it is truncated").count(),
        1,
        "said once: {err}"
    );
    let info = amrx(&["info", &p]);
    let text = String::from_utf8_lossy(&info.stdout);
    assert!(text.contains("10000"), "info counts what is there: {text}");
    assert!(text.contains("truncated"), "{text}");
    // The header only: an error, like an empty raw file.
    file.set_len(44).unwrap();
    let out = amrx(&["demod", &p, "--mode", "am", "--out", &wav]);
    no_panic(&out);
    assert!(!out.status.success());
    assert!(
        stderr_of(&out).contains("no samples"),
        "{}",
        stderr_of(&out)
    );
}

/// Runs `args` with standard output a pipe whose reading end is already closed.
fn with_closed_pipe(args: &[&str]) -> std::process::Output {
    let mut child = Command::new(bin())
        .args(args)
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    drop(child.stdout.take());
    child.wait_with_output().unwrap()
}

fn with_full_stdout(args: &[&str]) -> std::process::Output {
    Command::new(bin())
        .args(args)
        .stdout(std::fs::File::create("/dev/full").unwrap())
        .output()
        .unwrap()
}

#[test]
fn closed_or_full_standard_output_never_panics() {
    let dir = scratch_dir("faults-stdout");
    let meta = recording(&dir);
    let base = dir.join("synth").display().to_string();
    let demo_dir = dir.join("demo").display().to_string();
    let csv = dir.join("s.csv").display().to_string();
    let png = dir.join("s.png").display().to_string();
    let sweep = [
        "sweep",
        "--detectors",
        "am",
        "--from",
        "10",
        "--to",
        "10",
        "--trials",
        "1",
        "--seconds",
        "0.05",
        "--quiet",
        "--csv",
        &csv,
        "--png",
        &png,
    ];
    let commands: Vec<Vec<&str>> = vec![
        vec!["info", &meta],
        vec!["synth", "assets/scenes/demo.json", "--out", &base],
        vec!["demo", &demo_dir],
        sweep.to_vec(),
    ];
    for args in &commands {
        let out = with_closed_pipe(args);
        no_panic(&out);
        // A reader that went away ends the command quietly.
        assert!(out.status.success(), "{args:?}: {}", stderr_of(&out));
        let out = with_full_stdout(args);
        no_panic(&out);
        assert_eq!(out.status.code(), Some(1), "{args:?}");
        let err = stderr_of(&out);
        assert_eq!(err.lines().count(), 1, "{args:?}: {err}");
        assert!(err.contains("No space left"), "{args:?}: {err}");
    }
    // Audio to a closed standard output must not vanish with exit 0.
    let demod = [
        "demod", &meta, "--mode", "am", "--offset", "20000", "--out", "-",
    ];
    let out = with_closed_pipe(&demod);
    no_panic(&out);
    assert!(!out.status.success());
    let out = Command::new("sh")
        .arg("-c")
        .arg(format!(
            "exec {} demod {meta} --mode am --offset 20000 --out - >&-",
            bin()
        ))
        .output()
        .unwrap();
    no_panic(&out);
    assert!(!out.status.success(), "closed fd 1 gave exit 0");
    assert!(stderr_of(&out).contains("standard output is closed"));
}

#[cfg(unix)]
#[test]
fn sweep_writes_through_devices_and_symlinks_without_replacing_them() {
    let dir = scratch_dir("faults-devices");
    let real = dir.join("real.png");
    std::fs::write(&real, b"old").unwrap();
    let link = dir.join("link.png");
    std::os::unix::fs::symlink(&real, &link).unwrap();
    let l = link.display().to_string();
    let out = amrx(&[
        "sweep",
        "--detectors",
        "am",
        "--from",
        "10",
        "--to",
        "10",
        "--trials",
        "1",
        "--seconds",
        "0.05",
        "--quiet",
        "--csv",
        "/dev/null",
        "--png",
        &l,
    ]);
    assert!(out.status.success(), "{}", stderr_of(&out));
    use std::os::unix::fs::FileTypeExt;
    assert!(std::fs::metadata("/dev/null")
        .unwrap()
        .file_type()
        .is_char_device());
    assert!(std::fs::symlink_metadata(&link)
        .unwrap()
        .file_type()
        .is_symlink());
    assert_eq!(&std::fs::read(&real).unwrap()[1..4], b"PNG");
}

#[test]
fn absurd_values_get_short_errors_naming_the_file() {
    let dir = scratch_dir("faults-absurd");
    let meta = recording(&dir);
    let text = std::fs::read_to_string(&meta).unwrap();
    let v: serde_json::Value = serde_json::from_str(&text).unwrap();
    let rate = v["global"]["core:sample_rate"].to_string();
    std::fs::write(
        &meta,
        text.replace(
            &format!("\"core:sample_rate\": {rate}"),
            "\"core:sample_rate\": 5e-324",
        ),
    )
    .unwrap();
    for args in [
        vec!["info", &meta],
        vec!["demod", &meta, "--mode", "am", "--out", "/dev/null"],
    ] {
        let out = amrx(&args);
        no_panic(&out);
        let err = stderr_of(&out);
        assert!(!out.status.success());
        assert!(err.contains("rec.sigmf-meta"), "{err}");
        assert!(err.contains("core:sample_rate"), "{err}");
        assert!(!err.contains("--offset"), "{err}");
        assert!(err.len() < 200, "{err}");
    }
    // A scene asking for less than one sample, and one asking for a terabyte.
    let scene: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string("assets/scenes/demo.json").unwrap()).unwrap();
    let base = dir.join("s").display().to_string();
    let mut tiny = scene.clone();
    tiny["duration_s"] = serde_json::json!(1e-9);
    let mut huge = scene.clone();
    huge["duration_s"] = serde_json::json!(1e5);
    let mut long_string = scene.clone();
    long_string["sample_rate"] = serde_json::json!("x".repeat(10 << 20));
    for (name, s, needle) in [
        ("tiny", tiny, "less than one sample"),
        ("huge", huge, "--allow-large"),
        ("string", long_string, "more characters"),
    ] {
        let path = dir.join(format!("{name}.json"));
        std::fs::write(&path, s.to_string()).unwrap();
        let out = amrx(&["synth", &path.display().to_string(), "--out", &base]);
        no_panic(&out);
        let err = stderr_of(&out);
        assert!(!out.status.success(), "{name}");
        assert!(err.contains(needle), "{name}: {err}");
        assert!(err.len() < 600, "{name}: {} characters", err.len());
        assert!(!Path::new(&format!("{base}.sigmf-data")).exists(), "{name}");
    }
}

#[test]
fn a_file_shrinking_while_read_is_reported_with_numbers() {
    use amrx::io::{IqSource, RawSource};
    let dir = scratch_dir("faults-shrink");
    let path = dir.join("shrinks.cf32");
    std::fs::write(&path, vec![0u8; 8 * 1_000_000]).unwrap();
    let mut source = RawSource::open(&path, SampleFormat::Cf32Le, 48_000.0).unwrap();
    let mut buf = vec![amrx::Complex32::default(); 1000];
    let mut total = source.read(&mut buf).unwrap();
    std::fs::OpenOptions::new()
        .write(true)
        .open(&path)
        .unwrap()
        .set_len(8 * 500_000)
        .unwrap();
    loop {
        let n = source.read(&mut buf).unwrap();
        if n == 0 {
            break;
        }
        total += n;
    }
    assert_eq!(total, 500_000);
    let warnings = source.warnings().join("; ");
    assert!(
        warnings.contains("ended after 4000000 of 8000000 bytes (500000 of 1000000 samples)"),
        "{warnings}"
    );
}

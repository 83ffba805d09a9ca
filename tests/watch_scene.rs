//! `amrx watch` end to end on a synthesised 8.33 kHz raster, at two rates: 256 kS/s, which
//! 25/3 kHz does not divide (the general bank: every channel is a bin plus a residual shift),
//! and 2.4 MS/s, which it divides (the bank on the fs/STEP grid: 288 bins, one per channel,
//! a short prototype and the channel filter after it for the neighbours). Invented stations, each
//! AM with its own tone, two of them on adjacent channels, one that comes and goes, the rest
//! of the raster empty. Checks the command's contract (one WAV per channel ever active, the
//! recording's length, silent while squelched; SUMMARY.json; ACTIVITY.csv), that each active
//! channel's audio has its neighbours' tones at least 40 dB below its own, and that
//! transmissions are timed within 0.25 s.

use amrx::channelize::watch::BankDesign;
use amrx::pipeline::synth_job::run_scene;
use std::path::{Path, PathBuf};
use std::process::Command;

/// The rate of the off-grid scene (and of the other tests).
const RATE: f64 = 256_000.0;
const CENTRE: f64 = 125_000_000.0;
const STEP: f64 = 25_000.0 / 3.0;
const FIRST: f64 = -50_000.0;
const AUDIO: f64 = 48_000.0;

/// (channel index, tone Hz, start s, stop s); every other channel of the 12 is empty.
const ON_AIR: [(usize, f64, f64, f64); 4] = [
    (1, 500.0, 0.0, 4.0),
    (2, 1100.0, 0.0, 4.0),
    (3, 1700.0, 1.0, 2.5),
    (7, 2300.0, 0.0, 4.0),
];

fn out_dir(name: &str) -> PathBuf {
    let d = Path::new(env!("CARGO_TARGET_TMPDIR")).join(name);
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(d.join("wavs")).unwrap();
    d
}

/// The raster scene at `rate` (16-bit samples above 1 MS/s: 2.4 MS/s for 4 s is 38 MB so).
fn scene_file(dir: &Path, rate: f64) -> PathBuf {
    let datatype = if rate > 1e6 { "ci16_le" } else { "cf32_le" };
    let emissions: Vec<String> = ON_AIR
        .iter()
        .map(|&(k, tone, start, stop)| {
            format!(
                r#"{{ "label": "WCH-{k}", "mode": "am", "offset_hz": {}, "amplitude": 0.05, "mu": 0.5,
                   "message": {{ "type": "tone", "frequency_hz": {tone} }}, "start_s": {start}, "stop_s": {stop} }}"#,
                FIRST + k as f64 * STEP
            )
        })
        .collect();
    let scene = format!(
        r#"{{ "sample_rate": {rate}, "centre_frequency": {CENTRE}, "duration_s": 4.0, "seed": 833,
  "datatype": "{datatype}",
  "description": "amrx test raster: invented stations on 8.33 kHz channels",
  "noise": {{ "density_db_hz": -100 }},
  "emissions": [ {} ] }}"#,
        emissions.join(",\n")
    );
    let path = dir.join("raster.json");
    std::fs::write(&path, scene).unwrap();
    path
}

fn read_wav(path: &Path) -> (u32, Vec<f32>) {
    let mut r = hound::WavReader::open(path).unwrap();
    let rate = r.spec().sample_rate;
    (rate, r.samples::<f32>().map(Result::unwrap).collect())
}

/// Power of the `f` Hz component of `x` (Hann-windowed single-bin DFT).
fn tone_power(x: &[f32], f: f64) -> f64 {
    let n = x.len() as f64;
    let (mut re, mut im) = (0.0f64, 0.0f64);
    for (i, &v) in x.iter().enumerate() {
        let w = 0.5 - 0.5 * (std::f64::consts::TAU * i as f64 / n).cos();
        let a = std::f64::consts::TAU * f * i as f64 / AUDIO;
        re += w * f64::from(v) * a.cos();
        im -= w * f64::from(v) * a.sin();
    }
    re * re + im * im
}

#[test]
fn every_active_channel_is_heard_alone_and_timed_off_the_grid() {
    // 256 kS/s / 8.33 kHz = 30.72 bins: the general bank.
    let offsets: Vec<f64> = (0..12).map(|k| FIRST + k as f64 * STEP).collect();
    let bank = BankDesign::for_plan(RATE, 3_000.0, STEP, &offsets).unwrap();
    assert_eq!(bank, BankDesign::new(RATE, 3_000.0).unwrap());
    heard_alone_and_timed("watch_scene", RATE);
}

#[test]
fn every_active_channel_is_heard_alone_and_timed_on_the_grid() {
    // 2.4 MS/s / 8.33 kHz = 288 bins exactly, and the raster from −50 kHz is on that grid.
    let rate = 2_400_000.0;
    let offsets: Vec<f64> = (0..12).map(|k| FIRST + k as f64 * STEP).collect();
    let bank = BankDesign::for_plan(rate, 3_000.0, STEP, &offsets).unwrap();
    assert_eq!((bank.bins, bank.decimation), (288, 144));
    heard_alone_and_timed("watch_scene_on_grid", rate);
}

/// Synthesises the scene at `rate`, watches it through the command line and checks the
/// contract, the neighbours and the timing.
fn heard_alone_and_timed(name: &str, rate: f64) {
    let dir = out_dir(name);
    let base = dir.join("raster");
    run_scene(&scene_file(&dir, rate), &base, None).unwrap();
    let json = dir.join("summary.json");
    let log = dir.join("activity.csv");
    let wavs = dir.join("wavs");
    let status = Command::new(env!("CARGO_BIN_EXE_amrx"))
        .arg("watch")
        .arg(dir.join("raster.sigmf-meta"))
        .args(["--mode", "am", "--bandwidth", "3000", "--quiet"])
        .arg("--carriers")
        .arg(format!("{}:{STEP}:12", CENTRE + FIRST))
        .arg("--out-dir")
        .arg(&wavs)
        .arg("--json")
        .arg(&json)
        .arg("--log")
        .arg(&log)
        .status()
        .unwrap();
    assert!(status.success());

    let summary: serde_json::Value =
        serde_json::from_slice(&std::fs::read(&json).unwrap()).unwrap();
    let channels = summary["channels"].as_array().unwrap();
    assert_eq!(channels.len(), 12);
    let csv = std::fs::read_to_string(&log).unwrap();
    let mut rows = csv.lines();
    assert_eq!(
        rows.next(),
        Some("offset_hz,frequency_hz,start_s,end_s,peak_cnr_db")
    );
    assert_eq!(rows.count(), ON_AIR.len(), "{csv}");

    let mut audio = vec![None; 12];
    for (k, c) in channels.iter().enumerate() {
        let offset = FIRST + k as f64 * STEP;
        assert!((c["offset_hz"].as_f64().unwrap() - offset).abs() < 1e-3);
        assert!((c["frequency_hz"].as_f64().unwrap() - (CENTRE + offset)).abs() < 1e-3);
        let on = ON_AIR.iter().find(|s| s.0 == k);
        let tx = c["transmissions"].as_array().unwrap();
        match on {
            None => {
                assert!(c["file"].is_null(), "channel {k} was never on: {c}");
                assert!(tx.is_empty(), "channel {k}: {c}");
            }
            Some(&(_, tone, start, stop)) => {
                // One transmission, timed within 0.25 s (the meter's windows are 0.1 s).
                assert_eq!(tx.len(), 1, "channel {k}: {c}");
                let (s, e) = (
                    tx[0]["start_s"].as_f64().unwrap(),
                    tx[0]["end_s"].as_f64().unwrap(),
                );
                assert!(
                    (s - start).abs() <= 0.25 && (e - stop).abs() <= 0.25,
                    "channel {k}: {s}..{e} vs {start}..{stop}"
                );
                // C/N = A²/(N0·2B) (carrier power over the noise in the two sidebands' band):
                // 0.05² / (1e-10 · 6000) = 36.2 dB. The peak of 0.1 s windows sits a little above
                // the mean; 1.5 dB allows for that and the estimate's scatter.
                let cnr = tx[0]["peak_cnr_db"].as_f64().unwrap();
                let expected = 10.0 * (0.05f64.powi(2) / (1e-10 * 6000.0)).log10();
                assert!(
                    (cnr - expected).abs() <= 1.5,
                    "channel {k}: CNR {cnr} vs {expected}"
                );
                let file = c["file"].as_str().unwrap();
                let (rate, x) = read_wav(&wavs.join(file));
                assert_eq!(rate, 48_000);
                // The recording's length at the audio rate, to one sample.
                assert!((x.len() as f64 - 4.0 * AUDIO).abs() <= 1.0, "{}", x.len());
                audio[k] = Some((tone, start, stop, x));
            }
        }
    }
    // Only the active channels got files.
    assert_eq!(std::fs::read_dir(&wavs).unwrap().count(), ON_AIR.len());

    // Neighbours: in each active channel, the adjacent stations' tones ≥ 40 dB below its own,
    // read over 1.5..2.3 s when all four are on.
    let span = |x: &[f32]| x[(1.5 * AUDIO) as usize..(2.3 * AUDIO) as usize].to_vec();
    for (k, a) in audio.iter().enumerate() {
        let Some((tone, _, _, x)) = a else { continue };
        let own = tone_power(&span(x), *tone);
        for j in [k.wrapping_sub(1), k + 1] {
            let Some(Some((other, ..))) = audio.get(j) else {
                continue;
            };
            let leak = tone_power(&span(x), *other);
            let db = 10.0 * (own / leak.max(1e-30)).log10();
            eprintln!("channel {k}: neighbour {j}'s tone {db:.1} dB down");
            assert!(
                db >= 40.0,
                "channel {k}: neighbour {j} only {db:.1} dB down"
            );
        }
    }

    // Squelched audio is silent, and the station that comes and goes starts within 0.25 s
    // of its time in the recording.
    let (_, start, stop, x) = audio[3].as_ref().unwrap();
    let first = x.iter().position(|&v| v != 0.0).unwrap() as f64 / AUDIO;
    assert!((first - start).abs() <= 0.25, "audio starts at {first} s");
    let quiet_before = &x[..((start - 0.3) * AUDIO) as usize];
    let quiet_after = &x[((stop + 0.3 + 0.3) * AUDIO) as usize..];
    assert!(quiet_before.iter().chain(quiet_after).all(|&v| v == 0.0));
}

/// Refusals name the flag the user can change, and nothing is written.
#[test]
fn refusals_name_the_flag() {
    let dir = Path::new(env!("CARGO_TARGET_TMPDIR")).join("watch_refusals");
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(dir.join("wavs")).unwrap();
    let scene = format!(
        r#"{{ "sample_rate": {RATE}, "centre_frequency": {CENTRE}, "duration_s": 0.2, "seed": 5,
  "noise": {{ "density_db_hz": -100 }}, "emissions": [] }}"#
    );
    std::fs::write(dir.join("short.json"), scene).unwrap();
    run_scene(&dir.join("short.json"), &dir.join("short"), None).unwrap();
    let run = |args: &[&str]| {
        let out = Command::new(env!("CARGO_BIN_EXE_amrx"))
            .arg("watch")
            .arg(dir.join("short.sigmf-meta"))
            .args(["--out-dir", dir.join("wavs").to_str().unwrap(), "--quiet"])
            .args(args)
            .output()
            .unwrap();
        assert!(!out.status.success(), "{args:?} was accepted");
        String::from_utf8_lossy(&out.stderr).into_owned()
    };
    let cases: [(&[&str], &str); 5] = [
        (&["--mode", "fm", "--offsets", "0:8333:3"], "--mode"),
        (&["--mode", "am", "--offsets", "0:8333"], "--offsets"),
        (&["--mode", "am", "--offsets", "120000:8333:3"], "--offsets"),
        (&["--mode", "am", "--carriers", "1:8333:3"], "--carriers"),
        (
            &["--mode", "am", "--offsets", "0:8333:3", "--squelch", "nan"],
            "--squelch",
        ),
    ];
    for (args, flag) in cases {
        let said = run(args);
        assert!(said.contains(flag), "{args:?}: {said}");
    }
    assert_eq!(std::fs::read_dir(dir.join("wavs")).unwrap().count(), 0);
}

/// The squelch in every mode: for dsb, usb, lsb (no carrier) and am, a station that comes
/// (1.0 s) and goes (2.5 s) on one channel beside an empty one is logged once, timed within
/// 0.25 s, and its audio carries its tone; the empty channel stays shut and gets no file.
#[test]
fn the_squelch_opens_and_closes_in_every_mode() {
    for mode in ["dsb", "usb", "lsb", "am"] {
        let dir = Path::new(env!("CARGO_TARGET_TMPDIR")).join(format!("watch_mode_{mode}"));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).unwrap();
        let mu = if mode == "am" { r#""mu": 0.5,"# } else { "" };
        let scene = format!(
            r#"{{ "sample_rate": {RATE}, "centre_frequency": {CENTRE}, "duration_s": 3.5, "seed": 44,
  "noise": {{ "density_db_hz": -100 }},
  "emissions": [ {{ "label": "WMODE-1", "mode": "{mode}", "offset_hz": {}, "amplitude": 0.05, {mu}
     "message": {{ "type": "tone", "frequency_hz": 900 }}, "start_s": 1.0, "stop_s": 2.5 }} ] }}"#,
            FIRST + 2.0 * STEP
        );
        std::fs::write(dir.join("scene.json"), scene).unwrap();
        run_scene(&dir.join("scene.json"), &dir.join("rec"), None).unwrap();
        let json = dir.join("summary.json");
        let out = Command::new(env!("CARGO_BIN_EXE_amrx"))
            .arg("watch")
            .arg(dir.join("rec.sigmf-meta"))
            .args(["--mode", mode, "--bandwidth", "3000", "--quiet"])
            .arg("--offsets")
            .arg(format!("{}:{STEP}:2", FIRST + STEP))
            .arg("--out-dir")
            .arg(dir.join("wavs"))
            .arg("--json")
            .arg(&json)
            .output()
            .unwrap();
        assert!(
            out.status.success(),
            "{mode}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
        let summary: serde_json::Value =
            serde_json::from_slice(&std::fs::read(&json).unwrap()).unwrap();
        let channels = summary["channels"].as_array().unwrap();
        assert!(channels[0]["file"].is_null(), "{mode}: {}", channels[0]);
        assert!(channels[0]["transmissions"].as_array().unwrap().is_empty());
        let tx = channels[1]["transmissions"].as_array().unwrap();
        assert_eq!(tx.len(), 1, "{mode}: {}", channels[1]);
        let (s, e) = (
            tx[0]["start_s"].as_f64().unwrap(),
            tx[0]["end_s"].as_f64().unwrap(),
        );
        eprintln!(
            "{mode}: heard {s:.2}..{e:.2} s, peak {:.1} dB",
            tx[0]["peak_cnr_db"].as_f64().unwrap()
        );
        assert!(
            (s - 1.0).abs() <= 0.25 && (e - 2.5).abs() <= 0.25,
            "{mode}: {s}..{e}"
        );
        let (_, x) = read_wav(&dir.join("wavs").join(channels[1]["file"].as_str().unwrap()));
        let on = &x[(1.5 * AUDIO) as usize..(2.3 * AUDIO) as usize];
        // The tone stands ≥ 20 dB over a tone-free frequency of the same audio (the tone is
        // 900 Hz; 2100 Hz holds only noise at 36 dB CNR).
        let db = 10.0 * (tone_power(on, 900.0) / tone_power(on, 2100.0).max(1e-30)).log10();
        assert!(db >= 20.0, "{mode}: the tone only {db:.1} dB up");
        assert!(x[..(0.7 * AUDIO) as usize].iter().all(|&v| v == 0.0));
    }
}

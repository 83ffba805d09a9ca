//! Live sound tests against a real sound server: a private PulseAudio with two null sinks,
//! `out` (the default output; its monitor is recorded here) and `iq_in` (its monitor is the
//! default input), started by `.ci/run` (recipe in DEVELOPERS.md, "Live sound"). They need
//! `--features sound` and the server; run them one at a time:
//! `cargo test --release --features sound --test live_sound -- --test-threads=1 --nocapture`.

mod common;

use amrx::io::{AudioSink, SampleFormat};
use amrx::measure::sinad_db;
use amrx::sound::{LiveStats, SoundSink, SoundSinkSettings};
use common::{read_wav, scratch_dir, tone_am, write_sigmf};
use std::io::Read;
use std::path::Path;
use std::process::{Child, Command, Stdio};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

const RATE: f64 = 48_000.0;

fn server_is_up() {
    let ok = Command::new("pactl")
        .arg("info")
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .status()
        .is_ok_and(|s| s.success());
    assert!(
        ok,
        "no sound server: start the private PulseAudio of .ci/run (section 'live sound') first"
    );
}

/// Records a sink's monitor (stereo f32 at 48 kHz; `out` unless named) in a thread, keeping
/// the left channel and the time each piece arrived.
struct Monitor {
    child: Child,
    samples: Arc<Mutex<Vec<f32>>>,
    /// (instant, samples received by then) for each read.
    arrivals: Arc<Mutex<Vec<(Instant, usize)>>>,
    reader: Option<std::thread::JoinHandle<()>>,
}

impl Monitor {
    fn start() -> Self {
        Monitor::start_on("out.monitor")
    }

    fn start_on(source: &str) -> Self {
        let mut child = Command::new("parec")
            .args([
                "-d",
                source,
                "--format=float32le",
                "--rate=48000",
                "--channels=2",
                "--raw",
                "--latency-msec=5",
            ])
            .stdout(Stdio::piped())
            .stderr(Stdio::null())
            .spawn()
            .expect("parec runs (package pulseaudio-utils)");
        let mut out = child.stdout.take().unwrap();
        let samples = Arc::new(Mutex::new(Vec::new()));
        let arrivals = Arc::new(Mutex::new(Vec::new()));
        let (s, a) = (Arc::clone(&samples), Arc::clone(&arrivals));
        let reader = std::thread::spawn(move || {
            let mut buf = vec![0u8; 1920];
            let mut pending = Vec::new();
            while let Ok(n) = out.read(&mut buf) {
                if n == 0 {
                    break;
                }
                let now = Instant::now();
                pending.extend_from_slice(&buf[..n]);
                let whole = pending.len() / 8 * 8;
                let mut s = s.lock().unwrap();
                for frame in pending[..whole].chunks_exact(8) {
                    s.push(f32::from_le_bytes(frame[..4].try_into().unwrap()));
                }
                pending.drain(..whole);
                a.lock().unwrap().push((now, s.len()));
            }
        });
        // Let the recording stream start before anything plays.
        std::thread::sleep(Duration::from_millis(300));
        Monitor {
            child,
            samples,
            arrivals,
            reader: Some(reader),
        }
    }

    fn stop(mut self) -> (Vec<f32>, Vec<(Instant, usize)>) {
        std::thread::sleep(Duration::from_millis(300));
        let _ = self.child.kill();
        let _ = self.child.wait();
        if let Some(r) = self.reader.take() {
            let _ = r.join();
        }
        let s = std::mem::take(&mut *self.samples.lock().unwrap());
        let a = std::mem::take(&mut *self.arrivals.lock().unwrap());
        (s, a)
    }
}

/// The played stretch: from the first sample over `threshold` to the last.
fn played(capture: &[f32], threshold: f32) -> &[f32] {
    let first = capture.iter().position(|x| x.abs() > threshold);
    let last = capture.iter().rposition(|x| x.abs() > threshold);
    match (first, last) {
        (Some(a), Some(b)) => &capture[a..=b],
        _ => &[],
    }
}

/// Gaps inside a steady tone: 5 ms windows whose RMS falls under a third of the median
/// window's (a dropout of the server or the ring shows as a window of silence).
fn gaps(tone: &[f32]) -> usize {
    let w = (RATE * 0.005) as usize;
    let rms: Vec<f32> = tone
        .chunks_exact(w)
        .map(|c| (c.iter().map(|x| x * x).sum::<f32>() / w as f32).sqrt())
        .collect();
    let mut sorted = rms.clone();
    sorted.sort_by(f32::total_cmp);
    let median = sorted.get(sorted.len() / 2).copied().unwrap_or(0.0);
    rms.iter().filter(|&&r| r < median / 3.0).count()
}

/// A sink's own rate against the system's monotonic clock, in ppm, from its monitor's
/// arrivals between `from` and `to`: the least lateness (arrival time less samples / rate)
/// of each 0.5 s, and an ordinary least-squares line through those minima (pipe reads are
/// only ever late, so their lower envelope follows the sink; Moon, Skelly and Towsley,
/// IEEE INFOCOM 1999). A reference for the meter inside amrx that shares neither its path
/// to the server (parec is the sound server's own client, not cpal and ALSA) nor its code;
/// a plain regression over every read scattered by ±60 ppm between runs on a loaded machine.
fn monitor_rate_ppm(arrivals: &[(Instant, usize)], from: Instant, to: Instant) -> f64 {
    let mut minima: Vec<(f64, f64)> = Vec::new();
    for (t, n) in arrivals.iter().filter(|(t, _)| *t >= from && *t <= to) {
        let t = t.duration_since(from).as_secs_f64();
        let lateness = t - *n as f64 / RATE;
        let window = (t / 0.5) as usize;
        match minima.get_mut(window) {
            Some(m) if m.0.is_nan() || lateness < m.1 => *m = (t, lateness),
            Some(_) => {}
            None => {
                minima.resize(window, (f64::NAN, f64::NAN));
                minima.push((t, lateness));
            }
        }
    }
    let points: Vec<(f64, f64)> = minima.into_iter().filter(|m| !m.0.is_nan()).collect();
    let count = points.len() as f64;
    let mean_t = points.iter().map(|p| p.0).sum::<f64>() / count;
    let mean_l = points.iter().map(|p| p.1).sum::<f64>() / count;
    let (mut stt, mut stl) = (0.0, 0.0);
    for (t, l) in &points {
        stt += (t - mean_t) * (t - mean_t);
        stl += (t - mean_t) * (l - mean_l);
    }
    // Lateness falls by (rate / nominal − 1) per second.
    -stl / stt * 1e6
}

/// Writes a stereo IQ WAV (left I, right Q, f32 at 48 kHz) of `seconds` holding one line
/// at `hz` above the centre, at 0.3 of full scale.
fn write_iq_tone(path: &Path, hz: f64, seconds: f64) {
    let spec = hound::WavSpec {
        channels: 2,
        sample_rate: RATE as u32,
        bits_per_sample: 32,
        sample_format: hound::SampleFormat::Float,
    };
    let mut w = hound::WavWriter::create(path, spec).unwrap();
    for n in 0..(seconds * RATE) as usize {
        let phase = std::f64::consts::TAU * hz * n as f64 / RATE;
        w.write_sample((0.3 * phase.cos()) as f32).unwrap();
        w.write_sample((0.3 * phase.sin()) as f32).unwrap();
    }
    w.finalize().unwrap();
}

/// Plays `wav` into the `iq_in` null sink, whose monitor is the default capture device.
fn play_into_capture(wav: &Path) -> Child {
    Command::new("paplay")
        .args(["-d", "iq_in", wav.to_str().unwrap()])
        .spawn()
        .expect("paplay runs (package pulseaudio-utils)")
}

fn report(path: &Path) -> serde_json::Value {
    serde_json::from_str(&std::fs::read_to_string(path).expect("report written")).unwrap()
}

/// Writes `seconds` of a 1 kHz tone on full-carrier AM (μ 0.5) 20 kHz above the centre of a
/// 240 kS/s recording; returns the meta path.
fn am_recording(dir: &Path, seconds: f64) -> String {
    let iq = tone_am(240_000.0, 20_000.0, 0.5, 1000.0, seconds, 0.0);
    let meta = write_sigmf(dir, "tone", SampleFormat::Cf32Le, 240_000.0, &iq);
    meta.to_string_lossy().into_owned()
}

/// `--play` of a tone-modulated AM recording: the tone arrives in the monitor with SINAD at
/// least 30 dB (the figure) and no gap after the first audio; the run is paced to
/// the recording's length; the report carries the sound counts. At `--latency 300`: on the
/// shared 2-core CI machine, with other builds running, the default 30 ms dropped out (8
/// gaps of 5 ms in one run) where the sound server itself was starved.
#[test]
fn played_am_tone_arrives_clean_and_paced() {
    server_is_up();
    let dir = scratch_dir("live-play");
    let meta = am_recording(&dir, 4.0);
    let json = dir.join("r.json");
    let monitor = Monitor::start();
    let start = Instant::now();
    let out = Command::new(env!("CARGO_BIN_EXE_amrx"))
        .args([
            "demod", &meta, "--mode", "am", "--offset", "20000", "--play",
        ])
        .args(["--latency", "300", "--report", json.to_str().unwrap()])
        .output()
        .unwrap();
    let wall = start.elapsed().as_secs_f64();
    let (capture, _) = monitor.stop();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let tone = played(&capture, 0.01);
    let secs = tone.len() as f64 / RATE;
    // Trim 0.3 s at both ends: the DC blocker's settling and the end of the stream.
    let cut = (0.3 * RATE) as usize;
    let middle = &tone[cut..tone.len() - cut];
    let sinad = sinad_db(middle, RATE, 1000.0).unwrap();
    let gap_count = gaps(&tone[..tone.len() - cut]);
    let r = report(&json);
    println!(
        "play: {secs:.3} s of tone in the monitor, wall {wall:.3} s, SINAD {sinad:.1} dB, \
         {gap_count} gaps; report underruns {} overruns {} stream_errors {} clock_ppm {} latency_s {}",
        r["underruns"], r["overruns"], r["stream_errors"], r["clock_ppm"], r["latency_s"]
    );
    assert!(sinad >= 30.0, "SINAD {sinad:.1} dB");
    assert_eq!(gap_count, 0, "gaps in the played tone");
    // Paced: the 4 s recording takes 4 s to play (plus start-up and the drain), not 0.1 s.
    assert!((3.9..6.5).contains(&wall), "wall time {wall} s");
    assert!((3.8..4.2).contains(&secs), "{secs} s of tone");
    assert_eq!(r["underruns"], 0);
    assert!(r["overruns"].is_u64() && r["latency_s"].is_f64());
}

/// A stereo IQ WAV holding an upper-sideband signal (suppressed carrier 3 kHz above the
/// centre, a 1 kHz tone, so one line at +4 kHz) is played into the capture side and
/// demodulated from `sound:default`: SINAD at least 25 dB (the figure).
#[test]
fn ssb_from_the_capture_device() {
    server_is_up();
    let dir = scratch_dir("live-capture");
    let wav = dir.join("iq.wav");
    write_iq_tone(&wav, 4000.0, 8.0);
    let mut feeder = play_into_capture(&wav);
    std::thread::sleep(Duration::from_millis(500));
    let audio = dir.join("a.wav");
    let json = dir.join("r.json");
    let out = Command::new(env!("CARGO_BIN_EXE_amrx"))
        .args(["demod", "sound:default", "--rate", "48000", "--mode", "usb"])
        .args([
            "--offset",
            "3000",
            "--duration",
            "5",
            "--out",
            audio.to_str().unwrap(),
        ])
        .args(["--report", json.to_str().unwrap()])
        .output()
        .unwrap();
    let _ = feeder.kill();
    let _ = feeder.wait();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let (samples, rate) = read_wav(&audio);
    let secs = samples.len() as f64 / rate as f64;
    // Skip 1 s (the speech AGC's attack and the filters) and keep 3 s.
    let part = &samples[rate as usize..(4 * rate) as usize];
    let sinad = sinad_db(part, rate as f64, 1000.0).unwrap();
    let r = report(&json);
    println!(
        "capture: {secs:.2} s of audio, SINAD {sinad:.1} dB; report overruns {} clock_ppm {} warnings {}",
        r["overruns"], r["clock_ppm"], r["warnings"]
    );
    assert!(sinad >= 25.0, "SINAD {sinad:.1} dB");
    assert_eq!(
        r["samples_in"],
        5 * 48_000,
        "--duration 5 reads exactly 5 s"
    );
    assert!((4.99..5.01).contains(&secs), "{secs} s of audio");
    assert_eq!(r["overruns"], 0);
}

/// 30 s of playback with the other core busy, at the default latency and at 600 ms: the
/// underruns the ring counted, the dropouts the clock meter found, the gaps in the monitor
/// and the clock error (with the sink's rate read from its monitor) are printed for the
/// issue's closing note. Both runs stay paced; at 600 ms (a 200 ms device buffer, the size
/// LIVE-AUDIO-TESTING.md measured clean under load) nothing drops out and the clock error
/// agrees with the sink's own rate.
#[test]
fn thirty_seconds_under_load() {
    server_is_up();
    let dir = scratch_dir("live-load");
    let meta = am_recording(&dir, 30.0);
    let busy = Arc::new(AtomicBool::new(true));
    let spinner = {
        let busy = Arc::clone(&busy);
        std::thread::spawn(move || {
            let mut x = 0u64;
            while busy.load(Ordering::Relaxed) {
                x = std::hint::black_box(x.wrapping_mul(6364136223846793005).wrapping_add(1));
            }
        })
    };
    let mut results = Vec::new();
    for latency in ["30", "600"] {
        let json = dir.join(format!("r{latency}.json"));
        let monitor = Monitor::start();
        let start = Instant::now();
        let out = Command::new(env!("CARGO_BIN_EXE_amrx"))
            .args([
                "demod", &meta, "--mode", "am", "--offset", "20000", "--play",
            ])
            .args(["--latency", latency, "--report", json.to_str().unwrap()])
            .output()
            .unwrap();
        let wall = start.elapsed().as_secs_f64();
        let end = Instant::now();
        let (capture, arrivals) = monitor.stop();
        let sink_ppm = monitor_rate_ppm(
            &arrivals,
            start + Duration::from_secs(4),
            end - Duration::from_secs(1),
        );
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        let tone = played(&capture, 0.01);
        let cut = (0.3 * RATE) as usize;
        let gap_count = gaps(&tone[..tone.len().saturating_sub(cut)]);
        let r = report(&json);
        println!(
            "load, --latency {latency} ms: wall {wall:.2} s, {:.2} s of tone, {gap_count} gap \
             windows of 5 ms in the monitor; report underruns {} dropouts {} ({} s) \
             stream_errors {} clock_ppm {} (the sink's rate from its monitor: {sink_ppm:.1} ppm)",
            tone.len() as f64 / RATE,
            r["underruns"],
            r["dropouts"],
            r["dropout_s"],
            r["stream_errors"],
            r["clock_ppm"]
        );
        results.push((wall, gap_count, r, sink_ppm));
    }
    busy.store(false, Ordering::Relaxed);
    spinner.join().unwrap();
    // At the default 30 ms a loaded machine may drop out (the figures above are the
    // measurement); at 600 ms the run must be clean and paced.
    assert!(results[0].2["underruns"].is_u64());
    let (wall, gap_count, r, sink_ppm) = &results[1];
    assert!((29.8..31.5).contains(wall), "wall time {wall} s for 30 s");
    assert_eq!(*gap_count, 0, "gaps at 600 ms latency");
    assert_eq!(r["underruns"], 0);
    assert_eq!(r["dropouts"], 0);
    // A null sink does not run exactly on the system clock (30–150 ppm fast in the runs
    // measured, depending on its clients' latency): the meter must read what the sound
    // server's own recorder reads on the monitor (±25 ppm, as in
    // `capture_to_playback_follows_the_clocks`).
    let ppm = r["clock_ppm"]
        .as_f64()
        .expect("clock_ppm measured over 30 s");
    assert!(
        (ppm - sink_ppm).abs() < 25.0,
        "clock {ppm} ppm, the sink {sink_ppm} ppm"
    );
}

/// Capture and playback on two sound cards whose clocks differ: IQ played into the `iq_in`
/// null sink is captured from its monitor and the audio played into `out`. Null sinks do
/// not run exactly on the system clock (measured here 30–150 ppm fast, depending on the
/// latency their clients ask for), so the two differ by some tens of ppm. The report's
/// `clock_ppm` (output against input, from amrx's clock meters) must agree with the same
/// ratio measured by the sound server's own recorder on both monitors (±25 ppm: each
/// reference is a line through the least lateness of each 0.5 s of pipe reads, which
/// agreed with the meters within 2–12 ppm in runs on a loaded machine); the resampling correction must follow it (within
/// 20 ppm: the slow fill loop's trim, 1400 ppm per second of fill error, and 10 s means of
/// the fill that wandered by several ms), and the played tone has no gap and no underrun
/// at `--latency 600`.
#[test]
fn capture_to_playback_follows_the_clocks() {
    server_is_up();
    let dir = scratch_dir("live-drift");
    let wav = dir.join("iq.wav");
    write_iq_tone(&wav, 4000.0, 75.0);
    let input = Monitor::start_on("iq_in.monitor");
    let mut feeder = play_into_capture(&wav);
    std::thread::sleep(Duration::from_millis(500));
    let output = Monitor::start();
    let json = dir.join("r.json");
    let start = Instant::now();
    let out = Command::new(env!("CARGO_BIN_EXE_amrx"))
        .args(["demod", "sound:default", "--rate", "48000", "--mode", "usb"])
        .args(["--offset", "3000", "--duration", "60", "--play"])
        .args(["--latency", "600", "--report", json.to_str().unwrap()])
        .output()
        .unwrap();
    let end = Instant::now();
    let (capture, out_arrivals) = output.stop();
    let (_, in_arrivals) = input.stop();
    let _ = feeder.kill();
    let _ = feeder.wait();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let (from, to) = (start + Duration::from_secs(4), end - Duration::from_secs(1));
    let out_ppm = monitor_rate_ppm(&out_arrivals, from, to);
    let in_ppm = monitor_rate_ppm(&in_arrivals, from, to);
    let reference = ((1.0 + out_ppm * 1e-6) / (1.0 + in_ppm * 1e-6) - 1.0) * 1e6;
    let tone = played(&capture, 0.01);
    let cut = (0.7 * RATE) as usize;
    let gap_count = gaps(&tone[..tone.len().saturating_sub(cut)]);
    let r = report(&json);
    println!(
        "capture to playback: sinks {out_ppm:.1} (out) and {in_ppm:.1} (iq_in) ppm, ratio \
         {reference:.1} ppm; report clock_ppm {} clock_correction_ppm {} underruns {} \
         overruns {} dropouts {}; {:.2} s of tone, {gap_count} gaps",
        r["clock_ppm"],
        r["clock_correction_ppm"],
        r["underruns"],
        r["overruns"],
        r["dropouts"],
        tone.len() as f64 / RATE
    );
    let clock = r["clock_ppm"].as_f64().expect("clock measured over 60 s");
    let correction = r["clock_correction_ppm"].as_f64().expect("a correction");
    assert!(
        (clock - reference).abs() < 25.0,
        "clock {clock} ppm, sinks {reference} ppm"
    );
    assert!(
        (correction - clock).abs() < 20.0,
        "correction {correction} ppm, clock {clock} ppm"
    );
    assert_eq!(r["underruns"], 0);
    assert_eq!(r["overruns"], 0);
    assert_eq!(gap_count, 0, "gaps in the played tone");
}

/// Latency from a click written into the ring (the moment `write` returns) to its arrival in
/// the monitor recording, with the default settings: median of 10 (target 50 ms). The
/// recording side adds its own 5 ms of buffering, so this slightly overstates the output's.
#[test]
fn click_latency() {
    server_is_up();
    let stats = Arc::new(LiveStats::default());
    let monitor = Monitor::start();
    let mut sink = SoundSink::open(&SoundSinkSettings::new(RATE, 1), Arc::clone(&stats)).unwrap();
    let silence = vec![0.0f32; 480];
    let click = vec![0.9f32; 48];
    let mut written = Vec::new();
    for k in 0..10 {
        for _ in 0..30 {
            sink.write(&silence).unwrap();
        }
        sink.write(&click).unwrap();
        written.push(Instant::now());
        let _ = k;
    }
    for _ in 0..30 {
        sink.write(&silence).unwrap();
    }
    Box::new(sink).finish().unwrap();
    let (capture, arrivals) = monitor.stop();
    // Each click: the first sample over 0.5 among those that arrived after it was written,
    // and the time of the read that delivered it; one not there within 250 ms is lost (it
    // fell into a dropout), so that a lost click is never matched with the next one.
    let mut latencies = Vec::new();
    for t_write in &written {
        let from = arrivals
            .iter()
            .rev()
            .find(|(t, _)| t <= t_write)
            .map_or(0, |(_, n)| *n);
        let Some(i) = capture[from..]
            .iter()
            .position(|x| *x > 0.5)
            .map(|i| i + from)
        else {
            continue;
        };
        let (t_arrive, _) = arrivals.iter().find(|(_, n)| *n > i).unwrap();
        let ms = t_arrive.duration_since(*t_write).as_secs_f64() * 1e3;
        if ms < 250.0 {
            latencies.push(ms);
        }
    }
    latencies.sort_by(f64::total_cmp);
    let median = latencies[latencies.len() / 2];
    println!(
        "latency: median {median:.1} ms of {} clicks, range {:.1}-{:.1} ms, ring+buffer {:.1} ms",
        latencies.len(),
        latencies[0],
        latencies[latencies.len() - 1],
        stats.figures().latency_s.unwrap() * 1e3
    );
    // Under load a click can land in a server-side dropout; 8 of 10 must be found.
    assert!(
        latencies.len() >= 8,
        "{} of 10 clicks found",
        latencies.len()
    );
    assert!(median <= 50.0, "median latency {median:.1} ms");
}

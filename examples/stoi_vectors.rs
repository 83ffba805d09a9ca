//! Writes the signals of the STOI cross-check and the project's STOI of each:
//! a speech-like message (no recorded voice) as `clean.wav`, processed versions as
//! `CASE.wav` (10 kHz, 32-bit float), and `stoi_amrx.json` with `lab::stoi::stoi` of each.
//! CI then runs `python3 tests/stoi_check.py DIR`, which reads the same files with the
//! `pystoi` package and requires agreement within 0.01.
//!
//! ```sh
//! cargo run --release --example stoi_vectors -- target/tmp/stoi
//! ```

use amrx::lab::speech::speech_like;
use amrx::lab::stoi::{stoi, STOI_RATE};
use rand::{rngs::StdRng, SeedableRng};
use rand_distr::{Distribution, StandardNormal};
use std::path::{Path, PathBuf};

fn write(path: &Path, x: &[f64]) -> Result<(), Box<dyn std::error::Error>> {
    let spec = hound::WavSpec {
        channels: 1,
        sample_rate: STOI_RATE as u32,
        bits_per_sample: 32,
        sample_format: hound::SampleFormat::Float,
    };
    let mut w = hound::WavWriter::create(path, spec)?;
    for &v in x {
        w.write_sample(v as f32)?;
    }
    w.finalize()?;
    Ok(())
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let dir = PathBuf::from(
        std::env::args()
            .nth(1)
            .unwrap_or_else(|| "target/tmp/stoi".into()),
    );
    std::fs::create_dir_all(&dir)?;
    // Rounded to f32 first: both sides then score exactly the samples in the files.
    let round = |v: Vec<f64>| -> Vec<f64> { v.into_iter().map(|s| f64::from(s as f32)).collect() };
    let clean = round(speech_like(STOI_RATE, 4000.0, 4.0, 11)?);
    let power = clean.iter().map(|v| v * v).sum::<f64>() / clean.len() as f64;
    let mut cases: Vec<(String, Vec<f64>)> = Vec::new();
    for snr_db in [-10.0, -5.0, 0.0, 5.0, 15.0] {
        let mut rng = StdRng::seed_from_u64(snr_db as i64 as u64 ^ 77);
        let sigma = (power / 10f64.powf(snr_db / 10.0)).sqrt();
        let y: Vec<f64> = clean
            .iter()
            .map(|v| {
                let z: f64 = StandardNormal.sample(&mut rng);
                v + sigma * z
            })
            .collect();
        cases.push((format!("white_{snr_db}dB"), round(y)));
    }
    // A crude telephone: an 8-sample moving average (a low-pass with its first null at
    // 1250 Hz), and hard clipping at a tenth of the peak.
    let smooth: Vec<f64> = (0..clean.len())
        .map(|n| clean[n.saturating_sub(7)..=n].iter().sum::<f64>() / 8.0)
        .collect();
    cases.push(("moving_average_8".into(), round(smooth)));
    let peak = clean.iter().fold(0.0f64, |a, v| a.max(v.abs()));
    let clipped: Vec<f64> = clean
        .iter()
        .map(|v| v.clamp(-0.1 * peak, 0.1 * peak))
        .collect();
    cases.push(("clipped_10pc".into(), round(clipped)));
    write(&dir.join("clean.wav"), &clean)?;
    let mut json = serde_json::Map::new();
    for (name, y) in &cases {
        write(&dir.join(format!("{name}.wav")), y)?;
        let d = stoi(&clean, y, STOI_RATE)?;
        println!("{name}: STOI {d:.4}");
        json.insert(name.clone(), serde_json::json!(d));
    }
    std::fs::write(
        dir.join("stoi_amrx.json"),
        serde_json::to_string_pretty(&json)?,
    )?;
    Ok(())
}

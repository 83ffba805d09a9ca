//! Shared helpers for the integration tests.
#![allow(dead_code)]

use amrx::dsp::ComplexNoise;
use amrx::io::{SampleFormat, SigmfWriter};
use amrx::synth::AmToneTransmitter;
use amrx::Complex32;
use std::path::{Path, PathBuf};

/// A fresh, empty folder for one test, under the system's temp folder, removed (with all it
/// holds) when the returned value is dropped.
pub fn scratch_dir(name: &str) -> TempDir {
    TempDir::new(name)
}

/// Tone-modulated full-carrier AM with optional noise of power `noise_power`.
pub fn tone_am(
    rate: f64,
    offset_hz: f64,
    mu: f64,
    tone_hz: f64,
    seconds: f64,
    noise_power: f64,
) -> Vec<Complex32> {
    let mut tx = AmToneTransmitter::new(0.25, mu, tone_hz, offset_hz, rate).expect("valid AM");
    let mut samples = vec![Complex32::default(); (rate * seconds) as usize];
    tx.fill(&mut samples);
    if noise_power > 0.0 {
        ComplexNoise::new(noise_power, 7).add_to(&mut samples);
    }
    samples
}

/// Writes `samples` as a SigMF recording `dir/name` in `format`; returns the meta path.
pub fn write_sigmf(
    dir: &Path,
    name: &str,
    format: SampleFormat,
    rate: f64,
    samples: &[Complex32],
) -> PathBuf {
    let base = dir.join(name);
    let mut writer = SigmfWriter::create(&base, format, rate, Some(10_000_000.0), "amrx test")
        .expect("create recording");
    writer.write(samples).expect("write samples");
    writer.finish().expect("finish recording");
    base.with_extension("sigmf-meta")
}

/// Runs the `amrx` binary with `args` (the binary is built with the `cli` feature only).
#[cfg(feature = "cli")]
pub fn amrx(args: &[&str]) -> std::process::Output {
    std::process::Command::new(env!("CARGO_BIN_EXE_amrx"))
        .args(args)
        .output()
        .expect("the amrx binary runs")
}

/// Reads a mono WAV written by amrx as f32.
pub fn read_wav(path: &Path) -> (Vec<f32>, u32) {
    let reader = hound::WavReader::open(path).expect("readable WAV");
    let rate = reader.spec().sample_rate;
    let samples = match reader.spec().sample_format {
        hound::SampleFormat::Float => reader.into_samples::<f32>().map(|s| s.unwrap()).collect(),
        hound::SampleFormat::Int => reader
            .into_samples::<i32>()
            .map(|s| s.unwrap() as f32 / 32768.0)
            .collect(),
    };
    (samples, rate)
}

/// A fresh directory under the system temp dir, named after the test binary, the process and
/// `name`, removed when dropped.
pub struct TempDir(PathBuf);

impl TempDir {
    /// Creates the (empty) directory.
    pub fn new(name: &str) -> Self {
        let dir = std::env::temp_dir().join(format!(
            "amrx-{}-{}-{name}",
            env!("CARGO_CRATE_NAME"),
            std::process::id()
        ));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).expect("temp folder is writable");
        TempDir(dir)
    }

    /// A file inside the directory.
    pub fn path(&self, file: &str) -> PathBuf {
        self.0.join(file)
    }
}

impl std::ops::Deref for TempDir {
    type Target = Path;
    fn deref(&self) -> &Path {
        &self.0
    }
}

impl AsRef<Path> for TempDir {
    fn as_ref(&self) -> &Path {
        &self.0
    }
}

impl Drop for TempDir {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.0);
    }
}

/// Shorthand for a complex sample.
pub fn c(re: f32, im: f32) -> Complex32 {
    Complex32::new(re, im)
}

/// Reads a source to its end in reads of `chunk` samples.
pub fn read_all(source: &mut dyn amrx::io::IqSource, chunk: usize) -> Vec<Complex32> {
    let mut all = Vec::new();
    let mut buf = vec![c(0.0, 0.0); chunk];
    loop {
        let n = source.read(&mut buf).expect("readable source");
        if n == 0 {
            return all;
        }
        all.extend_from_slice(&buf[..n]);
    }
}

//! `demo`: an invented scene of a few stations, written as a SigMF recording, then received.
//!
//! Every station, call sign and frequency here is invented. The scene (`assets/scenes/demo.json`,
//! built into the binary) imitates a cheap 8-bit direct-conversion receiver: a DC offset at the
//! centre, IQ gain and phase imbalance, and 8-bit quantisation, on top of white noise.

use super::job::{run_demod, AudioTarget, DemodRequest, Tuning};
use super::progress::Progress;
use super::report::Report;
use super::synth_job::write_scene_with_progress;
use crate::demod::{AudioLevel, Mode};
use crate::measure::{estimate_tone_hz, sinad_db};
use crate::synth::emission::{EmissionSpec, MessageSpec, ModeSpec};
use crate::synth::scene::Scene;
use crate::{Error, Result};
use std::path::{Path, PathBuf};

/// The demo scene, as `amrx synth` reads scenes.
pub const DEMO_SCENE: &str = include_str!("../../assets/scenes/demo.json");
/// The name the demo scene goes by in errors.
const DEMO_ORIGIN: &str = "built-in demo scene";

/// One reception the demo makes: an emission of the scene and the mode it is received with.
#[derive(Debug, Clone, PartialEq)]
pub struct DemoStation {
    /// The emission's label (an invented call sign).
    pub call_sign: String,
    /// Mode it is received with.
    pub mode: Mode,
    /// Carrier offset from the centre in Hz.
    pub offset_hz: f64,
    /// The test tone, if the message is one.
    pub tone_hz: Option<f64>,
}

/// What the demo found for one reception.
#[derive(Debug, Clone, PartialEq)]
pub struct DemoRow {
    /// The reception.
    pub station: DemoStation,
    /// The receive report, or why it could not be received.
    pub outcome: std::result::Result<DemoReception, String>,
}

/// A received demo station.
#[derive(Debug, Clone, PartialEq)]
pub struct DemoReception {
    /// The receiver's report.
    pub report: Report,
    /// The audio file written.
    pub wav: PathBuf,
    /// Measured tone frequency of the audio, in Hz.
    pub tone_hz: Option<f64>,
    /// SINAD of the audio against its tone, in dB.
    pub sinad_db: Option<f64>,
}

/// The parsed demo scene.
pub fn demo_scene() -> Result<Scene> {
    Scene::parse(DEMO_SCENE, Path::new(DEMO_ORIGIN))
}

/// Every reception of the scene: each emission in its own mode, and full-carrier AM stations
/// also by synchronous detection.
pub fn demo_stations(scene: &Scene) -> Vec<DemoStation> {
    let mut stations = Vec::new();
    for e in &scene.emissions {
        let mode = receive_mode(e.mode);
        stations.push(station(e, mode));
        if mode == Mode::Am && e.mu.is_some_and(|mu| mu <= 1.0) {
            stations.push(station(e, Mode::Sam));
        }
    }
    stations
}

fn station(e: &EmissionSpec, mode: Mode) -> DemoStation {
    let tone_hz = match e.message {
        MessageSpec::Tone { frequency_hz } => Some(frequency_hz),
        _ => None,
    };
    DemoStation {
        call_sign: e.label.clone(),
        mode,
        offset_hz: e.offset_hz,
        tone_hz,
    }
}

fn receive_mode(mode: ModeSpec) -> Mode {
    match mode {
        ModeSpec::Am => Mode::Am,
        ModeSpec::Dsb => Mode::Dsb,
        ModeSpec::Usb => Mode::Usb,
        ModeSpec::Lsb => Mode::Lsb,
        ModeSpec::Isb => Mode::Isb,
        ModeSpec::Vsb => Mode::Vsb,
    }
}

/// Writes the scene into `dir`, receives every station, and returns one row per reception.
pub fn run_demo(dir: &Path) -> Result<(PathBuf, Vec<DemoRow>)> {
    run_demo_with_progress(dir, &|_| {})
}

/// As [`run_demo`], calling `progress` as it goes: the samples generated plus the samples
/// received so far, out of the scene's length times one more than the number of receptions.
pub fn run_demo_with_progress(
    dir: &Path,
    progress: &(dyn Fn(Progress) + Sync),
) -> Result<(PathBuf, Vec<DemoRow>)> {
    std::fs::create_dir_all(dir).map_err(|e| Error::io(dir, e))?;
    let scene = demo_scene()?;
    let stations = demo_stations(&scene);
    let length = scene.total_samples();
    let total = Some(length * (1 + stations.len() as u64));
    let summary = write_scene_with_progress(
        &scene,
        Path::new(DEMO_ORIGIN),
        dir,
        &dir.join("demo-scene"),
        None,
        &|p| {
            progress(Progress {
                done: p.done,
                total,
            })
        },
    )?;
    let rows = stations
        .into_iter()
        .enumerate()
        .map(|(k, station)| {
            let before = length * (1 + k as u64);
            let step = |p: Progress| {
                progress(Progress {
                    done: before + p.done,
                    total,
                })
            };
            receive_station(
                &summary.meta_path,
                dir,
                scene.centre_frequency,
                station,
                &step,
            )
        })
        .collect::<Result<Vec<_>>>()?;
    Ok((summary.meta_path, rows))
}

fn receive_station(
    meta: &Path,
    dir: &Path,
    centre_hz: f64,
    station: DemoStation,
    progress: &(dyn Fn(Progress) + Sync),
) -> Result<DemoRow> {
    let wav = dir.join(format!(
        "{}-{}.wav",
        station.call_sign.to_lowercase(),
        station.mode
    ));
    let mut request = DemodRequest::new(
        meta,
        station.mode,
        AudioTarget::Wav {
            path: wav.clone(),
            pcm16: false,
        },
    );
    request.tuning = Tuning::Carrier(centre_hz + station.offset_hz);
    // The demo's audio is for listening.
    request.options.agc = Some(AudioLevel::Listening.agc(station.mode));
    request.report = Some(wav.with_extension("json"));
    let report = run_demod(&request, progress)?;
    let outcome = Ok(measure_audio(report, wav, station.tone_hz)?);
    Ok(DemoRow { station, outcome })
}

/// Reads the written audio back and measures its tone, skipping the first 0.5 s of settling
/// (filters, loops and AGC).
fn measure_audio(report: Report, wav: PathBuf, tone: Option<f64>) -> Result<DemoReception> {
    let audio = read_wav_f32(&wav)?;
    let rate = report.audio_rate;
    let settled = &audio[((0.5 * rate) as usize).min(audio.len())..];
    let tone_hz = tone.and_then(|_| estimate_tone_hz(settled, rate));
    let sinad = tone_hz.and_then(|f| sinad_db(settled, rate, f));
    Ok(DemoReception {
        report,
        wav,
        tone_hz,
        sinad_db: sinad,
    })
}

fn read_wav_f32(path: &Path) -> Result<Vec<f32>> {
    let reader = hound::WavReader::open(path).map_err(|e| Error::file(path, e.to_string()))?;
    reader
        .into_samples::<f32>()
        .collect::<std::result::Result<Vec<_>, _>>()
        .map_err(|e| Error::file(path, e.to_string()))
}

/// The default demo folder: `amrx-demo` in the system's temporary directory.
pub fn default_demo_dir() -> PathBuf {
    std::env::temp_dir().join("amrx-demo")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_built_in_scene_parses_and_lists_its_receptions() {
        let scene = demo_scene().unwrap();
        let stations = demo_stations(&scene);
        let names: Vec<String> = stations
            .iter()
            .map(|s| format!("{} {}", s.call_sign, s.mode))
            .collect();
        assert_eq!(
            names,
            [
                "AMRX-A am",
                "AMRX-A sam",
                "AMRX-B am",
                "AMRX-B sam",
                "AMRX-C am",
                "AMRX-D usb",
                "AMRX-E dsb"
            ]
        );
    }
}

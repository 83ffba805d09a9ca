//! `demo`: an invented scene of a few stations, written as a SigMF recording, then received.
//!
//! Every station, call sign and frequency here is invented. The recording imitates a cheap
//! 8-bit direct-conversion receiver: a DC offset at the centre, IQ gain and phase imbalance,
//! and 8-bit quantisation, on top of white noise.

use super::job::{run_demod, AudioTarget, DemodRequest, Tuning};
use super::report::Report;
use crate::demod::Mode;
use crate::io::{SampleFormat, SigmfAnnotation, SigmfWriter};
use crate::measure::{estimate_tone_hz, sinad_db};
use crate::synth::{AmToneTransmitter, ComplexNoise, IqImpairment};
use crate::{Complex32, Error, Result};
use std::f64::consts::TAU;
use std::path::{Path, PathBuf};

/// Sample rate of the demo recording.
pub const DEMO_RATE: f64 = 960_000.0;
/// Centre frequency of the demo recording (an invented medium-wave band segment).
pub const DEMO_CENTRE_HZ: f64 = 1_000_000.0;
/// Duration of the demo recording in seconds.
pub const DEMO_SECONDS: f64 = 2.0;
/// Complex noise power in the recording (sets every station's CNR).
const NOISE_POWER: f64 = 2.4e-4;

/// One invented emission in the demo scene.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DemoStation {
    /// Invented call sign.
    pub call_sign: &'static str,
    /// Mode to receive it with.
    pub mode: Mode,
    /// Carrier offset from the centre in Hz.
    pub offset_hz: f64,
    /// Carrier amplitude (full scale 1).
    pub amplitude: f64,
    /// Modulation index (full-carrier modes).
    pub mu: f64,
    /// Test tone in Hz.
    pub tone_hz: f64,
}

/// The demo scene: three full-carrier stations (one overmodulated) and one upper-sideband link.
pub const DEMO_STATIONS: [DemoStation; 4] = [
    DemoStation {
        call_sign: "AMRX-A",
        mode: Mode::Am,
        offset_hz: -180_000.0,
        amplitude: 0.15,
        mu: 0.5,
        tone_hz: 400.0,
    },
    DemoStation {
        call_sign: "AMRX-B",
        mode: Mode::Am,
        offset_hz: 95_000.0,
        amplitude: 0.05,
        mu: 0.8,
        tone_hz: 1000.0,
    },
    DemoStation {
        call_sign: "AMRX-C",
        mode: Mode::Am,
        offset_hz: 300_000.0,
        amplitude: 0.08,
        mu: 1.25,
        tone_hz: 700.0,
    },
    DemoStation {
        call_sign: "AMRX-D",
        mode: Mode::Usb,
        offset_hz: -40_000.0,
        amplitude: 0.05,
        mu: 0.0,
        tone_hz: 1500.0,
    },
];

/// What the demo found for one station.
#[derive(Debug, Clone, PartialEq)]
pub struct DemoRow {
    /// The station.
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

/// Writes the scene into `dir`, receives every station, and returns one row per station.
pub fn run_demo(dir: &Path) -> Result<(PathBuf, Vec<DemoRow>)> {
    std::fs::create_dir_all(dir).map_err(|e| Error::io(dir, e))?;
    let base = dir.join("demo-scene");
    write_scene(&base)?;
    let meta = base.with_extension("sigmf-meta");
    let rows = DEMO_STATIONS
        .iter()
        .map(|station| receive_station(&meta, dir, station))
        .collect::<Result<Vec<_>>>()?;
    Ok((meta, rows))
}

fn receive_station(meta: &Path, dir: &Path, station: &DemoStation) -> Result<DemoRow> {
    let wav = dir.join(format!("{}.wav", station.call_sign.to_lowercase()));
    let mut request = DemodRequest::new(
        meta,
        station.mode,
        AudioTarget::Wav {
            path: wav.clone(),
            pcm16: false,
        },
    );
    request.tuning = Tuning::Carrier(DEMO_CENTRE_HZ + station.offset_hz);
    request.report = Some(wav.with_extension("json"));
    let outcome = match run_demod(&request, &|_| {}) {
        Ok(report) => Ok(measure_audio(report, wav)?),
        Err(e @ Error::NotYetAvailable { .. }) => Err(e.to_string()),
        Err(e) => return Err(e),
    };
    Ok(DemoRow {
        station: *station,
        outcome,
    })
}

/// Reads the written audio back and measures its tone, skipping the first 0.2 s of settling.
fn measure_audio(report: Report, wav: PathBuf) -> Result<DemoReception> {
    let audio = read_wav_f32(&wav)?;
    let rate = report.audio_rate;
    let settled = &audio[(0.2 * rate) as usize..];
    let tone_hz = estimate_tone_hz(settled, rate);
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

/// Writes the scene as `base.sigmf-data` / `base.sigmf-meta` (cu8), streamed in pieces.
pub fn write_scene(base: &Path) -> Result<()> {
    let mut writer = SigmfWriter::create(
        base,
        SampleFormat::Cu8,
        DEMO_RATE,
        Some(DEMO_CENTRE_HZ),
        "amrx demo: invented medium-wave scene, 8-bit receiver with DC offset and IQ imbalance",
    )?;
    let total = (DEMO_RATE * DEMO_SECONDS) as u64;
    for station in &DEMO_STATIONS {
        writer.annotate(annotation(station, total));
    }
    let mut scene = Scene::new()?;
    let mut piece = vec![Complex32::default(); 1 << 16];
    let mut written = 0u64;
    while written < total {
        let n = piece.len().min((total - written) as usize);
        scene.fill(&mut piece[..n]);
        writer.write(&piece[..n])?;
        written += n as u64;
    }
    writer.finish()
}

fn annotation(station: &DemoStation, total: u64) -> SigmfAnnotation {
    let carrier = DEMO_CENTRE_HZ + station.offset_hz;
    let (lower, upper) = match station.mode {
        Mode::Usb => (carrier, carrier + 3000.0),
        _ => (carrier - 5000.0, carrier + 5000.0),
    };
    SigmfAnnotation {
        sample_start: 0,
        sample_count: Some(total),
        freq_lower_edge: Some(lower),
        freq_upper_edge: Some(upper),
        label: Some(format!("{} {}", station.call_sign, station.mode.emission())),
        comment: Some(format!(
            "invented station, {} Hz test tone, mu {}",
            station.tone_hz, station.mu
        )),
    }
}

/// The generators of the scene.
struct Scene {
    transmitters: Vec<AmToneTransmitter>,
    usb: UsbTone,
    noise: ComplexNoise,
    front_end: IqImpairment,
    scratch: Vec<Complex32>,
}

impl Scene {
    fn new() -> Result<Self> {
        let mut transmitters = Vec::new();
        let mut usb = None;
        for s in &DEMO_STATIONS {
            match s.mode {
                Mode::Usb => usb = Some(UsbTone::new(s)),
                _ => transmitters.push(AmToneTransmitter::new(
                    s.amplitude,
                    s.mu,
                    s.tone_hz,
                    s.offset_hz,
                    DEMO_RATE,
                )?),
            }
        }
        Ok(Scene {
            transmitters,
            usb: usb.unwrap_or_else(|| UsbTone::new(&DEMO_STATIONS[0])),
            noise: ComplexNoise::new(NOISE_POWER, 20261201),
            front_end: IqImpairment {
                dc: Complex32::new(0.02, -0.015),
                gain_db: 0.4,
                phase_deg: 1.5,
            },
            scratch: vec![Complex32::default(); 1 << 16],
        })
    }

    fn fill(&mut self, out: &mut [Complex32]) {
        out.fill(Complex32::default());
        let scratch = &mut self.scratch[..out.len()];
        for tx in &mut self.transmitters {
            tx.fill(scratch);
            out.iter_mut()
                .zip(scratch.iter())
                .for_each(|(o, s)| *o += s);
        }
        self.usb.add_to(out);
        self.noise.add_to(out);
        self.front_end.apply(out);
    }
}

/// A single-tone upper-sideband (J3E) emission: one line at carrier + tone.
struct UsbTone {
    amplitude: f64,
    step: f64,
    phase: f64,
}

impl UsbTone {
    fn new(station: &DemoStation) -> Self {
        UsbTone {
            amplitude: station.amplitude,
            step: TAU * (station.offset_hz + station.tone_hz) / DEMO_RATE,
            phase: 0.0,
        }
    }

    fn add_to(&mut self, out: &mut [Complex32]) {
        for o in out {
            *o += Complex32::from_polar(self.amplitude as f32, self.phase as f32);
            self.phase = (self.phase + self.step) % TAU;
        }
    }
}

/// The default demo folder: `amrx-demo` in the system's temporary directory.
pub fn default_demo_dir() -> PathBuf {
    std::env::temp_dir().join("amrx-demo")
}

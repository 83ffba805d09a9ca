//! The JSON report of a receive run.

use crate::measure::ModulationDepth;
use crate::{Error, Result};
use serde::Serialize;
use std::path::Path;

/// What a `demod` run did and measured. Absent values serialise as JSON `null`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Report {
    /// Mode name (`am`, `sam`, ...).
    pub mode: String,
    /// ITU emission designator class of the mode.
    pub emission: String,
    /// The input file.
    pub input: String,
    /// IQ sample rate in Hz.
    pub input_rate: f64,
    /// Audio sample rate in Hz.
    pub audio_rate: f64,
    /// Audio (message) bandwidth in Hz.
    pub bandwidth_hz: f64,
    /// Tuned carrier offset from the recording centre, as requested, in Hz.
    pub tuned_offset_hz: f64,
    /// Complex samples read.
    pub samples_in: u64,
    /// Audio frames written (per channel).
    pub samples_out: u64,
    /// Audio channels.
    pub audio_channels: usize,
    /// Measured carrier frequency relative to the recording centre, in Hz.
    pub carrier_offset_hz: Option<f64>,
    /// Whether the loop is locked at the end (false without a carrier); `null` where the
    /// mode has no loop. `lock_fraction` says for how much of the carrier's time.
    pub locked: Option<bool>,
    /// Fraction of the carrier-present time the loop was locked; `null` without a loop or
    /// without a carrier.
    pub lock_fraction: Option<f64>,
    /// Carrier-to-noise ratio in dB over the carrier-present time, noise in
    /// `cnr_bandwidth_hz` (the definition `synth` uses: C/(N0·2W)).
    pub cnr_db: Option<f64>,
    /// The bandwidth the CNR's noise is measured in (2 × `bandwidth_hz`), Hz.
    pub cnr_bandwidth_hz: Option<f64>,
    /// Mean carrier level over the carrier-present time, dBFS (0 dBFS: amplitude 1).
    pub carrier_dbfs: Option<f64>,
    /// Seconds with a carrier present at the tuning; `null` for modes without a carrier.
    pub carrier_present_s: Option<f64>,
    /// Peak modulation depth as fractions, over carrier-present time only, noise-corrected.
    pub modulation_depth: Option<ModulationDepth>,
    /// Channel SNR estimate in dB, every mode: the emission's power in its band over the noise
    /// in `bandwidth_hz` (the definition `synth` uses: S/(N0·W)); `null` when nothing stands
    /// above the noise floor.
    pub snr_db: Option<f64>,
    /// RMS level of the audio written, dBFS (full scale ±1.0: a full-scale sine reads
    /// −3.0 dBFS), over the whole audio including the receiver's settling; `null` without audio.
    pub audio_rms_dbfs: Option<f64>,
    /// Largest absolute audio sample written, dBFS; `null` without audio.
    pub audio_peak_dbfs: Option<f64>,
    /// Warnings for the user.
    pub warnings: Vec<String>,
    /// IQ samples the noise blanker set to zero; `null` without `--noise-blanker`.
    pub blanked_samples: Option<u64>,
    /// Times the sound-card output ran dry while audio was due; `null` without `--play`
    /// or a `sound:` input.
    pub underruns: Option<u64>,
    /// Times captured samples were dropped because the receiver fell behind; `null` without
    /// a sound card.
    pub overruns: Option<u64>,
    /// Errors the sound system reported on its streams (the ALSA PulseAudio plugin reports
    /// spurious ones while the audio stays clean); `null` without a sound card.
    pub stream_errors: Option<u64>,
    /// Sound-card clock error in ppm, positive when fast: output against input when both
    /// are sound cards, else the one card against the system clock; `null` when not
    /// measured (a run of under about 2 s, or no sound card).
    pub clock_ppm: Option<f64>,
    /// Sound-card output latency in seconds (the ring's target fill plus one device
    /// buffer); `null` without `--play`.
    pub latency_s: Option<f64>,
    /// The resampling ratio applied at the end to follow a sound-card input's clock with a
    /// sound-card output, ppm (positive: more samples out than in; within ±1000); `null`
    /// unless both are sound cards.
    pub clock_correction_ppm: Option<f64>,
    /// Times a sound card went on without the stream's samples while the ring had them
    /// (a starved sound server playing silence, or a buffer discarded on recovery), found
    /// from the callbacks' timing; output and input summed. `null` without a sound card.
    pub dropouts: Option<u64>,
    /// Seconds of audio lost or inserted in those dropouts; `null` without a sound card.
    pub dropout_s: Option<f64>,
}

impl Report {
    /// Writes the report as pretty JSON to `path`.
    pub fn write(&self, path: &Path) -> Result<()> {
        self.write_checked(path, &[])
    }

    /// Writes the report to `path`, refusing a `path` that is one of `inputs`; through a
    /// temporary file renamed on success (see [`crate::io::output`]).
    pub fn write_checked(&self, path: &Path, inputs: &[&Path]) -> Result<()> {
        let text = serde_json::to_string_pretty(self)
            .map_err(|e| Error::file(path, format!("cannot encode report: {e}")))?;
        crate::io::output::write_file(path, inputs, (text + "\n").as_bytes())
    }
}

//! Input and output: IQ sources (SigMF, IQ WAV, raw files and standard input) and audio sinks.

pub mod adapt;
pub mod audio_out;
pub mod destination;
pub mod format;
mod frames;
pub mod open;
pub mod output;
pub mod raw;
pub mod sigmf;
pub mod wav_iq;

pub use adapt::{adapt_source, StreamOptions};
pub use audio_out::{AudioSink, RawAudioSink, WavAudioSink, WavEncoding};
pub use destination::check_destination;
pub use format::SampleFormat;
pub use open::{open_input, InputOptions};
pub use output::{check_not_input, OutputFile};
pub use raw::RawSource;
pub use sigmf::{SigmfAnnotation, SigmfSource, SigmfWriter};
pub use wav_iq::WavIqSource;

use crate::{Complex32, Result};
use std::path::PathBuf;

/// What a source knows about its recording.
#[derive(Debug, Clone, PartialEq)]
pub struct SourceInfo {
    /// The file read (`-` for standard input).
    pub path: PathBuf,
    /// Sample datatype in SigMF notation (e.g. `cu8`, `ci16_le`, `rf32_le`).
    pub datatype: String,
    /// Sample rate in Hz.
    pub sample_rate: f64,
    /// Centre frequency of the recording in Hz, when the recording says.
    pub centre_frequency: Option<f64>,
    /// Number of complex samples per channel, when known in advance.
    pub total_samples: Option<u64>,
    /// Channels in the recording.
    pub num_channels: usize,
    /// The channel being read (0-based).
    pub channel: usize,
}

/// A stream of complex baseband samples, read in pieces (never the whole file at once).
///
/// Sources replace non-finite samples with zero and count them, so that NaN or infinity never
/// reaches the DSP chain.
pub trait IqSource: Send {
    /// Reads up to `buf.len()` samples into `buf`; returns how many, 0 at the end of the stream.
    fn read(&mut self, buf: &mut [Complex32]) -> Result<usize>;
    /// What the source knows about the recording.
    fn info(&self) -> &SourceInfo;
    /// Warnings gathered so far (non-finite samples replaced, trailing bytes ignored, ...).
    fn warnings(&self) -> Vec<String>;
    /// What the recording says is in it (SigMF annotations); none for most sources.
    fn annotations(&self) -> &[SigmfAnnotation] {
        &[]
    }
}

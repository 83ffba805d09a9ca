//! [`SoundSource`]: IQ from a sound card's stereo input (left = I, right = Q).

use super::capture::{capture_ring, CaptureReader, CaptureTap};
use super::device::{device_error, find, pick_config, Direction, QuietAlsa};
use super::stats::LiveStats;
use super::INPUT_PREFIX;
use crate::io::{IqSource, SourceInfo};
use crate::{Complex32, Error, Result};
use cpal::traits::{DeviceTrait, StreamTrait};
use cpal::{BufferSize, SampleFormat, SizedSample, StreamConfig};
use std::path::PathBuf;
use std::sync::Arc;
use std::time::Instant;

/// Seconds of IQ the capture ring holds: enough to ride out a busy DSP thread (common
/// practice, no source).
const RING_S: f64 = 2.0;

/// A live IQ source: a sound card's input, I on the left channel and Q on the right, with the
/// same contract as a file source except that it is paced by the card and endless (it stops
/// on a signal, `--duration` or an error).
pub struct SoundSource {
    info: SourceInfo,
    reader: CaptureReader,
    _stream: cpal::Stream,
}

impl SoundSource {
    /// Opens `name` (`default` for the default input) at `rate` Hz (`None`: 48 kHz, the usual
    /// rate of audio interfaces) and starts capturing. `stats` receives the overrun count and
    /// the input clock's error.
    pub fn open(name: &str, rate: Option<f64>, stats: Arc<LiveStats>) -> Result<Self> {
        let label = format!("{INPUT_PREFIX}{name}");
        let rate = rate.unwrap_or(48_000.0);
        if !(rate.is_finite() && rate >= 1.0 && rate <= u32::MAX as f64 && rate.fract() == 0.0) {
            return Err(Error::parameter(
                "sample_rate",
                rate,
                "a sound card captures at whole-hertz rates",
            ));
        }
        let rate_hz = rate as u32;
        let device = find(name, Direction::Input, &label)?;
        let _quiet = QuietAlsa::new();
        let configs = device
            .supported_input_configs()
            .map_err(|e| device_error(&label, "read its configurations", &e))?;
        let Some((channels, format)) = pick_config(configs, rate_hz, 2) else {
            return Err(Error::file(
                &label,
                format!(
                    "the device has no stereo input at {rate_hz} Hz in f32 or i16 \
                     (I and Q need two channels; see amrx devices; --rate picks the rate)"
                ),
            ));
        };
        let frames = (rate * RING_S) as usize;
        let (tap, mut reader) = capture_ring(channels as usize, rate, frames, Arc::clone(&stats));
        reader.set_label(&label);
        let config = StreamConfig {
            channels,
            sample_rate: rate_hz,
            buffer_size: BufferSize::Fixed(((rate * 0.010).round() as u32).max(32)),
        };
        let stream = match format {
            SampleFormat::I16 => build::<i16>(&device, config, tap, stats),
            _ => build::<f32>(&device, config, tap, stats),
        }
        .map_err(|e| device_error(&label, "open the input stream", &e))?;
        stream
            .play()
            .map_err(|e| device_error(&label, "start the input stream", &e))?;
        let info = SourceInfo {
            path: PathBuf::from(&label),
            datatype: if format == SampleFormat::I16 {
                "ci16_le"
            } else {
                "cf32_le"
            }
            .to_string(),
            sample_rate: rate,
            centre_frequency: None,
            total_samples: None,
            num_channels: 1,
            channel: 0,
        };
        Ok(SoundSource {
            info,
            reader,
            _stream: stream,
        })
    }
}

fn build<T>(
    device: &cpal::Device,
    config: StreamConfig,
    mut tap: CaptureTap,
    stats: Arc<LiveStats>,
) -> std::result::Result<cpal::Stream, cpal::Error>
where
    T: SizedSample,
    f32: cpal::FromSample<T>,
{
    let epoch = Instant::now();
    device.build_input_stream::<T, _, _>(
        config,
        move |data: &[T], _| {
            let now = epoch.elapsed().as_secs_f64();
            tap.take(data, now, <f32 as cpal::FromSample<T>>::from_sample_);
        },
        move |_| stats.add_stream_error(),
        None,
    )
}

impl IqSource for SoundSource {
    fn read(&mut self, buf: &mut [Complex32]) -> Result<usize> {
        self.reader.read(buf)
    }
    fn info(&self) -> &SourceInfo {
        &self.info
    }
    fn warnings(&self) -> Vec<String> {
        match self.reader.non_finite() {
            0 => Vec::new(),
            n => vec![format!("{n} non-finite samples replaced by zero")],
        }
    }
}

//! [`SoundSink`]: an [`AudioSink`] that plays through a sound card.

use super::device::{device_error, find, pick_config, Direction, QuietAlsa};
use super::playout::{playout_ring, Playout, PlayoutFeed};
use super::stats::LiveStats;
use crate::io::AudioSink;
use crate::{Error, Result};
use cpal::traits::{DeviceTrait, StreamTrait};
use cpal::{BufferSize, FromSample, SampleFormat, SizedSample, StreamConfig};
use std::sync::Arc;
use std::time::Instant;

/// Frames converted per step of [`SoundSink::write`] (its scratch buffer, allocated once).
const STEP_FRAMES: usize = 4096;

/// How to open the sound-card output.
#[derive(Debug, Clone, PartialEq)]
pub struct SoundSinkSettings {
    /// Device name (`default` for the system's default output).
    pub device: String,
    /// Audio rate in Hz (the device is opened at this rate).
    pub audio_rate: f64,
    /// Channels in the audio written (1, or 2 for ISB).
    pub audio_channels: usize,
    /// Device buffer (frames per callback); `None`: 10 ms of audio, common practice for
    /// interactive audio, no source.
    pub buffer_frames: Option<u32>,
    /// Target fill of the ring in device buffers; `None`: 2 (one buffer being played, one
    /// waiting: the least that rides out one late wake-up of the DSP thread).
    pub ring_buffers: Option<u32>,
}

impl SoundSinkSettings {
    /// The default device at `audio_rate` with `audio_channels` channels.
    pub fn new(audio_rate: f64, audio_channels: usize) -> Self {
        SoundSinkSettings {
            device: "default".to_string(),
            audio_rate,
            audio_channels,
            buffer_frames: None,
            ring_buffers: None,
        }
    }
}

/// Plays interleaved audio through a sound card: [`AudioSink::write`] converts to the
/// device's channel layout and pushes into the ring (waiting while it holds its target fill,
/// which paces the whole run to the card's clock); the device callback pops. Underruns are
/// counted in the [`LiveStats`] given to [`SoundSink::open`], and the latency is published
/// there.
pub struct SoundSink {
    stream: cpal::Stream,
    feed: PlayoutFeed,
    in_channels: usize,
    dev_channels: usize,
    scratch: Vec<f32>,
    label: String,
}

impl SoundSink {
    /// Opens the output device and starts its stream (playing silence until audio arrives).
    pub fn open(settings: &SoundSinkSettings, stats: Arc<LiveStats>) -> Result<Self> {
        let label = format!("sound output '{}'", settings.device);
        let rate = settings.audio_rate;
        if !(rate.is_finite() && rate >= 1.0 && rate <= u32::MAX as f64 && rate.fract() == 0.0) {
            return Err(Error::parameter(
                "audio_rate",
                rate,
                "a sound card plays whole-hertz rates",
            ));
        }
        if !(1..=2).contains(&settings.audio_channels) {
            return Err(Error::parameter(
                "audio_channels",
                settings.audio_channels,
                "plays 1 or 2 channels",
            ));
        }
        let rate_hz = rate as u32;
        let buffer = settings
            .buffer_frames
            .unwrap_or(((rate * 0.010).round() as u32).max(32));
        let ring_buffers = settings.ring_buffers.unwrap_or(2).max(1);
        let device = find(&settings.device, Direction::Output, &label)?;
        let _quiet = QuietAlsa::new();
        let configs = device
            .supported_output_configs()
            .map_err(|e| device_error(&label, "read its configurations", &e))?;
        let Some((dev_channels, format)) =
            pick_config(configs, rate_hz, settings.audio_channels as u16).or_else(|| {
                device
                    .supported_output_configs()
                    .ok()
                    .and_then(|c| pick_config(c, rate_hz, 1))
            })
        else {
            return Err(Error::file(
                &label,
                format!("the device cannot play {rate_hz} Hz in f32 or i16 (see amrx devices; --audio-rate picks the rate)"),
            ));
        };
        let dev_channels = dev_channels as usize;
        let target = (buffer * ring_buffers) as usize;
        let (feed, playout) = playout_ring(dev_channels, rate, target, Arc::clone(&stats));
        stats.set_latency_s((target as f64 + buffer as f64) / rate);
        let config = StreamConfig {
            channels: dev_channels as u16,
            sample_rate: rate_hz,
            buffer_size: BufferSize::Fixed(buffer),
        };
        let stream = match format {
            SampleFormat::I16 => build::<i16>(&device, config, playout, stats),
            _ => build::<f32>(&device, config, playout, stats),
        }
        .map_err(|e| device_error(&label, "open the output stream", &e))?;
        stream
            .play()
            .map_err(|e| device_error(&label, "start the output stream", &e))?;
        Ok(SoundSink {
            stream,
            feed,
            in_channels: settings.audio_channels,
            dev_channels,
            scratch: vec![0.0; STEP_FRAMES * dev_channels],
            label,
        })
    }
}

fn build<T>(
    device: &cpal::Device,
    config: StreamConfig,
    mut playout: Playout,
    stats: Arc<LiveStats>,
) -> std::result::Result<cpal::Stream, cpal::Error>
where
    T: SizedSample + FromSample<f32>,
{
    let epoch = Instant::now();
    device.build_output_stream::<T, _, _>(
        config,
        move |data: &mut [T], _| {
            let now = epoch.elapsed().as_secs_f64();
            playout.render(data, now, <T as FromSample<f32>>::from_sample_);
        },
        move |_| stats.add_stream_error(),
        None,
    )
}

impl AudioSink for SoundSink {
    fn write(&mut self, samples: &[f32]) -> Result<()> {
        let (cin, cdev) = (self.in_channels, self.dev_channels);
        for piece in samples.chunks(STEP_FRAMES * cin) {
            let frames = piece.len() / cin;
            let out = &mut self.scratch[..frames * cdev];
            for (src, dst) in piece.chunks_exact(cin).zip(out.chunks_exact_mut(cdev)) {
                let clean = |x: f32| {
                    if x.is_finite() {
                        x.clamp(-1.0, 1.0)
                    } else {
                        0.0
                    }
                };
                match (cin, cdev) {
                    (1, _) => dst.fill(clean(src[0])),
                    (_, 1) => dst[0] = 0.5 * (clean(src[0]) + clean(src[1])),
                    _ => {
                        dst.fill(0.0);
                        dst[0] = clean(src[0]);
                        dst[1] = clean(src[1]);
                    }
                }
            }
            self.feed.push(out).map_err(|_| {
                Error::file(
                    &self.label,
                    "the sound card stopped taking samples (device gone or stalled)",
                )
            })?;
        }
        Ok(())
    }

    fn finish(mut self: Box<Self>) -> Result<()> {
        let drained = self.feed.finish();
        // The last device buffer leaves the callback before it is heard: let it play.
        std::thread::sleep(std::time::Duration::from_millis(60));
        let _ = self.stream.pause();
        drained.map_err(|_| {
            Error::file(
                &self.label,
                "the sound card stopped taking samples before the end",
            )
        })
    }
}

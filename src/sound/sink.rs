//! [`SoundSink`]: an [`AudioSink`] that plays through a sound card.

use super::device::{device_error, find, pick_config, Direction, QuietAlsa};
use super::drift::{DriftCorrector, RingView};
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
    /// Output latency in seconds: one device buffer plus the ring's target fill of two
    /// buffers (one being played, one waiting: the least that rides out one late wake-up of
    /// the DSP thread). `None`: 30 ms (10 ms buffers, common practice for interactive audio,
    /// no source). A busy machine needs more: 0.6 s gave no gap in 30 s with the other core
    /// loaded where 30 ms gave a few (measured, tests/live_sound.rs).
    pub latency_s: Option<f64>,
    /// The audio comes from a live source on another clock (a sound card's input): resample
    /// it by a ratio steered to hold the ring at its target fill ([`DriftCorrector`]), instead
    /// of letting the card pace the writer.
    pub follow_source_clock: bool,
}

/// The default output latency, seconds.
pub const DEFAULT_LATENCY_S: f64 = 0.030;

impl SoundSinkSettings {
    /// The default device at `audio_rate` with `audio_channels` channels.
    pub fn new(audio_rate: f64, audio_channels: usize) -> Self {
        SoundSinkSettings {
            device: "default".to_string(),
            audio_rate,
            audio_channels,
            latency_s: None,
            follow_source_clock: false,
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
    drift: Option<DriftCorrector>,
    target_frames: usize,
    latency_s: f64,
    stats: Arc<LiveStats>,
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
        let latency = settings.latency_s.unwrap_or(DEFAULT_LATENCY_S);
        if !(latency.is_finite() && (0.003..=10.0).contains(&latency)) {
            return Err(Error::parameter(
                "latency_s",
                latency,
                "must be between 0.003 and 10 seconds",
            ));
        }
        let buffer = ((rate * latency / 3.0).round() as u32).max(16);
        let ring_buffers = 2;
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
        let drift = if settings.follow_source_clock {
            Some(DriftCorrector::new(
                rate,
                settings.audio_channels,
                STEP_FRAMES,
            )?)
        } else {
            None
        };
        let stream = match format {
            SampleFormat::I16 => build::<i16>(&device, config, playout, Arc::clone(&stats)),
            _ => build::<f32>(&device, config, playout, Arc::clone(&stats)),
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
            // Room for the drift corrector's extra samples (≤ 0.1 % and a few).
            scratch: vec![0.0; (STEP_FRAMES + STEP_FRAMES / 500 + 8) * dev_channels],
            label,
            drift,
            target_frames: target,
            latency_s: (target as f64 + buffer as f64) / rate,
            stats,
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

/// Copies interleaved `cin`-channel frames into `cdev`-channel frames, non-finite samples
/// as silence and everything clamped to full scale; returns the samples written.
fn map_channels(src: &[f32], cin: usize, dst: &mut [f32], cdev: usize) -> usize {
    let clean = |x: f32| {
        if x.is_finite() {
            x.clamp(-1.0, 1.0)
        } else {
            0.0
        }
    };
    let frames = (src.len() / cin).min(dst.len() / cdev);
    for (s, d) in src
        .chunks_exact(cin)
        .zip(dst.chunks_exact_mut(cdev))
        .take(frames)
    {
        match (cin, cdev) {
            (1, _) => d.fill(clean(s[0])),
            (_, 1) => d[0] = 0.5 * (clean(s[0]) + clean(s[1])),
            _ => {
                d.fill(0.0);
                d[0] = clean(s[0]);
                d[1] = clean(s[1]);
            }
        }
    }
    frames * cdev
}

impl AudioSink for SoundSink {
    fn write(&mut self, samples: &[f32]) -> Result<()> {
        let (cin, cdev) = (self.in_channels, self.dev_channels);
        for piece in samples.chunks(STEP_FRAMES * cin) {
            let len = match &mut self.drift {
                Some(drift) => {
                    let fill = self.feed.queued() / cdev;
                    self.stats.set_correction_ppm(drift.ppm());
                    let figures = self.stats.figures();
                    let ring = RingView {
                        fill_frames: fill,
                        device_frames: self.feed.frames_out(),
                        target_frames: self.target_frames,
                        measured_ppm: figures.clock_ppm,
                        disruptions: figures.underruns + figures.dropouts,
                    };
                    let out = drift.process(piece, ring);
                    map_channels(out, cin, &mut self.scratch, cdev)
                }
                None => map_channels(piece, cin, &mut self.scratch, cdev),
            };
            let out = &self.scratch[..len];
            let pushed = if self.drift.is_some() {
                self.feed.try_push_all(out)
            } else {
                0
            };
            self.feed.push(&out[pushed..]).map_err(|_| {
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
        // The last device buffer leaves the callback before it is heard: let it play out
        // (plus 50 ms for the sound server's own buffering, as measured with PulseAudio).
        std::thread::sleep(std::time::Duration::from_secs_f64(self.latency_s + 0.05));
        let _ = self.stream.pause();
        drained.map_err(|_| {
            Error::file(
                &self.label,
                "the sound card stopped taking samples before the end",
            )
        })
    }
}

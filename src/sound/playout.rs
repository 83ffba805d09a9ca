//! The output ring: [`PlayoutFeed`] (the DSP side, which paces) and [`Playout`] (the device
//! callback's side).

use super::stats::{LiveStats, RateMeter};
use crate::{Error, Result};
use ringbuf::traits::{Consumer, Observer, Producer, Split};
use ringbuf::{HeapCons, HeapProd, HeapRb};
use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::sync::Arc;
use std::time::{Duration, Instant};

/// Shared between the two halves: "the producer has finished" and how far the device got.
#[derive(Debug)]
struct Shared {
    finishing: AtomicBool,
    /// Frames the device has asked for so far (played or silence).
    frames_out: AtomicU64,
}

/// Builds the output ring for `channels`-channel frames at `rate` Hz: the device callback
/// waits for `target_frames` before it starts (and after an underrun), and the feed keeps at
/// most `target_frames` in the ring, so the ring adds `target_frames / rate` seconds of delay.
///
/// ```
/// use amrx::sound::{playout_ring, LiveStats};
/// use std::sync::Arc;
/// let stats = Arc::new(LiveStats::default());
/// let (mut feed, mut playout) = playout_ring(2, 48_000.0, 4, Arc::clone(&stats));
/// feed.try_push(&[0.5, 0.5, 0.25, 0.25, 0.0, 0.0, 0.0, 0.0]);
/// let mut device = [0.0f32; 4];
/// playout.render(&mut device, 0.0, |x| x);
/// assert_eq!(device, [0.5, 0.5, 0.25, 0.25]);
/// ```
pub fn playout_ring(
    channels: usize,
    rate: f64,
    target_frames: usize,
    stats: Arc<LiveStats>,
) -> (PlayoutFeed, Playout) {
    let channels = channels.max(1);
    let target_frames = target_frames.max(1);
    // Twice the target: the feed never fills past the target, the rest is headroom.
    let (producer, consumer) = HeapRb::<f32>::new(2 * target_frames * channels).split();
    let shared = Arc::new(Shared {
        finishing: AtomicBool::new(false),
        frames_out: AtomicU64::new(0),
    });
    let feed = PlayoutFeed {
        producer,
        channels,
        target_samples: target_frames * channels,
        shared: Arc::clone(&shared),
        rate,
    };
    let playout = Playout {
        consumer,
        channels,
        start_samples: target_frames * channels,
        playing: false,
        frames_out: 0,
        meter: RateMeter::new(rate),
        shared,
        stats,
    };
    (feed, playout)
}

/// The device callback's half of the output ring. [`Playout::render`] only pops from the
/// lock-free ring, writes the device buffer and updates atomics: no allocation, no lock, no
/// logging, no blocking.
pub struct Playout {
    consumer: HeapCons<f32>,
    channels: usize,
    start_samples: usize,
    playing: bool,
    frames_out: u64,
    meter: RateMeter,
    shared: Arc<Shared>,
    stats: Arc<LiveStats>,
}

impl Playout {
    /// Fills one device buffer of interleaved frames (`out.len()` a multiple of the channel
    /// count) from the ring, converting each sample with `convert`; `now_s` is the callback's
    /// time in seconds on a monotonic clock (for the clock-rate meter).
    ///
    /// Before the ring first reaches its target fill, and again after an underrun, it writes
    /// silence (priming). An empty ring while playing is one underrun; once the feed has
    /// finished, running dry is the end, not an underrun.
    pub fn render<T: Copy>(&mut self, out: &mut [T], now_s: f64, convert: impl Fn(f32) -> T) {
        let silence = convert(0.0);
        let finishing = self.shared.finishing.load(Ordering::Acquire);
        if !self.playing {
            let have = self.consumer.occupied_len();
            self.playing = have >= self.start_samples || (finishing && have > 0);
        }
        let mut written = 0;
        if self.playing {
            for slot in out.iter_mut() {
                match self.consumer.try_pop() {
                    Some(x) => *slot = convert(x),
                    None => break,
                }
                written += 1;
            }
            if written < out.len() {
                self.playing = false;
                if !finishing {
                    self.stats.add_underrun();
                }
            }
        }
        for slot in &mut out[written..] {
            *slot = silence;
        }
        self.meter.add_callback(now_s, self.frames_out);
        self.frames_out += (out.len() / self.channels) as u64;
        self.shared
            .frames_out
            .store(self.frames_out, Ordering::Release);
        if let Some(ppm) = self.meter.ppm(RateMeter::MIN_SPAN_S) {
            self.stats.set_output_ppm(ppm);
        }
        self.stats
            .set_output_dropouts(self.meter.dropouts(), self.meter.lost_s());
    }

    /// Frames the device has taken so far.
    pub fn frames_out(&self) -> u64 {
        self.frames_out
    }
}

/// The DSP side of the output ring: pushes whole frames, waiting while the ring holds its
/// target fill, which paces a file input to the device's clock.
pub struct PlayoutFeed {
    producer: HeapProd<f32>,
    channels: usize,
    target_samples: usize,
    shared: Arc<Shared>,
    rate: f64,
}

/// How long the device may take nothing while the feed waits before the run fails.
const STALL: Duration = Duration::from_secs(3);

impl PlayoutFeed {
    /// Pushes as many whole frames of `samples` as fit under the target fill, without waiting;
    /// returns the samples taken.
    pub fn try_push(&mut self, samples: &[f32]) -> usize {
        let occupied = self.producer.occupied_len();
        let room = self.target_samples.saturating_sub(occupied);
        let take = room.min(samples.len()) / self.channels * self.channels;
        self.producer.push_slice(&samples[..take])
    }

    /// Pushes whole frames of `samples` up to the ring's capacity (twice the target fill)
    /// without waiting; returns the samples taken. For a live source whose rate a
    /// [`DriftCorrector`](super::DriftCorrector) steers, where waiting would stall the capture.
    pub fn try_push_all(&mut self, samples: &[f32]) -> usize {
        let room = self.producer.vacant_len();
        let take = room.min(samples.len()) / self.channels * self.channels;
        self.producer.push_slice(&samples[..take])
    }

    /// Pushes all of `samples` (whole frames), waiting for room; fails when the device has
    /// taken nothing for 3 s (a stalled or vanished device).
    pub fn push(&mut self, samples: &[f32]) -> Result<()> {
        let mut at = 0;
        let mut last_progress = Instant::now();
        let mut last_frames = self.frames_out();
        while at < samples.len() {
            let n = self.try_push(&samples[at..]);
            at += n;
            if n > 0 {
                continue;
            }
            let frames = self.frames_out();
            if frames != last_frames {
                last_frames = frames;
                last_progress = Instant::now();
            } else if last_progress.elapsed() > STALL {
                return Err(stalled());
            }
            std::thread::sleep(self.nap());
        }
        Ok(())
    }

    /// Marks the end of the audio and waits until the device has played what the ring holds.
    pub fn finish(&mut self) -> Result<()> {
        self.shared.finishing.store(true, Ordering::Release);
        let mut last_progress = Instant::now();
        let mut last_frames = self.frames_out();
        while self.producer.occupied_len() > 0 {
            let frames = self.frames_out();
            if frames != last_frames {
                last_frames = frames;
                last_progress = Instant::now();
            } else if last_progress.elapsed() > STALL {
                return Err(stalled());
            }
            std::thread::sleep(self.nap());
        }
        Ok(())
    }

    /// Frames the device has taken so far.
    pub fn frames_out(&self) -> u64 {
        self.shared.frames_out.load(Ordering::Acquire)
    }

    /// Samples waiting in the ring.
    pub fn queued(&self) -> usize {
        self.producer.occupied_len()
    }

    /// A quarter of the target fill's duration, at least 1 ms.
    fn nap(&self) -> Duration {
        let target_s = self.target_samples as f64 / self.channels as f64 / self.rate.max(1.0);
        Duration::from_secs_f64((target_s / 4.0).max(0.001))
    }
}

fn stalled() -> Error {
    Error::file(
        "sound output",
        "the sound card stopped taking samples (device gone or stalled)",
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    fn ring(target: usize) -> (PlayoutFeed, Playout, Arc<LiveStats>) {
        let stats = Arc::new(LiveStats::default());
        let (f, p) = playout_ring(2, 48_000.0, target, Arc::clone(&stats));
        (f, p, stats)
    }

    #[test]
    fn primes_then_plays_in_order() {
        let (mut feed, mut playout, stats) = ring(4);
        let mut out = [9.0f32; 4];
        playout.render(&mut out, 0.0, |x| x);
        assert_eq!(out, [0.0; 4], "silence before any audio, no underrun");
        let audio: Vec<f32> = (0..8).map(|i| i as f32).collect();
        assert_eq!(feed.try_push(&audio), 8);
        assert_eq!(feed.try_push(&audio), 0, "the target fill is the limit");
        playout.render(&mut out, 0.01, |x| x);
        assert_eq!(out, [0.0, 1.0, 2.0, 3.0]);
        playout.render(&mut out, 0.02, |x| x);
        assert_eq!(out, [4.0, 5.0, 6.0, 7.0]);
        assert_eq!(stats.figures().underruns, 0);
        playout.render(&mut out, 0.03, |x| x);
        assert_eq!(out, [0.0; 4]);
        assert_eq!(stats.figures().underruns, 1, "empty while playing");
        playout.render(&mut out, 0.04, |x| x);
        assert_eq!(
            stats.figures().underruns,
            1,
            "re-priming is not another underrun"
        );
        assert_eq!(playout.frames_out(), 10);
    }

    #[test]
    fn a_partial_buffer_is_padded_and_the_end_is_no_underrun() {
        let (mut feed, mut playout, stats) = ring(2);
        feed.try_push(&[1.0, 1.0, 2.0, 2.0]);
        let mut out = [9.0f32; 6];
        playout.render(&mut out, 0.0, |x| x);
        assert_eq!(out, [1.0, 1.0, 2.0, 2.0, 0.0, 0.0]);
        assert_eq!(stats.figures().underruns, 1);
        feed.try_push(&[3.0, 3.0]);
        feed.shared.finishing.store(true, Ordering::Release);
        playout.render(&mut out, 0.01, |x| x);
        assert_eq!(out, [3.0, 3.0, 0.0, 0.0, 0.0, 0.0]);
        assert_eq!(stats.figures().underruns, 1);
    }

    #[test]
    fn whole_frames_only_and_conversion() {
        let (mut feed, mut playout, _) = ring(3);
        assert_eq!(feed.try_push(&[0.5; 7]), 6, "an odd sample waits");
        let mut out = [0i16; 6];
        playout.render(&mut out, 0.0, |x| (x * 32767.0) as i16);
        assert_eq!(out, [16383; 6]);
    }

    #[test]
    fn push_fails_when_the_device_takes_nothing() {
        let (mut feed, _playout, _) = ring(4);
        let start = Instant::now();
        let err = feed.push(&[0.0; 64]).unwrap_err();
        assert!(err.to_string().contains("stopped taking samples"), "{err}");
        assert!(start.elapsed() >= STALL);
    }
}

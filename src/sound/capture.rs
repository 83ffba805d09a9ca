//! The capture ring: [`CaptureTap`] (the device callback's side) and [`CaptureReader`] (the
//! reading thread's side), carrying I/Q pairs (left = I, right = Q).

use super::stats::{LiveStats, RateMeter};
use crate::{Complex32, Error, Result};
use ringbuf::traits::{Consumer, Observer, Producer, Split};
use ringbuf::{HeapCons, HeapProd, HeapRb};
use std::sync::Arc;
use std::time::{Duration, Instant};

/// Builds a capture ring holding `capacity_frames` I/Q pairs from a device with `channels`
/// channels (at least 2: the first is I, the second Q, any others are ignored) at `rate` Hz.
///
/// ```
/// use amrx::sound::{capture_ring, LiveStats};
/// use amrx::Complex32;
/// use std::sync::Arc;
/// let (mut tap, mut reader) = capture_ring(2, 48_000.0, 16, Arc::new(LiveStats::default()));
/// tap.take(&[0.5f32, -0.25, 0.125, 1.0], 0.0, |x| x);
/// let mut iq = [Complex32::default(); 4];
/// assert_eq!(reader.read(&mut iq).unwrap(), 2);
/// assert_eq!(iq[0], Complex32::new(0.5, -0.25));
/// ```
pub fn capture_ring(
    channels: usize,
    rate: f64,
    capacity_frames: usize,
    stats: Arc<LiveStats>,
) -> (CaptureTap, CaptureReader) {
    let (producer, consumer) = HeapRb::<f32>::new(2 * capacity_frames.max(1)).split();
    let tap = CaptureTap {
        producer,
        channels: channels.max(2),
        frames_in: 0,
        dropping: false,
        meter: RateMeter::new(rate),
        stats: Arc::clone(&stats),
    };
    let reader = CaptureReader {
        consumer,
        non_finite: 0,
        label: String::new(),
    };
    (tap, reader)
}

/// The capture callback's half: pushes I/Q pairs into the lock-free ring; when the ring is
/// full it drops the rest of the buffer and counts one overrun. No allocation, lock or wait.
pub struct CaptureTap {
    producer: HeapProd<f32>,
    channels: usize,
    frames_in: u64,
    dropping: bool,
    meter: RateMeter,
    stats: Arc<LiveStats>,
}

impl CaptureTap {
    /// Takes one device buffer of interleaved frames, converting each sample with `convert`;
    /// `now_s` is the callback's time on a monotonic clock (for the clock-rate meter).
    pub fn take<T: Copy>(&mut self, data: &[T], now_s: f64, convert: impl Fn(T) -> f32) {
        self.meter.add_callback(now_s, self.frames_in);
        let frames = data.len() / self.channels;
        self.frames_in += frames as u64;
        let mut dropped = false;
        for frame in data.chunks_exact(self.channels) {
            if self.producer.vacant_len() < 2 {
                dropped = true;
                break;
            }
            let _ = self.producer.try_push(convert(frame[0]));
            let _ = self.producer.try_push(convert(frame[1]));
        }
        // One overrun per stretch of dropped samples.
        if dropped && !self.dropping {
            self.stats.add_overrun();
        }
        self.dropping = dropped;
        if let Some(ppm) = self.meter.ppm(RateMeter::MIN_SPAN_S) {
            self.stats.set_input_ppm(ppm);
        }
        self.stats
            .set_input_dropouts(self.meter.dropouts(), self.meter.lost_s());
    }
}

/// The reading side of the capture ring.
pub struct CaptureReader {
    consumer: HeapCons<f32>,
    non_finite: u64,
    label: String,
}

/// How long a read waits for the first sample before it fails (a stalled device).
const NO_INPUT: Duration = Duration::from_secs(3);

impl CaptureReader {
    /// Names the device in error messages.
    pub fn set_label(&mut self, label: &str) {
        self.label = label.to_string();
    }

    /// Reads the I/Q pairs available (at most `buf.len()`), waiting for at least one; fails
    /// when the device has delivered nothing for 3 s. Non-finite samples become zero and are
    /// counted.
    pub fn read(&mut self, buf: &mut [Complex32]) -> Result<usize> {
        if buf.is_empty() {
            return Ok(0);
        }
        let start = Instant::now();
        while self.consumer.occupied_len() < 2 {
            if start.elapsed() > NO_INPUT {
                return Err(Error::file(
                    &self.label,
                    "the sound card delivered no samples for 3 s (device gone or stalled)",
                ));
            }
            std::thread::sleep(Duration::from_millis(1));
        }
        let frames = (self.consumer.occupied_len() / 2).min(buf.len());
        for z in &mut buf[..frames] {
            let i = self.consumer.try_pop().unwrap_or(0.0);
            let q = self.consumer.try_pop().unwrap_or(0.0);
            *z = if i.is_finite() && q.is_finite() {
                Complex32::new(i, q)
            } else {
                self.non_finite += 1;
                Complex32::default()
            };
        }
        Ok(frames)
    }

    /// Non-finite samples replaced by zero so far.
    pub fn non_finite(&self) -> u64 {
        self.non_finite
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn pairs_left_and_right_and_ignores_extra_channels() {
        let stats = Arc::new(LiveStats::default());
        let (mut tap, mut reader) = capture_ring(4, 48_000.0, 8, Arc::clone(&stats));
        tap.take(&[1i16, 2, 99, 99, 3, 4, 99, 99], 0.0, |x| x as f32);
        let mut iq = [Complex32::default(); 8];
        assert_eq!(reader.read(&mut iq).unwrap(), 2);
        assert_eq!(
            iq[..2],
            [Complex32::new(1.0, 2.0), Complex32::new(3.0, 4.0)]
        );
        assert_eq!(stats.figures().overruns, 0);
    }

    #[test]
    fn a_full_ring_drops_and_counts_one_overrun_per_stretch() {
        let stats = Arc::new(LiveStats::default());
        let (mut tap, mut reader) = capture_ring(2, 48_000.0, 3, Arc::clone(&stats));
        tap.take(&[1.0f32, 1.0, 2.0, 2.0, 3.0, 3.0, 4.0, 4.0], 0.0, |x| x);
        tap.take(&[5.0f32, 5.0], 0.01, |x| x);
        assert_eq!(stats.figures().overruns, 1);
        let mut iq = [Complex32::default(); 8];
        assert_eq!(reader.read(&mut iq).unwrap(), 3);
        assert_eq!(
            iq[2],
            Complex32::new(3.0, 3.0),
            "oldest kept, newest dropped"
        );
        tap.take(&[6.0f32, f32::NAN], 0.02, |x| x);
        assert_eq!(reader.read(&mut iq).unwrap(), 1);
        assert_eq!(iq[0], Complex32::default());
        assert_eq!(reader.non_finite(), 1);
        tap.take(&[7.0f32; 8], 0.03, |x| x);
        tap.take(&[7.0f32; 2], 0.04, |x| x);
        assert_eq!(stats.figures().overruns, 2);
    }

    #[test]
    fn a_silent_device_is_an_error_not_a_hang() {
        let (_tap, mut reader) = capture_ring(2, 48_000.0, 8, Arc::new(LiveStats::default()));
        reader.set_label("sound:test");
        let err = reader.read(&mut [Complex32::default(); 4]).unwrap_err();
        assert!(err.to_string().starts_with("sound:test: "), "{err}");
    }
}

//! [`DriftCorrector`]: absorbs the difference between two sound cards' clocks by resampling
//! the audio by a ratio steered to keep the output ring at its target fill.

use crate::block::Block;
use crate::dsp::kaiser::{design_lowpass, LowpassSpec};
use crate::dsp::RationalResampler;
use crate::{Complex32, Result};

/// Phases of the resampler's filter bank: output times land within 1/L = 1/1000 of an input
/// sample of their exact place (a 5 kHz tone's phase then wanders by under 7e-4 rad).
const PHASES: usize = 1000;

/// The largest correction, ppm (the range; crystal oscillators of sound cards are
/// specified to ±100 ppm or better, so ten times that is ample).
pub const MAX_PPM: f64 = 1000.0;

/// Loop gains: ppm per second of fill error, and ppm per second² of its integral. The fill
/// error e obeys de/dt = δ − ε (δ the clocks' difference), so with ε = KP·e + KI·∫e (×1e-6)
/// the loop is s² + 1e-6·KP·s + 1e-6·KI, with natural frequency ω = 1e-3·√KI and damping
/// KP/(2·1e6·ω) = 0.7 (the standard second-order loop, as in any control text; the numbers
/// are our choice). Until the clock meters have a reading the loop alone follows the
/// clocks, at ω = 0.02 rad/s: a 100 ppm difference moves the fill by about δ/ω = 5 ms
/// before it is absorbed. Once the clocks' difference is fed forward the loop only trims
/// what the meters miss (a few ppm), at ω = 0.001 rad/s, so the fill's noise (below: a few
/// ms in a window's mean on the live server) moves the ratio by a few ppm, a pitch change
/// of under 0.01 cent, and a meter 10 ppm off leaves the fill 7 ms from where it settled.
const GAINS_ALONE: (f64, f64) = (28_000.0, 400.0);
const GAINS_TRIM: (f64, f64) = (1_400.0, 1.0);

/// Seconds over which the fill is averaged between loop updates. The fill seen at each write
/// is a sawtooth (the device takes a whole buffer per callback: 100 ms at `--latency 300`)
/// beating with the bursts of the capture side: on the live server its 1 s means wandered by
/// ±5 ms, and a loop steering on them (0.2 rad/s) swung the ratio from rail to rail
/// (±1000 ppm). The average runs over at least 10 s and closes just after a device
/// callback, so it spans whole callbacks.
const UPDATE_S: f64 = 10.0;

/// Seconds of audio before the loop starts: the output primes its ring and the capture
/// delivers its start-up burst; steering then winds the integrator up to the limit.
const START_S: f64 = 2.0;

/// What the corrector reads of the output ring and the clocks at each call.
#[derive(Debug, Clone, Copy, Default)]
pub struct RingView {
    /// Frames in the ring now.
    pub fill_frames: usize,
    /// Frames the device has taken so far; a change marks a device callback.
    pub device_frames: u64,
    /// The ring's target fill, frames.
    pub target_frames: usize,
    /// The output clock against the input clock, ppm, once the clock meters have a reading
    /// ([`RateMeter`](super::RateMeter)).
    pub measured_ppm: Option<f64>,
    /// Underruns and dropouts so far: a change means the fill stepped for a reason that is
    /// not the clocks.
    pub disruptions: u64,
}

/// Resamples interleaved audio (1 or 2 channels, carried as the real and imaginary parts of
/// one complex stream) by 1 + ε, with ε in ±[`MAX_PPM`] steered from the output ring's fill.
pub struct DriftCorrector {
    resampler: RationalResampler<Complex32>,
    channels: usize,
    rate: f64,
    packed: Vec<Complex32>,
    resampled: Vec<Complex32>,
    out: Vec<f32>,
    /// Seconds of audio seen, and the fill's integral and duration since the last update.
    elapsed_s: f64,
    fill_sum: f64,
    fill_time: f64,
    /// The fill the loop holds: the first window's mean after [`START_S`], within half the
    /// target of it (the fill the start-up left, so the loop starts without a kick).
    reference_s: Option<f64>,
    /// The device's frame count at the last call (a change marks a callback).
    device_frames: u64,
    integral: f64,
    /// The loop's own part of the correction, ppm.
    trim_ppm: f64,
    /// Whether the clock meters' reading has arrived.
    measured: bool,
    /// Disruptions seen at the last call.
    disruptions: u64,
    ppm: f64,
}

impl DriftCorrector {
    /// A corrector for `channels` (1 or 2) at `rate` Hz taking at most `max_frames` per call.
    pub fn new(rate: f64, channels: usize, max_frames: usize) -> Result<Self> {
        let taps = design_lowpass(&LowpassSpec {
            passband_hz: 0.4 * rate,
            stopband_hz: 0.5 * rate,
            attenuation_db: 60.0,
            sample_rate: PHASES as f64 * rate,
        })?;
        let resampler = RationalResampler::new(PHASES, PHASES, &taps)?;
        // Room for the largest ratio.
        let out_frames = resampler.max_output_len(max_frames) + max_frames / 500 + 4;
        Ok(DriftCorrector {
            resampler,
            channels: channels.clamp(1, 2),
            rate,
            packed: vec![Complex32::default(); max_frames],
            resampled: vec![Complex32::default(); out_frames],
            out: vec![0.0; out_frames * 2],
            elapsed_s: 0.0,
            fill_sum: 0.0,
            fill_time: 0.0,
            reference_s: None,
            device_frames: 0,
            integral: 0.0,
            trim_ppm: 0.0,
            measured: false,
            disruptions: 0,
            ppm: 0.0,
        })
    }

    /// Averages the fill over [`UPDATE_S`] and, once per update, moves the ratio.
    fn steer(&mut self, fill_s: f64, device_frames: u64, dt: f64, target_s: f64) {
        let after_callback = device_frames != self.device_frames;
        self.device_frames = device_frames;
        self.elapsed_s += dt;
        if self.elapsed_s < START_S {
            return;
        }
        self.fill_sum += fill_s * dt;
        self.fill_time += dt;
        if self.fill_time < UPDATE_S || !after_callback {
            return;
        }
        let mean = self.fill_sum / self.fill_time;
        let span = self.fill_time;
        self.fill_sum = 0.0;
        self.fill_time = 0.0;
        let reference = *self
            .reference_s
            .get_or_insert(mean.clamp(0.5 * target_s, 1.5 * target_s));
        // Too full: make fewer samples (negative ε); too empty: more.
        let error = reference - mean;
        let (kp, ki) = if self.measured {
            GAINS_TRIM
        } else {
            GAINS_ALONE
        };
        self.integral = (self.integral + error * span).clamp(-MAX_PPM / ki, MAX_PPM / ki);
        self.trim_ppm = (kp * error + ki * self.integral).clamp(-MAX_PPM, MAX_PPM);
    }

    /// Forgets the fill the loop held and its trim: the next window's mean is the new
    /// reference.
    fn let_go(&mut self) {
        self.reference_s = None;
        self.integral = 0.0;
        self.trim_ppm = 0.0;
        self.fill_sum = 0.0;
        self.fill_time = 0.0;
    }

    /// The correction now applied, ppm (positive: more samples out than in).
    pub fn ppm(&self) -> f64 {
        self.ppm
    }

    /// Resamples `frames` (interleaved, at most `max_frames` of them) by 1 + ε and returns
    /// the output. ε is the clocks' difference measured by the clock meters (`ring`'s
    /// `measured_ppm`, once there is a reading) plus a slow loop's trim that holds the ring's
    /// fill where it settled (within half the target of the target). The loop lets go and
    /// settles again where the fill stepped for other reasons: when the measurement
    /// arrives, and after an underrun or a dropout, so a step of the fill is never read as
    /// a clock error (it would rail the ratio for minutes).
    pub fn process(&mut self, frames: &[f32], ring: RingView) -> &[f32] {
        let n = (frames.len() / self.channels).min(self.packed.len());
        let dt = n as f64 / self.rate;
        let measured_ppm = ring.measured_ppm.filter(|p| p.is_finite());
        let arrived = measured_ppm.is_some() && !self.measured;
        if arrived || ring.disruptions != self.disruptions {
            self.measured |= arrived;
            self.disruptions = ring.disruptions;
            self.let_go();
        }
        self.steer(
            ring.fill_frames as f64 / self.rate,
            ring.device_frames,
            dt,
            ring.target_frames as f64 / self.rate,
        );
        self.ppm = (measured_ppm.unwrap_or(0.0) + self.trim_ppm).clamp(-MAX_PPM, MAX_PPM);
        // Step M(1 − ε) ≈ M/(1 + ε) per output, ε = ppm·1e-6.
        let trim = -(PHASES as f64) * self.ppm * 1e-6;
        let _ = self.resampler.set_step_trim(trim);
        for (z, f) in self.packed[..n]
            .iter_mut()
            .zip(frames.chunks_exact(self.channels))
        {
            *z = if self.channels == 2 {
                Complex32::new(f[0], f[1])
            } else {
                Complex32::new(f[0], 0.0)
            };
        }
        let (_, produced) = self
            .resampler
            .process(&self.packed[..n], &mut self.resampled);
        for (z, o) in self.resampled[..produced]
            .iter()
            .zip(self.out.chunks_exact_mut(self.channels))
        {
            o[0] = z.re;
            if self.channels == 2 {
                o[1] = z.im;
            }
        }
        &self.out[..produced * self.channels]
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::measure::sinad_db;
    use crate::sound::{playout_ring, LiveStats};
    use std::sync::Arc;

    /// A capture clock and an output clock 400 ppm apart, simulated for 240 s: audio made at
    /// 48 kHz on the capture clock is pushed every 10 ms; the output callback takes 10 ms on
    /// its own clock, 400 ppm fast. Uncorrected, the ring would run dry after 20 ms / 400 ppm
    /// = 50 s and keep doing so. Corrected: the output's clock meter reads 400 ppm after
    /// 13 s and feeds it forward; the slow loop refills the ring that ran low before, to
    /// half the target, with a trim of a few ppm, so the ratio stays at +400 ppm (within 20
    /// over the last 30 s); no underrun after 60 s; the fill never leaves the ring; and the
    /// played 1 kHz tone stays clean: SINAD over 40 dB over the last 2 s.
    #[test]
    fn follows_a_fast_output_clock() {
        let rate = 48_000.0;
        let stats = Arc::new(LiveStats::default());
        let target = 960;
        let (mut feed, mut playout) = playout_ring(1, rate, target, Arc::clone(&stats));
        let mut corrector = DriftCorrector::new(rate, 1, 480).unwrap();
        let mut n = 0u64;
        let mut out_due = 0.0f64;
        let mut device = vec![0.0f32; 1000];
        let mut played = Vec::new();
        let mut ppm_late = Vec::new();
        let mut settled_at = 0;
        let mut fills = Vec::new();
        for tick in 0..24_000 {
            let block: Vec<f32> = (0..480)
                .map(|k| {
                    let t = (n + k) as f64 / rate;
                    (0.5 * (std::f64::consts::TAU * 1000.0 * t).sin()) as f32
                })
                .collect();
            n += 480;
            let fill = feed.queued();
            let figures = stats.figures();
            let ring = RingView {
                fill_frames: fill,
                device_frames: playout.frames_out(),
                target_frames: target,
                measured_ppm: figures.clock_ppm,
                disruptions: figures.underruns + figures.dropouts,
            };
            let out = corrector.process(&block, ring).to_vec();
            let pushed = feed.try_push_all(&out);
            assert_eq!(pushed, out.len(), "room in the ring at tick {tick}");
            out_due += 480.0 * (1.0 + 400e-6);
            let take = out_due.floor() as usize;
            out_due -= take as f64;
            playout.render(&mut device[..take], tick as f64 * 0.01, |x| x);
            if tick == 6000 {
                settled_at = stats.figures().underruns;
            }
            if tick % 1000 == 0 {
                fills.push(feed.queued());
            }
            if tick >= 21_000 {
                played.extend_from_slice(&device[..take]);
                ppm_late.push(corrector.ppm());
            }
        }
        let mean = ppm_late.iter().sum::<f64>() / ppm_late.len() as f64;
        assert!((mean - 400.0).abs() < 20.0, "mean correction {mean} ppm");
        let late = stats.figures().underruns - settled_at;
        assert_eq!(late, 0, "underruns after settling");
        let lo = ppm_late.iter().copied().fold(f64::INFINITY, f64::min);
        let hi = ppm_late.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        println!(
            "drift 400 ppm: correction {mean:.1} ppm ({lo:.1} to {hi:.1}), {settled_at} \
             underruns while settling"
        );
        println!("ring fill every 10 s, frames: {fills:?}");
        assert!(fills[1..].iter().all(|&f| f > 0 && f < 2 * target));
        // The tone over the last 2 s, read at the ratio applied then (the trim moves it by
        // under 1 ppm per 10 s update, so a 30 s fit at one frequency would read the phase
        // wander of an inaudible drift as noise).
        let tail = &ppm_late[ppm_late.len() - 200..];
        let applied = tail.iter().sum::<f64>() / tail.len() as f64;
        let last = &played[played.len() - 2 * rate as usize..];
        let sinad = sinad_db(last, rate * (1.0 + applied * 1e-6), 1000.0).unwrap();
        println!("played tone over the last 2 s: SINAD {sinad:.1} dB");
        assert!(sinad > 40.0, "SINAD {sinad:.1} dB");
    }
}

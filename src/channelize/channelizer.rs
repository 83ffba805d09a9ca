//! A polyphase FFT analysis filter bank: M channels spaced fs/M, each low-pass filtered by one
//! prototype and decimated by D, in one pass.
//!
//! Method: the weighted overlap-add / polyphase form of the analysis bank (R. E. Crochiere and
//! L. R. Rabiner, Multirate Digital Signal Processing, 1983, ch. 7; f. harris, Multirate Signal
//! Processing for Communication Systems, 2004, ch. 9). Channel k at output instant m is, by
//! definition, the mixer + FIR + decimator
//!
//! y_k\[m\] = Σ_n h\[n\] · x\[mD − n\] · e^{−j2πk(mD − n)/M},
//!
//! (the input mixed down by k·fs/M, filtered by h, every D-th sample kept). Splitting n = rM + p
//! gives the polyphase sums u_p = Σ_r h\[rM + p\]·x\[mD − rM − p\], one M-point inverse DFT of u,
//! and a rotation by e^{−j2πk(mD mod M)/M} (a circular shift of u): L multiply-adds and one FFT per D inputs instead of
//! M·L. The tests compare it with the direct form above.

use crate::block::Block;
use crate::dsp::kaiser::{design_lowpass, LowpassSpec};
use crate::sample::{as_floats, as_floats_mut};
use crate::{Complex32, Error, Result};
use rustfft::{Fft, FftPlanner};
use std::sync::Arc;

/// The channelizer. Output: frames of M complex samples, channel k (centre k·fs/M, the upper
/// half being negative frequencies as in an FFT) at index k of each frame; one frame per D
/// inputs, the first at the first input.
///
/// Per frame, the polyphase sums are R passes of an element-wise multiply-add over contiguous
/// length-M arrays, u\[p\] += h\[rM + p\]·z\[rM + p\] with z\[i\] = x\[t − i\] (the input history
/// stored newest first), so taps and history are both read forwards and the compiler
/// vectorises the passes (an AVX2 + FMA build of the same loop is chosen at run time, see
/// `polyphase_sums`). The inverse FFT then runs in place in the output frame.
pub struct PolyphaseChannelizer {
    channels: usize,
    decimation: usize,
    taps: Vec<f32>,
    /// The padded prototype with every tap twice, `pairs[2n] = pairs[2n + 1] = h[n]`, matching
    /// the re/im interleaving of the history.
    pairs: Vec<f32>,
    /// Input history newest first: `history[at + i] = x[t − i]` for i < L (L = padded length).
    history: Vec<Complex32>,
    at: usize,
    /// Input index of the newest input modulo M.
    phase: usize,
    /// Inputs until the next frame.
    until_frame: usize,
    scratch: Vec<Complex32>,
    fft: Arc<dyn Fft<f32>>,
}

impl std::fmt::Debug for PolyphaseChannelizer {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("PolyphaseChannelizer")
            .field("channels", &self.channels)
            .field("decimation", &self.decimation)
            .field("taps", &self.taps.len())
            .finish_non_exhaustive()
    }
}

/// The prototype for `channels` channels decimated by `decimation`: a Kaiser low-pass
/// (the project's design, `dsp::kaiser`) with its passband edge at `passband` × fs/M and its
/// stopband edge where the neighbouring channel's passband begins, (1 − `passband`)·fs/M (or
/// earlier, where the decimated output would alias onto the passband), at `attenuation_db`.
pub fn design_prototype(
    channels: usize,
    decimation: usize,
    passband: f64,
    attenuation_db: f64,
) -> Result<Vec<f32>> {
    if channels < 2 || decimation == 0 || decimation > channels {
        return Err(Error::parameter(
            "channels",
            format!("{channels} decimated by {decimation}"),
            "needs at least 2 channels and a decimation from 1 to the channel count",
        ));
    }
    let m = channels as f64;
    let out_rate = 1.0 / decimation as f64;
    let pass = passband / m;
    // The neighbour's passband starts at (1 − passband)·fs/M: the stopband begins there, and
    // no later than where the decimated output would alias onto the passband.
    let stop = (1.0 / m - pass).min(out_rate - pass).min(0.5);
    if !(pass > 0.0 && stop > pass) {
        return Err(Error::parameter(
            "passband",
            passband,
            "must leave room for a transition below the decimated rate",
        ));
    }
    let mut taps = design_lowpass(&LowpassSpec {
        passband_hz: pass,
        stopband_hz: stop,
        attenuation_db,
        sample_rate: 1.0,
    })?;
    // Unit gain at DC: the channel keeps the input's level.
    let sum: f32 = taps.iter().sum();
    if sum.abs() > 0.0 {
        taps.iter_mut().for_each(|t| *t /= sum);
    }
    Ok(taps)
}

/// History slots beyond the filter length: the newest L − 1 samples are moved back to the end
/// once per this many inputs.
const HISTORY_SLACK: usize = 8192;

impl PolyphaseChannelizer {
    /// `channels` channels (M ≥ 2), each decimated by `decimation` (1 ≤ D ≤ M), filtered by
    /// `taps` (the prototype low-pass at the input rate).
    ///
    /// ```
    /// use amrx::channelize::channelizer::{design_prototype, PolyphaseChannelizer};
    /// use amrx::block::{process_to_vec, Block};
    /// use amrx::Complex32;
    /// let taps = design_prototype(8, 4, 0.4, 60.0)?;
    /// let mut bank = PolyphaseChannelizer::new(8, 4, taps)?;
    /// let frames = process_to_vec(&mut bank, &vec![Complex32::new(1.0, 0.0); 64]);
    /// assert_eq!(frames.len(), 8 * 16);
    /// # Ok::<(), amrx::Error>(())
    /// ```
    pub fn new(channels: usize, decimation: usize, taps: Vec<f32>) -> Result<Self> {
        if channels < 2 || decimation == 0 || decimation > channels {
            return Err(Error::parameter(
                "channels",
                format!("{channels} decimated by {decimation}"),
                "needs at least 2 channels and a decimation from 1 to the channel count",
            ));
        }
        if taps.is_empty() || taps.iter().any(|t| !t.is_finite()) {
            return Err(Error::parameter(
                "taps",
                taps.len(),
                "the prototype needs at least one tap, all finite",
            ));
        }
        let len = taps.len().div_ceil(channels) * channels;
        let mut padded = taps;
        padded.resize(len, 0.0);
        let fft = FftPlanner::<f32>::new().plan_fft_inverse(channels);
        let scratch = vec![Complex32::default(); fft.get_inplace_scratch_len()];
        let pairs = padded.iter().flat_map(|&h| [h, h]).collect();
        let history = vec![Complex32::default(); len + HISTORY_SLACK];
        Ok(PolyphaseChannelizer {
            channels,
            decimation,
            taps: padded,
            pairs,
            at: HISTORY_SLACK,
            history,
            phase: 0,
            until_frame: 0,
            scratch,
            fft,
        })
    }

    /// Channels M.
    pub fn channels(&self) -> usize {
        self.channels
    }

    /// Decimation D.
    pub fn decimation(&self) -> usize {
        self.decimation
    }

    /// Stores inputs in order as the newest in the history (a non-finite one as zero): a run
    /// at a time, written backwards below `at`, the newest L − 1 moved back to the end first
    /// when the slack is used up.
    fn push(&mut self, mut input: &[Complex32]) {
        while !input.is_empty() {
            if self.at == 0 {
                let len = self.taps.len();
                let end = self.history.len();
                self.history.copy_within(0..len - 1, end - len + 1);
                self.at = end - len + 1;
            }
            let run = input.len().min(self.at);
            let (now, rest) = input.split_at(run);
            let slots = &mut self.history[self.at - run..self.at];
            for (h, x) in slots.iter_mut().rev().zip(now) {
                // `&`, not `&&`: no branch, so the loop vectorises.
                let finite = x.re.is_finite() & x.im.is_finite();
                *h = if finite { *x } else { Complex32::default() };
            }
            self.at -= run;
            input = rest;
        }
    }

    /// One frame for the newest input (index t ≡ `phase` mod M), written into `out`.
    ///
    /// The rotation e^{−j2πk·t/M} of channel k is folded into the inverse DFT as a circular
    /// shift of its input: Σ_p u_p e^{j2πk(p − t)/M} is the inverse DFT of u_{(q + t) mod M},
    /// so the sums are copied into the frame starting at u_t and no twiddles are needed.
    fn frame(&mut self, out: &mut [Complex32]) {
        let len = self.taps.len();
        polyphase_sums(
            &self.pairs,
            as_floats(&self.history[self.at..self.at + len]),
            as_floats_mut(&mut out[..self.channels]),
            2 * self.phase,
        );
        self.fft.process_with_scratch(out, &mut self.scratch);
    }
}

/// Floats accumulated in registers per tile of the polyphase sums.
const TILE: usize = 32;

/// The polyphase sums u\[j\] = Σ_r h\[rW + j\]·z\[rW + j\] over R = len/W passes, W = `u.len()`
/// (2M floats), stored circularly shifted: u\[j\] goes to `out[(j − shift) mod W]`. The AVX2 + FMA build when the CPU has it (checked at run time by the standard
/// library's cached feature test), the portable build otherwise. Both are the same loop and
/// differ only by rounding (`fma_sums_equal_portable_sums`).
#[inline]
fn polyphase_sums(h: &[f32], z: &[f32], out: &mut [f32], shift: usize) {
    #[cfg(target_arch = "x86_64")]
    if std::arch::is_x86_feature_detected!("avx2") && std::arch::is_x86_feature_detected!("fma") {
        // SAFETY: the CPU has AVX2 and FMA (checked just above).
        return unsafe { polyphase_sums_fma(h, z, out, shift) };
    }
    polyphase_sums_portable(h, z, out, shift);
}

/// [`polyphase_sums_portable`] compiled for AVX2 with fused multiply-adds.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
unsafe fn polyphase_sums_fma(h: &[f32], z: &[f32], out: &mut [f32], shift: usize) {
    sums_kernel(h, z, out, shift, |a, b, c| a.mul_add(b, c));
}

/// The portable build: separate multiply and add.
fn polyphase_sums_portable(h: &[f32], z: &[f32], out: &mut [f32], shift: usize) {
    sums_kernel(h, z, out, shift, |a, b, c| a * b + c);
}

/// Tiles of [`TILE`] outputs, each accumulated over every pass in registers, then the tail.
#[inline(always)]
fn sums_kernel(
    h: &[f32],
    z: &[f32],
    out: &mut [f32],
    shift: usize,
    fma: impl Fn(f32, f32, f32) -> f32,
) {
    let w = out.len();
    let shift = shift % w;
    let passes = h.len() / w;
    let whole = w / TILE * TILE;
    for j0 in (0..whole).step_by(TILE) {
        let mut acc = [0.0f32; TILE];
        for r in 0..passes {
            let at = r * w + j0;
            let hh = &h[at..at + TILE];
            let zz = &z[at..at + TILE];
            for i in 0..TILE {
                acc[i] = fma(hh[i], zz[i], acc[i]);
            }
        }
        let to = (j0 + w - shift) % w;
        if to + TILE <= w {
            out[to..to + TILE].copy_from_slice(&acc);
        } else {
            let split = w - to;
            out[to..].copy_from_slice(&acc[..split]);
            out[..TILE - split].copy_from_slice(&acc[split..]);
        }
    }
    for j in whole..w {
        let mut acc = 0.0f32;
        for r in 0..passes {
            acc = fma(h[r * w + j], z[r * w + j], acc);
        }
        out[(j + w - shift) % w] = acc;
    }
}

impl Block for PolyphaseChannelizer {
    type Input = Complex32;
    type Output = Complex32;

    fn process(&mut self, input: &[Complex32], output: &mut [Complex32]) -> (usize, usize) {
        let m = self.channels;
        let mut produced = 0;
        let mut i = 0;
        // `phase` is the index of the next input modulo M; the input `until_frame` ahead of
        // it gets a frame.
        while i < input.len() {
            let left = input.len() - i;
            let frame_due = self.until_frame < left;
            let room = output.len() - produced >= m;
            let run = if frame_due && room {
                self.until_frame + 1
            } else {
                self.until_frame.min(left)
            };
            self.push(&input[i..i + run]);
            i += run;
            if frame_due && room {
                self.phase = (self.phase + run - 1) % m;
                let (head, _) = output[produced..].split_at_mut(m);
                self.frame(head);
                produced += m;
                self.until_frame = self.decimation - 1;
                self.phase = (self.phase + 1) % m;
            } else {
                self.until_frame -= run;
                self.phase = (self.phase + run) % m;
                if frame_due {
                    return (i, produced);
                }
            }
        }
        (input.len(), produced)
    }

    fn max_output_len(&self, input_len: usize) -> usize {
        input_len.div_ceil(self.decimation) * self.channels
    }

    fn rate_ratio(&self) -> f64 {
        self.channels as f64 / self.decimation as f64
    }

    fn delay(&self) -> f64 {
        // A linear-phase prototype of the given (unpadded, odd) length delays by (N − 1)/2;
        // the padding zeros sit at the end and change nothing.
        let real = self
            .taps
            .iter()
            .rposition(|t| *t != 0.0)
            .map_or(0, |i| i + 1);
        (real.saturating_sub(1)) as f64 / 2.0
    }

    fn reset(&mut self) {
        self.history
            .iter_mut()
            .for_each(|h| *h = Complex32::default());
        self.at = HISTORY_SLACK;
        self.phase = 0;
        self.until_frame = 0;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::check::{check_block, BlockCheck};
    use crate::block::process_to_vec;
    use num_complex::Complex64;

    // Seeded complex noise, each component uniform in [−1, 1).
    use crate::dsp::test_util::random_complex as noise;

    /// The direct form: each channel mixed down by k·fs/M, filtered by h, decimated by D, all
    /// in f64 (the definition in the module docs).
    fn direct(x: &[Complex32], h: &[f32], m: usize, d: usize) -> Vec<Vec<Complex64>> {
        (0..m)
            .map(|k| {
                let mixed: Vec<Complex64> = x
                    .iter()
                    .enumerate()
                    .map(|(n, s)| {
                        let a = -2.0 * std::f64::consts::PI * (k * n % m) as f64 / m as f64;
                        Complex64::new(f64::from(s.re), f64::from(s.im))
                            * Complex64::new(a.cos(), a.sin())
                    })
                    .collect();
                (0..x.len())
                    .step_by(d)
                    .map(|t| {
                        (0..h.len().min(t + 1))
                            .map(|n| mixed[t - n] * f64::from(h[n]))
                            .sum()
                    })
                    .collect()
            })
            .collect()
    }

    /// The run-time-chosen kernel against the portable one on seeded random taps and history,
    /// widths with and without a partial tile. Tolerance: each sum has at most 12 products of
    /// magnitude ≤ 1; the two builds differ by one rounding per multiply-add (≤ 12 half-ulps
    /// of a sum ≤ 12, under 1e-5).
    #[test]
    fn fma_sums_equal_portable_sums() {
        let h = crate::dsp::test_util::random_real(12 * 80, 31);
        let z = crate::dsp::test_util::random_real(12 * 80, 32);
        for w in [2, 16, 32, 48, 80] {
            for passes in [1, 3, 12] {
                let n = w * passes;
                let mut want = vec![0.0; w];
                let mut got = vec![0.0; w];
                for shift in [0, 2, w / 2, w - 2] {
                    polyphase_sums_portable(&h[..n], &z[..n], &mut want, shift);
                    polyphase_sums(&h[..n], &z[..n], &mut got, shift);
                    for (g, e) in got.iter().zip(&want) {
                        assert!((g - e).abs() < 1e-5, "W {w} R {passes}: {g} vs {e}");
                    }
                    // And against the plain definition, shifted.
                    for j in 0..w {
                        let sum: f32 = (0..passes).map(|r| h[r * w + j] * z[r * w + j]).sum();
                        assert!((want[(j + w - shift) % w] - sum).abs() < 1e-5);
                    }
                }
            }
        }
    }

    #[test]
    fn meets_the_block_contract() {
        // No delay probe: the output interleaves M channels, each at its own frequency, so two
        // tones in one passband cannot be read as one stream; the delay is checked against the
        // direct form below (equal outputs mean equal delay).
        let taps = design_prototype(8, 4, 0.4, 60.0).unwrap();
        let x = noise(3000, 1);
        let make = || PolyphaseChannelizer::new(8, 4, taps.clone()).unwrap();
        let mut check = BlockCheck::new(&make, &x);
        check.channels = 8;
        check.count_slack = 8;
        check_block(&check);
    }

    #[test]
    fn equals_the_direct_mixer_filter_decimator() {
        // Seeded noise; M = 16, D = 8 and D = 5 (not dividing M) and D = 16 (critically
        // sampled). Float rounding: f32 sums of ~100 terms of size ~0.01·1 against f64, so
        // 1e-5 of the input scale (measured worst about 1e-6).
        for (m, d) in [(16, 8), (16, 5), (16, 16)] {
            let taps = design_prototype(m, d.min(m / 2).max(1), 0.4, 70.0).unwrap();
            let x = noise(4000, 7 + d as u64);
            let fast = process_to_vec(
                &mut PolyphaseChannelizer::new(m, d, taps.clone()).unwrap(),
                &x,
            );
            let want = direct(&x, &taps, m, d);
            let frames = fast.len() / m;
            assert_eq!(frames, want[0].len());
            let mut worst = 0.0f64;
            for f in 0..frames {
                for k in 0..m {
                    let got = fast[f * m + k];
                    let w = want[k][f];
                    worst = worst
                        .max((Complex64::new(f64::from(got.re), f64::from(got.im)) - w).norm());
                }
            }
            eprintln!("M {m}, D {d}: largest difference from the direct form {worst:.2e}");
            assert!(worst < 1e-5, "M {m} D {d}: {worst}");
        }
    }

    #[test]
    fn history_wraps_and_non_finite_inputs_read_as_zero() {
        // 20 000 inputs move the history back to the end of its buffer twice (every 8192
        // inputs); fed in uneven chunks, with non-finite samples that must count as zeros.
        // Tolerance as for the direct form above.
        let (m, d) = (16, 8);
        let taps = design_prototype(m, d, 0.4, 70.0).unwrap();
        let mut x = noise(20_000, 11);
        let mut clean = x.clone();
        for (i, bad) in [
            (5, f32::NAN),
            (8191, f32::INFINITY),
            (12_000, f32::NEG_INFINITY),
        ] {
            x[i].re = bad;
            clean[i] = Complex32::default();
        }
        let mut bank = PolyphaseChannelizer::new(m, d, taps.clone()).unwrap();
        let mut got = Vec::new();
        let mut out = vec![Complex32::default(); bank.max_output_len(20_000)];
        let mut at = 0;
        for len in [1usize, 7, 8190, 3, 5000].iter().cycle() {
            if at >= x.len() {
                break;
            }
            let end = (at + len).min(x.len());
            let (consumed, produced) = bank.process(&x[at..end], &mut out);
            got.extend_from_slice(&out[..produced]);
            at += consumed;
        }
        let want = direct(&clean, &taps, m, d);
        assert_eq!(got.len() / m, want[0].len());
        for (f, frame) in got.chunks_exact(m).enumerate() {
            for (k, y) in frame.iter().enumerate() {
                let e = (Complex64::new(f64::from(y.re), f64::from(y.im)) - want[k][f]).norm();
                assert!(e < 1e-5, "frame {f} channel {k}: {e}");
            }
        }
    }

    #[test]
    fn adjacent_channels_are_rejected_as_designed() {
        // A tone at the centre of channel 1 (fs/M): channel 0 must hold it at least as far
        // down as the prototype's stopband attenuation (70 dB; the Kaiser design meets its
        // attenuation at the stopband edge, 0.6·fs/M, and the adjacent centre lies beyond).
        let (m, d) = (16, 8);
        let taps = design_prototype(m, d, 0.4, 70.0).unwrap();
        let x: Vec<Complex32> = (0..20_000)
            .map(|n| {
                let a = 2.0 * std::f64::consts::PI * (n % m) as f64 / m as f64;
                Complex32::new(a.cos() as f32, a.sin() as f32)
            })
            .collect();
        let y = process_to_vec(&mut PolyphaseChannelizer::new(m, d, taps).unwrap(), &x);
        let frames = y.len() / m;
        let power = |k: usize| -> f64 {
            (frames / 2..frames)
                .map(|f| f64::from(y[f * m + k].norm_sqr()))
                .sum::<f64>()
                / (frames - frames / 2) as f64
        };
        let own = power(1);
        assert!((own - 1.0).abs() < 0.01, "channel gain {own}");
        for k in [0, 2] {
            let rejection = 10.0 * (own / power(k)).log10();
            eprintln!("channel {k}: {rejection:.1} dB under the tone's channel");
            assert!(rejection >= 70.0, "channel {k}: only {rejection:.1} dB");
        }
    }
}

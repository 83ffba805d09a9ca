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
//! and a rotation by e^{−j2πk(mD mod M)/M}: L multiply-adds and one FFT per D inputs instead of
//! M·L. The tests compare it with the direct form above.

use crate::block::Block;
use crate::dsp::kaiser::{design_lowpass, LowpassSpec};
use crate::{Complex32, Error, Result};
use rustfft::{Fft, FftPlanner};
use std::sync::Arc;

/// The channelizer. Output: frames of M complex samples, channel k (centre k·fs/M, the upper
/// half being negative frequencies as in an FFT) at index k of each frame; one frame per D
/// inputs, the first at the first input.
pub struct PolyphaseChannelizer {
    channels: usize,
    decimation: usize,
    taps: Vec<f32>,
    /// Prototype taps by phase, reversed: `phase_taps[p·R + j] = h[(R − 1 − j)·M + p]`.
    phase_taps: Vec<f32>,
    /// Taps per phase R = len / M.
    per_phase: usize,
    /// One ring per input phase q (inputs whose index ≡ q mod M), each 2R long and written
    /// twice, so its newest R samples are contiguous, oldest first, from `ring_at[q] + 1`.
    rings: Vec<Complex32>,
    ring_at: Vec<usize>,
    /// Inputs seen (mod M·D is enough; kept as the input index modulo the phase period).
    phase: usize,
    /// Inputs until the next frame.
    until_frame: usize,
    sums: Vec<Complex32>,
    scratch: Vec<Complex32>,
    fft: Arc<dyn Fft<f32>>,
    /// e^{−j2πq/M}, q = 0..M.
    twiddle: Vec<Complex32>,
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
        let twiddle = (0..channels)
            .map(|q| {
                let a = -2.0 * std::f64::consts::PI * q as f64 / channels as f64;
                Complex32::new(a.cos() as f32, a.sin() as f32)
            })
            .collect();
        let per_phase = len / channels;
        let mut phase_taps = vec![0.0f32; len];
        for p in 0..channels {
            for j in 0..per_phase {
                phase_taps[p * per_phase + j] = padded[(per_phase - 1 - j) * channels + p];
            }
        }
        Ok(PolyphaseChannelizer {
            channels,
            decimation,
            taps: padded,
            phase_taps,
            per_phase,
            rings: vec![Complex32::default(); 2 * len],
            ring_at: vec![0; channels],
            phase: 0,
            until_frame: 0,
            sums: vec![Complex32::default(); channels],
            scratch,
            fft,
            twiddle,
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

    /// One frame for the input just stored at the newest history slot, input index ≡ `phase`
    /// (mod M).
    fn frame(&mut self, out: &mut [Complex32]) {
        let m = self.channels;
        let r = self.per_phase;
        for p in 0..m {
            // Inputs t − p − jM live in ring q = (t − p) mod M, newest last.
            let q = (self.phase + m - p) % m;
            let start = q * 2 * r + self.ring_at[q] + 1;
            let window = &self.rings[start..start + r];
            let taps = &self.phase_taps[p * r..(p + 1) * r];
            self.sums[p] = dot(window, taps);
        }
        self.fft
            .process_with_scratch(&mut self.sums, &mut self.scratch);
        for (k, (o, v)) in out.iter_mut().zip(&self.sums).enumerate() {
            *o = v * self.twiddle[(k * self.phase) % m];
        }
    }
}

/// Σ x\[j\]·h\[j\] with four independent accumulators (so the compiler can vectorise it).
#[inline]
fn dot(x: &[Complex32], h: &[f32]) -> Complex32 {
    let mut re = [0.0f32; 4];
    let mut im = [0.0f32; 4];
    let xs = x.chunks_exact(4);
    let hs = h.chunks_exact(4);
    let (xr, hr) = (xs.remainder(), hs.remainder());
    for (xc, hc) in xs.zip(hs) {
        for i in 0..4 {
            re[i] += xc[i].re * hc[i];
            im[i] += xc[i].im * hc[i];
        }
    }
    let mut acc = Complex32::new(re.iter().sum(), im.iter().sum());
    for (a, b) in xr.iter().zip(hr) {
        acc += a * b;
    }
    acc
}

impl Block for PolyphaseChannelizer {
    type Input = Complex32;
    type Output = Complex32;

    fn process(&mut self, input: &[Complex32], output: &mut [Complex32]) -> (usize, usize) {
        let m = self.channels;
        let mut produced = 0;
        for (i, x) in input.iter().enumerate() {
            if self.until_frame == 0 && output.len() - produced < m {
                return (i, produced);
            }
            let x = if x.re.is_finite() && x.im.is_finite() {
                *x
            } else {
                Complex32::default()
            };
            let q = self.phase;
            let r = self.per_phase;
            let at = (self.ring_at[q] + 1) % r;
            self.ring_at[q] = at;
            self.rings[q * 2 * r + at] = x;
            self.rings[q * 2 * r + at + r] = x;
            if self.until_frame == 0 {
                let (head, _) = output[produced..].split_at_mut(m);
                self.frame(head);
                produced += m;
                self.until_frame = self.decimation;
            }
            self.until_frame -= 1;
            self.phase = (self.phase + 1) % m;
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
        self.rings
            .iter_mut()
            .for_each(|h| *h = Complex32::default());
        self.ring_at.iter_mut().for_each(|a| *a = 0);
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

//! All L phases of an interpolator at once: the L outputs that one input window gives when a
//! signal is up-sampled by L (y[iL + p] = Σ_j L·h[p + jL]·x[i − j], p = 0..L).
//!
//! The taps are stored transposed (tap j of every phase side by side), so each input sample
//! x[i − j] is broadcast once and multiplied into all L outputs: one multiply-add per tap and
//! output lane, instead of a separate short dot product, with its reduction, per output.

#[cfg(target_arch = "x86_64")]
use crate::dsp::dot::fma_available;
use crate::dsp::dot::{same_type_slice, same_type_slice_mut};
use crate::sample::Sample;
use crate::Complex32;

/// The transposed phase bank of an interpolator by L with K taps per phase.
#[derive(Debug, Clone)]
pub(crate) struct PhaseBank {
    /// `real[j·L + p]` = L·h[p + jL] (0 past the prototype's end).
    real: Vec<f32>,
    /// The same with every tap doubled, matching interleaved re/im outputs.
    pairs: Vec<f32>,
    up: usize,
    per_phase: usize,
}

impl PhaseBank {
    /// The bank for prototype `taps` (designed at the up-sampled rate) and factor `up`; the
    /// gain L is folded in, as in the polyphase sub-filters.
    pub(crate) fn new(taps: &[f32], up: usize) -> Self {
        let per_phase = taps.len().div_ceil(up);
        let real: Vec<f32> = (0..per_phase * up)
            .map(|q| {
                let (j, p) = (q / up, q % up);
                taps.get(p + j * up).map_or(0.0, |&h| h * up as f32)
            })
            .collect();
        let pairs = real.iter().flat_map(|&h| [h, h]).collect();
        PhaseBank {
            real,
            pairs,
            up,
            per_phase,
        }
    }

    /// Taps per phase: the window length [`PhaseBank::outputs`] reads.
    #[cfg(test)]
    pub(crate) fn per_phase(&self) -> usize {
        self.per_phase
    }

    /// The `up` outputs of the window `x` (its last sample is the newest input, x[i]):
    /// `out[p]` = Σ_j L·h[p + jL]·x[i − j], summed j = 0, 1, … with one rounding per
    /// multiply-add (fused where the CPU has FMA), so every output is the same whichever
    /// kernel lane or tail computes it.
    pub(crate) fn outputs<T: Sample>(&self, x: &[T], out: &mut [T]) {
        assert!(x.len() == self.per_phase && out.len() == self.up);
        if let (Some(xc), Some(o)) = (
            same_type_slice::<T, Complex32>(x),
            same_type_slice_mut::<T, Complex32>(out),
        ) {
            // SAFETY: Complex32 is #[repr(C)] { re: f32, im: f32 }.
            let (xf, of) = unsafe {
                (
                    std::slice::from_raw_parts(xc.as_ptr().cast::<f32>(), 2 * xc.len()),
                    std::slice::from_raw_parts_mut(o.as_mut_ptr().cast::<f32>(), 2 * o.len()),
                )
            };
            return transposed_outputs::<2>(&self.pairs, xf, of);
        }
        if let (Some(xr), Some(o)) = (
            same_type_slice::<T, f32>(x),
            same_type_slice_mut::<T, f32>(out),
        ) {
            return transposed_outputs::<1>(&self.real, xr, o);
        }
        for (p, o) in out.iter_mut().enumerate() {
            *o = (0..self.per_phase).fold(T::ZERO, |acc, j| {
                acc + x[self.per_phase - 1 - j] * self.real[j * self.up + p]
            });
        }
    }
}

/// `out[q]` = Σ_j bank[j·W + q]·x_j[q mod C] with W = out.len() and x_j the C components of
/// the sample `j` places before the newest (`x` holds K samples of C components, oldest first).
fn transposed_outputs<const C: usize>(bank: &[f32], x: &[f32], out: &mut [f32]) {
    #[cfg(target_arch = "x86_64")]
    if fma_available() {
        // SAFETY: the CPU has AVX2 and FMA (checked just above).
        unsafe { transposed_outputs_fma::<C>(bank, x, out) };
        return;
    }
    transposed_outputs_portable::<C>(bank, x, out);
}

/// The portable kernel: the outputs accumulated in place, tap by tap (the inner loop runs
/// over outputs, so the compiler vectorises it).
fn transposed_outputs_portable<const C: usize>(bank: &[f32], x: &[f32], out: &mut [f32]) {
    let width = out.len();
    let k = x.len() / C;
    out.fill(0.0);
    for (j, row) in bank.chunks_exact(width).take(k).enumerate() {
        let sample = &x[(k - 1 - j) * C..(k - j) * C];
        for (q, (o, &h)) in out.iter_mut().zip(row).enumerate() {
            *o += h * sample[q % C];
        }
    }
}

/// Broadcasts one sample (C components, repeated across the eight lanes; C is 1 or 2).
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
unsafe fn broadcast<const C: usize>(sample: &[f32]) -> std::arch::x86_64::__m256 {
    use std::arch::x86_64::*;
    if C == 2 {
        let pair =
            f64::from_bits(u64::from(sample[0].to_bits()) | u64::from(sample[1].to_bits()) << 32);
        _mm256_castpd_ps(_mm256_set1_pd(pair))
    } else {
        _mm256_set1_ps(sample[0])
    }
}

/// The AVX2 + FMA kernel: 32 outputs per pass held in four accumulators, one broadcast per
/// tap; the outputs past the last group of eight are summed one by one with the same fused
/// multiply-adds in the same order.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
unsafe fn transposed_outputs_fma<const C: usize>(bank: &[f32], x: &[f32], out: &mut [f32]) {
    use std::arch::x86_64::*;
    let width = out.len();
    let k = x.len() / C;
    assert!(bank.len() >= k * width && C <= 2 && x.len() == k * C);
    let sample = |j: usize| &x[(k - 1 - j) * C..(k - j) * C];
    let mut q = 0;
    while q + 32 <= width {
        let mut acc = [_mm256_setzero_ps(); 4];
        for j in 0..k {
            // SAFETY: C components of sample j are in x (k·C long, asserted).
            let b = unsafe { broadcast::<C>(sample(j)) };
            for (a, acc) in acc.iter_mut().enumerate() {
                // SAFETY: j < k and q + 8a + 8 ≤ width, so the load is inside bank[..k·width].
                let h = unsafe { _mm256_loadu_ps(bank.as_ptr().add(j * width + q + 8 * a)) };
                *acc = _mm256_fmadd_ps(h, b, *acc);
            }
        }
        for (a, acc) in acc.iter().enumerate() {
            // SAFETY: q + 8a + 8 ≤ width = out.len().
            unsafe { _mm256_storeu_ps(out.as_mut_ptr().add(q + 8 * a), *acc) };
        }
        q += 32;
    }
    while q + 8 <= width {
        let mut acc = _mm256_setzero_ps();
        for j in 0..k {
            // SAFETY: as above, for one group of eight.
            let b = unsafe { broadcast::<C>(sample(j)) };
            let h = unsafe { _mm256_loadu_ps(bank.as_ptr().add(j * width + q)) };
            acc = _mm256_fmadd_ps(h, b, acc);
        }
        // SAFETY: q + 8 ≤ out.len().
        unsafe { _mm256_storeu_ps(out.as_mut_ptr().add(q), acc) };
        q += 8;
    }
    for (q, o) in out.iter_mut().enumerate().skip(q) {
        *o = (0..k).fold(0.0, |acc, j| {
            bank[j * width + q].mul_add(sample(j)[q % C], acc)
        });
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::dsp::test_util::{random_complex, random_real};

    /// Each phase's output is the plain sum in f64 of its taps against the window (tolerance:
    /// f32 rounding of ≤ 7 products of size ≤ 1, < 1e-5), for complex and real windows and
    /// for widths that exercise the 32-wide passes, the groups of eight and the tail.
    #[test]
    fn every_phase_is_its_dot_product() {
        for (up, ntaps) in [(1, 5), (3, 19), (8, 40), (13, 64), (32, 175), (37, 200)] {
            let taps: Vec<f32> = random_real(ntaps, ntaps as u64)
                .iter()
                .map(|h| h * 0.1)
                .collect();
            let bank = PhaseBank::new(&taps, up);
            let k = bank.per_phase();
            let x = random_complex(k, up as u64);
            let mut got = vec![Complex32::default(); up];
            bank.outputs(&x, &mut got);
            let xr: Vec<f32> = x.iter().map(|z| z.re).collect();
            let mut got_real = vec![0.0f32; up];
            bank.outputs(&xr, &mut got_real);
            for p in 0..up {
                let (mut re, mut im) = (0.0f64, 0.0f64);
                for j in 0..k {
                    let h = taps.get(p + j * up).map_or(0.0, |&h| h as f64 * up as f64);
                    re += h * x[k - 1 - j].re as f64;
                    im += h * x[k - 1 - j].im as f64;
                }
                assert!((got[p].re as f64 - re).abs() < 1e-5, "up {up} p {p}");
                assert!((got[p].im as f64 - im).abs() < 1e-5, "up {up} p {p}");
                assert_eq!(got_real[p], got[p].re, "up {up} p {p}: real = complex's re");
            }
        }
    }

    /// The run-time-chosen kernel against the portable twin: the same products and sums, so
    /// they differ only by the fused multiply-add's single rounding (< 1e-6 here).
    #[test]
    fn fma_kernel_equals_portable_kernel() {
        let taps: Vec<f32> = random_real(190, 7).iter().map(|h| h * 0.1).collect();
        for up in [1, 2, 5, 16, 19, 32, 45] {
            let bank = PhaseBank::new(&taps, up);
            let x = random_real(2 * bank.per_phase(), 8);
            let mut fast = vec![0.0f32; 2 * up];
            let mut portable = vec![0.0f32; 2 * up];
            transposed_outputs::<2>(&bank.pairs, &x, &mut fast);
            transposed_outputs_portable::<2>(&bank.pairs, &x, &mut portable);
            for (f, p) in fast.iter().zip(&portable) {
                assert!((f - p).abs() < 1e-6, "up {up}: {f} vs {p}");
            }
        }
    }
}

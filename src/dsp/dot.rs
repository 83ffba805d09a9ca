//! Real-tap dot products for `f32` and `Complex32` windows, written as eight independent
//! accumulator lanes so that the compiler emits SIMD code without reassociating floats.

use crate::sample::Sample;
use crate::Complex32;
use std::any::TypeId;

const LANES: usize = 8;

/// Filter taps stored time-reversed (so `dot(window)` is Σ h[k]·x[n−k] over a forward window),
/// plus a copy with every tap doubled for interleaved complex windows.
#[derive(Debug, Clone)]
pub(crate) struct Taps {
    reversed: Vec<f32>,
    reversed_pairs: Vec<f32>,
}

impl Taps {
    /// Taps `h[0..N]` in their natural order.
    pub(crate) fn new(taps: &[f32]) -> Self {
        let reversed: Vec<f32> = taps.iter().rev().copied().collect();
        let reversed_pairs = reversed.iter().flat_map(|&h| [h, h]).collect();
        Taps {
            reversed,
            reversed_pairs,
        }
    }

    /// Number of taps.
    pub(crate) fn len(&self) -> usize {
        self.reversed.len()
    }

    /// Σ h[k]·window[N−1−k], i.e. the filter output at the window's last sample. Always
    /// inlined: the type dispatch then folds away in each caller (measured with callgrind on
    /// the am chain: out of line it cost 10 % more instructions in the decimator).
    #[inline(always)]
    pub(crate) fn dot<T: Sample>(&self, window: &[T]) -> T {
        if let Some(x) = same_type_slice::<T, Complex32>(window) {
            return same_type_value(dot_complex(&self.reversed_pairs, x));
        }
        if let Some(x) = same_type_slice::<T, f32>(window) {
            return same_type_value(dot_real(&self.reversed, x));
        }
        self.reversed
            .iter()
            .zip(window)
            .fold(T::ZERO, |acc, (&h, &x)| acc + x * h)
    }
}

/// Reinterprets `&[T]` as `&[U]` when T and U are the same type.
#[inline]
fn same_type_slice<T: 'static, U: 'static>(x: &[T]) -> Option<&[U]> {
    if TypeId::of::<T>() == TypeId::of::<U>() {
        // SAFETY: T and U are the same type, so this is the identity reinterpretation.
        Some(unsafe { std::slice::from_raw_parts(x.as_ptr().cast::<U>(), x.len()) })
    } else {
        None
    }
}

/// Converts a `U` into a `T`; only called after `same_type_slice` proved T == U.
#[inline]
fn same_type_value<U: Copy + 'static, T: Copy + 'static>(u: U) -> T {
    assert!(TypeId::of::<T>() == TypeId::of::<U>());
    // SAFETY: checked just above that T and U are the same type.
    unsafe { std::mem::transmute_copy(&u) }
}

/// Per-lane partial sums of h·x over whole chunks of eight, and the leftover tail: the fused
/// multiply-add kernel when the CPU has one (checked at run time, once, by the standard
/// library's cached feature test), the portable kernel otherwise.
#[inline(always)]
fn lane_sums(h: &[f32], x: &[f32]) -> ([f32; LANES], usize) {
    #[cfg(target_arch = "x86_64")]
    if fma_available() {
        // SAFETY: the CPU has AVX2 and FMA (checked just above).
        return unsafe { lane_sums_fma(h, x) };
    }
    lane_sums_portable(h, x)
}

/// Whether the AVX2 + FMA kernel can run here.
#[cfg(target_arch = "x86_64")]
#[inline(always)]
fn fma_available() -> bool {
    std::arch::is_x86_feature_detected!("avx2") && std::arch::is_x86_feature_detected!("fma")
}

/// [`lane_sums_portable`] compiled for AVX2 with fused multiply-adds, over 16 lanes (two
/// 256-bit accumulators, so two multiply-adds are in flight), folded to eight at the end so
/// that even lanes still hold real parts and odd lanes imaginary parts. Its results differ
/// from the portable kernel's only by rounding (one rounding per multiply-add instead of two);
/// `fma_kernel_equals_portable_kernel` checks it.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
unsafe fn lane_sums_fma(h: &[f32], x: &[f32]) -> ([f32; LANES], usize) {
    const WIDE: usize = 2 * LANES;
    let mut acc = [0.0f32; WIDE];
    let n = h.len().min(x.len());
    let wide = n / WIDE * WIDE;
    for (hh, xx) in h[..wide]
        .chunks_exact(WIDE)
        .zip(x[..wide].chunks_exact(WIDE))
    {
        for i in 0..WIDE {
            acc[i] = hh[i].mul_add(xx[i], acc[i]);
        }
    }
    let whole = n / LANES * LANES;
    let mut out: [f32; LANES] = std::array::from_fn(|i| acc[i] + acc[i + LANES]);
    if whole > wide {
        for i in 0..LANES {
            out[i] = h[wide + i].mul_add(x[wide + i], out[i]);
        }
    }
    (out, whole)
}

/// The portable kernel: eight independent accumulators.
#[inline(always)]
fn lane_sums_portable(h: &[f32], x: &[f32]) -> ([f32; LANES], usize) {
    let mut acc = [0.0f32; LANES];
    let whole = h.len().min(x.len()) / LANES * LANES;
    for (hh, xx) in h[..whole]
        .chunks_exact(LANES)
        .zip(x[..whole].chunks_exact(LANES))
    {
        for i in 0..LANES {
            acc[i] += hh[i] * xx[i];
        }
    }
    (acc, whole)
}

#[inline(always)]
fn dot_real(h: &[f32], x: &[f32]) -> f32 {
    let (a, whole) = lane_sums(h, x);
    let tail: f32 = h[whole..].iter().zip(&x[whole..]).map(|(h, x)| h * x).sum();
    ((a[0] + a[4]) + (a[2] + a[6])) + ((a[1] + a[5]) + (a[3] + a[7])) + tail
}

/// `pairs` holds every tap twice, matching the re/im interleaving of `x`: even lanes then
/// accumulate real parts and odd lanes imaginary parts.
#[inline(always)]
fn dot_complex(pairs: &[f32], x: &[Complex32]) -> Complex32 {
    // SAFETY: Complex32 is #[repr(C)] { re: f32, im: f32 }, so n values are 2n f32s.
    let flat = unsafe { std::slice::from_raw_parts(x.as_ptr().cast::<f32>(), 2 * x.len()) };
    let (a, whole) = lane_sums(pairs, flat);
    let mut tail = Complex32::new(0.0, 0.0);
    for (h, x) in pairs[whole..]
        .chunks_exact(2)
        .zip(flat[whole..].chunks_exact(2))
    {
        tail.re += h[0] * x[0];
        tail.im += h[1] * x[1];
    }
    Complex32::new(
        (a[0] + a[4]) + (a[2] + a[6]) + tail.re,
        (a[1] + a[5]) + (a[3] + a[7]) + tail.im,
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The run-time-chosen kernel against the portable one on seeded random taps and windows
    /// of every length up to 200 (both paths' partial sums, lane by lane). Tolerance: each
    /// lane sums at most 25 products of magnitude ≤ 1; the two differ by f32 rounding only
    /// (≤ 25 half-ulps of the running sum ≈ 25·6·10⁻⁸·|sum|, below 1e-5 here).
    #[test]
    fn fma_kernel_equals_portable_kernel() {
        let h = crate::dsp::test_util::random_real(200, 21);
        let x = crate::dsp::test_util::random_real(200, 22);
        for n in 0..=200 {
            let (want, whole) = lane_sums_portable(&h[..n], &x[..n]);
            let (got, got_whole) = lane_sums(&h[..n], &x[..n]);
            assert_eq!(whole, got_whole);
            for (g, w) in got.iter().zip(&want) {
                assert!((g - w).abs() < 1e-5, "n = {n}: {got:?} vs {want:?}");
            }
        }
    }

    #[test]
    fn dot_matches_plain_sum_for_all_lengths() {
        for n in 1..40 {
            let h: Vec<f32> = (0..n).map(|k| (k as f32 * 0.37).sin()).collect();
            let xr: Vec<f32> = (0..n).map(|k| (k as f32 * 1.1).cos()).collect();
            let xc: Vec<Complex32> = xr.iter().map(|&r| Complex32::new(r, -2.0 * r)).collect();
            let taps = Taps::new(&h);
            // Reference: Σ h[k]·x[N−1−k] in f64; tolerance covers f32 rounding of ≤ 40 terms.
            let want: f64 = (0..n).map(|k| h[k] as f64 * xr[n - 1 - k] as f64).sum();
            assert!((taps.dot(&xr) as f64 - want).abs() < 1e-5, "n={n}");
            let got = taps.dot(&xc);
            assert!((got.re as f64 - want).abs() < 1e-5);
            assert!((got.im as f64 + 2.0 * want).abs() < 2e-5);
        }
    }
}

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

impl Taps {
    /// Taps `h[0..N]` followed by zeros up to a multiple of four taps, so that a complex window
    /// is whole chunks of eight `f32` lanes and [`Taps::dots_strided`] has no tail. The zero taps
    /// lengthen the window (callers size their history by [`Taps::len`]) and add exact zeros.
    pub(crate) fn padded(taps: &[f32]) -> Self {
        let mut h = taps.to_vec();
        h.resize(taps.len().next_multiple_of(LANES / 2), 0.0);
        Taps::new(&h)
    }

    /// Filter outputs at windows `stride` samples apart: `out[j]` is the dot product over
    /// `x[j·stride .. j·stride + len()]` (the outputs of a decimator by `stride` due in one run;
    /// `x` holds `(out.len() − 1)·stride + len()` samples). Complex windows with padded taps go
    /// four at a time through one kernel call (each tap load shared among the four; the CPU
    /// feature test and the call made once per run, not per group), each output's lanes reduced
    /// in the same order whichever group it falls in, so an output is the same bit for bit
    /// whatever run it is computed in; other types fall back to [`Taps::dot`] per window.
    #[inline(always)]
    pub(crate) fn dots_strided<T: Sample>(&self, x: &[T], stride: usize, out: &mut [T]) {
        if out.is_empty() {
            return;
        }
        let n = self.len();
        assert!(
            x.len() >= (out.len() - 1) * stride + n,
            "windows past the end of the input"
        );
        if let (Some(xc), Some(oc)) = (
            same_type_slice::<T, Complex32>(x),
            same_type_slice_mut::<T, Complex32>(out),
        ) {
            if self.reversed_pairs.len() % LANES == 0 {
                complex_dots_run(&self.reversed_pairs, xc, stride, oc);
                return;
            }
        }
        for (j, o) in out.iter_mut().enumerate() {
            *o = self.dot(&x[j * stride..j * stride + n]);
        }
    }
}

impl Taps {
    /// Filter outputs at consecutive windows: `out[i]` = Σ h[k]·x[i + N − 1 − k] over the
    /// window `x[i..i + N]` (`x` holds `out.len() + N − 1` samples). For real samples eight
    /// outputs are formed at once, one broadcast tap and one multiply-add per tap
    /// ([`fir_run_fma`]), each output summed tap by tap in the same order whichever group it
    /// falls in, so an output does not depend on where a run starts. Other sample types fall
    /// back to [`Taps::dot`] per window.
    pub(crate) fn run<T: Sample>(&self, x: &[T], out: &mut [T]) {
        let n = self.len();
        assert!(
            x.len() + 1 >= out.len() + n,
            "windows past the end of the input"
        );
        if let (Some(xr), Some(o)) = (
            same_type_slice::<T, f32>(x),
            same_type_slice_mut::<T, f32>(out),
        ) {
            fir_run(&self.reversed, xr, o);
            return;
        }
        for (i, o) in out.iter_mut().enumerate() {
            *o = self.dot(&x[i..i + n]);
        }
    }
}

/// [`Taps::run`] for real samples: the FMA kernel where the CPU has it, else the portable one.
fn fir_run(h: &[f32], x: &[f32], out: &mut [f32]) {
    #[cfg(target_arch = "x86_64")]
    if fma_available() {
        // SAFETY: the CPU has AVX2 and FMA (checked just above).
        unsafe { fir_run_fma(h, x, out) };
        return;
    }
    fir_run_kernel::<false>(h, x, out);
}

/// Eight outputs per 256-bit accumulator: per tap, one broadcast and one multiply-add over
/// eight consecutive windows; the outputs that do not fill a group of eight go through
/// `fir_run_kernel::<true>`, whose sums are the same multiply-adds in the same order.
/// Callgrind on the am command's audio stage (13 taps at 1/1): a lane-sum dot product per
/// output cost 235 instructions per output.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
unsafe fn fir_run_fma(h: &[f32], x: &[f32], out: &mut [f32]) {
    use std::arch::x86_64::*;
    let groups = out.len() / LANES * LANES;
    assert!(x.len() + 1 >= out.len() + h.len());
    let mut i = 0;
    while i < groups {
        let mut acc = _mm256_setzero_ps();
        for (k, &tap) in h.iter().enumerate() {
            // SAFETY: i + 8 ≤ out.len() and k < h.len(), so i + k + 8 ≤ x.len() (asserted).
            let xs = unsafe { _mm256_loadu_ps(x.as_ptr().add(i + k)) };
            acc = _mm256_fmadd_ps(_mm256_set1_ps(tap), xs, acc);
        }
        // SAFETY: i + 8 ≤ out.len().
        unsafe { _mm256_storeu_ps(out.as_mut_ptr().add(i), acc) };
        i += LANES;
    }
    fir_run_kernel::<true>(h, &x[groups..], &mut out[groups..]);
}

/// One output at a time, summed tap by tap: `FUSED` with one rounding per multiply-add (the
/// tail of [`fir_run_fma`]), otherwise two (the portable path).
#[inline(always)]
fn fir_run_kernel<const FUSED: bool>(h: &[f32], x: &[f32], out: &mut [f32]) {
    for (i, o) in out.iter_mut().enumerate() {
        let mut acc = 0.0f32;
        for (&tap, &v) in h.iter().zip(&x[i..]) {
            acc = if FUSED {
                tap.mul_add(v, acc)
            } else {
                acc + tap * v
            };
        }
        *o = acc;
    }
}

/// [`Taps::dots_strided`]'s complex kernel: fused multiply-adds where the CPU has them (checked
/// at run time, as for [`lane_sums`]), the portable twin otherwise.
#[inline(always)]
fn complex_dots_run(pairs: &[f32], x: &[Complex32], stride: usize, out: &mut [Complex32]) {
    #[cfg(target_arch = "x86_64")]
    if fma_available() {
        // SAFETY: the CPU has AVX2 and FMA (checked just above).
        unsafe { complex_dots_run_fma(pairs, x, stride, out) };
        return;
    }
    let mut j = 0;
    while j + 4 <= out.len() {
        let four = complex_dots_kernel::<4, false>(pairs, &x[j * stride..], stride);
        out[j..j + 4].copy_from_slice(&four);
        j += 4;
    }
    for (j, o) in out.iter_mut().enumerate().skip(j) {
        [*o] = complex_dots_kernel::<1, false>(pairs, &x[j * stride..], stride);
    }
}

/// Groups of four outputs, then one at a time, through [`complex_dots_fma`].
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
unsafe fn complex_dots_run_fma(
    pairs: &[f32],
    x: &[Complex32],
    stride: usize,
    out: &mut [Complex32],
) {
    let mut j = 0;
    while j + 4 <= out.len() {
        // SAFETY: AVX2 and FMA are enabled here; the windows are inside x (the kernel asserts).
        let four = unsafe { complex_dots_fma::<4>(pairs, &x[j * stride..], stride) };
        out[j..j + 4].copy_from_slice(&four);
        j += 4;
    }
    for (j, o) in out.iter_mut().enumerate().skip(j) {
        // SAFETY: as above, for one window.
        [*o] = unsafe { complex_dots_fma::<1>(pairs, &x[j * stride..], stride) };
    }
}

/// The grouped kernel with fused multiply-adds, written with AVX2 intrinsics: the
/// compiler, left to itself, vectorises the portable kernel across the `K` windows (a gather
/// of scattered pairs per tap; callgrind on the am command: no gain over one window at a time)
/// instead of along each window. Same operations in the same order per output as
/// `complex_dots_kernel::<K, true>`, so the same values.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
#[inline]
unsafe fn complex_dots_fma<const K: usize>(
    pairs: &[f32],
    x: &[Complex32],
    stride: usize,
) -> [Complex32; K] {
    use std::arch::x86_64::*;
    let n = pairs.len() / LANES * LANES;
    let last = 2 * (K - 1) * stride + n;
    assert!(2 * x.len() >= last, "windows past the end of the input");
    let flat = x.as_ptr().cast::<f32>();
    let h = pairs.as_ptr();
    let mut acc = [_mm256_setzero_ps(); K];
    let mut c = 0;
    while c < n {
        // SAFETY: c + 8 ≤ n ≤ pairs.len(), and 2·j·stride + c + 8 ≤ last ≤ 2·x.len()
        // (asserted above): every load is inside its slice.
        unsafe {
            let taps = _mm256_loadu_ps(h.add(c));
            for (j, acc) in acc.iter_mut().enumerate() {
                let xs = _mm256_loadu_ps(flat.add(2 * j * stride + c));
                *acc = _mm256_fmadd_ps(taps, xs, *acc);
            }
        }
        c += LANES;
    }
    // A loop rather than `array::from_fn`: its closure would not inherit AVX2 and was
    // called out of line once per output.
    let mut out = [Complex32::default(); K];
    for (o, a) in out.iter_mut().zip(acc) {
        // (a0+a4, a1+a5, a2+a6, a3+a7), then (a0+a4)+(a2+a6) and (a1+a5)+(a3+a7).
        let halves = _mm_add_ps(_mm256_castps256_ps128(a), _mm256_extractf128_ps(a, 1));
        let sum = _mm_add_ps(halves, _mm_movehl_ps(halves, halves));
        let mut lanes = [0.0f32; 4];
        // SAFETY: `lanes` holds four f32s.
        unsafe { _mm_storeu_ps(lanes.as_mut_ptr(), sum) };
        *o = Complex32::new(lanes[0], lanes[1]);
    }
    out
}

/// `K` windows `stride` complex samples apart against `pairs` (every tap twice, a multiple of
/// eight values): per chunk of four taps one load of the taps and one eight-lane multiply-add
/// per window, then each output's lanes summed as `dot_complex` sums them. `FUSED` rounds once
/// per multiply-add (`mul_add`, only where the CPU has FMA), otherwise twice.
#[inline(always)]
fn complex_dots_kernel<const K: usize, const FUSED: bool>(
    pairs: &[f32],
    x: &[Complex32],
    stride: usize,
) -> [Complex32; K] {
    // SAFETY: Complex32 is #[repr(C)] { re: f32, im: f32 }, so n values are 2n f32s.
    let flat = unsafe { std::slice::from_raw_parts(x.as_ptr().cast::<f32>(), 2 * x.len()) };
    let n = pairs.len() / LANES * LANES;
    let rows: [&[f32]; K] = std::array::from_fn(|j| &flat[2 * j * stride..2 * j * stride + n]);
    let mut acc = [[0.0f32; LANES]; K];
    for (c, h) in pairs[..n].chunks_exact(LANES).enumerate() {
        let h: &[f32; LANES] = h.try_into().expect("chunks_exact gives LANES values");
        for (acc, row) in acc.iter_mut().zip(&rows) {
            let xs: &[f32; LANES] = row[c * LANES..(c + 1) * LANES]
                .try_into()
                .expect("rows hold n values");
            for l in 0..LANES {
                acc[l] = if FUSED {
                    h[l].mul_add(xs[l], acc[l])
                } else {
                    acc[l] + h[l] * xs[l]
                };
            }
        }
    }
    std::array::from_fn(|j| {
        let a = acc[j];
        Complex32::new((a[0] + a[4]) + (a[2] + a[6]), (a[1] + a[5]) + (a[3] + a[7]))
    })
}

/// Reinterprets `&[T]` as `&[U]` when T and U are the same type.
#[inline]
pub(crate) fn same_type_slice<T: 'static, U: 'static>(x: &[T]) -> Option<&[U]> {
    if TypeId::of::<T>() == TypeId::of::<U>() {
        // SAFETY: T and U are the same type, so this is the identity reinterpretation.
        Some(unsafe { std::slice::from_raw_parts(x.as_ptr().cast::<U>(), x.len()) })
    } else {
        None
    }
}

/// Reinterprets `&mut [T]` as `&mut [U]` when T and U are the same type.
#[inline]
pub(crate) fn same_type_slice_mut<T: 'static, U: 'static>(x: &mut [T]) -> Option<&mut [U]> {
    if TypeId::of::<T>() == TypeId::of::<U>() {
        // SAFETY: T and U are the same type, so this is the identity reinterpretation.
        Some(unsafe { std::slice::from_raw_parts_mut(x.as_mut_ptr().cast::<U>(), x.len()) })
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
pub(crate) fn fma_available() -> bool {
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
    use crate::dsp::test_util::random_real;

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

    /// The grouped complex kernel: each output of a group of four equals the same output
    /// computed alone (bit for bit: the decimator's chunk invariance rests on it), the
    /// run-time-chosen kernel is within rounding of the portable twin, and both match a plain
    /// f64 sum (tolerance: f32 rounding of ≤ 52 products of size ≤ 1, < 1e-5).
    #[test]
    fn grouped_complex_dots_equal_single_ones_and_the_plain_sum() {
        let x = crate::dsp::test_util::random_complex(400, 31);
        for n in [1, 4, 5, 39, 49, 52] {
            let h = crate::dsp::test_util::random_real(n, n as u64);
            let taps = Taps::padded(&h);
            let span = taps.len();
            for stride in [1, 5, 10] {
                // Seven outputs in one run: a group of four and three single ones.
                let mut seven = [Complex32::default(); 7];
                taps.dots_strided(&x[3..], stride, &mut seven);
                for (j, got) in seven.iter().enumerate() {
                    let mut one = [Complex32::default()];
                    taps.dots_strided(&x[3 + j * stride..], stride, &mut one);
                    assert_eq!(one[0], *got, "n={n} stride={stride} j={j}");
                    let w = &x[3 + j * stride..3 + j * stride + span];
                    let portable =
                        complex_dots_kernel::<1, false>(&taps.reversed_pairs, w, stride)[0];
                    assert!((portable - got).norm() < 1e-5, "{portable} vs {got}");
                    #[cfg(target_arch = "x86_64")]
                    if fma_available() {
                        let fused =
                            complex_dots_kernel::<1, true>(&taps.reversed_pairs, w, stride)[0];
                        assert_eq!(fused, *got, "intrinsics against their scalar twin");
                    }
                    // Σ h[k]·window[span−1−k] in f64.
                    let (re, im) = (0..n).fold((0.0, 0.0), |(re, im), k| {
                        let v = w[span - 1 - k];
                        (
                            re + h[k] as f64 * v.re as f64,
                            im + h[k] as f64 * v.im as f64,
                        )
                    });
                    assert!((got.re as f64 - re).abs() < 1e-5 && (got.im as f64 - im).abs() < 1e-5);
                }
            }
        }
    }

    /// Runs of outputs against the plain sum in f64, for several tap counts and run lengths
    /// (every group-of-eight remainder), and the same output whichever run it is computed in.
    #[test]
    fn runs_of_real_outputs_match_the_plain_sum_and_each_other() {
        for ntaps in [1, 5, 13, 40] {
            let h = random_real(ntaps, 31);
            let taps = Taps::new(&h);
            let x = random_real(200, 32);
            let outputs = x.len() + 1 - ntaps;
            let mut whole = vec![0.0f32; outputs];
            taps.run(&x, &mut whole);
            for (i, got) in whole.iter().enumerate() {
                let want: f64 = (0..ntaps)
                    .map(|k| h[k] as f64 * x[i + ntaps - 1 - k] as f64)
                    .sum();
                // f32 sums of up to 40 products of values below ~3: 1e-5 absolute.
                assert!(
                    (*got as f64 - want).abs() < 1e-5,
                    "{ntaps} taps, output {i}"
                );
            }
            // The portable kernel (used without FMA) agrees to rounding.
            let mut portable = vec![0.0f32; outputs];
            fir_run_kernel::<false>(&taps.reversed, &x, &mut portable);
            for (p, w) in portable.iter().zip(&whole) {
                assert!((p - w).abs() < 1e-5, "{ntaps} taps: {p} vs {w}");
            }
            for start in [1, 3, 8, 9] {
                for len in [1, 7, 8, 17] {
                    let mut part = vec![0.0f32; len];
                    taps.run(&x[start..start + len + ntaps - 1], &mut part);
                    assert_eq!(
                        &part[..],
                        &whole[start..start + len],
                        "{ntaps} {start} {len}"
                    );
                }
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

//! Sample types: complex baseband `Complex32` and real audio `f32`.

use num_complex::Complex32;
use std::ops::{Add, AddAssign, Mul, Sub};

/// A sample a filter can carry: real `f32` or complex `Complex32`, scaled by real `f32` taps.
pub trait Sample:
    Copy
    + Default
    + Send
    + Sync
    + std::fmt::Debug
    + PartialEq
    + 'static
    + Add<Output = Self>
    + AddAssign
    + Sub<Output = Self>
    + Mul<f32, Output = Self>
{
    /// The additive zero.
    const ZERO: Self;
    /// True when every component is finite.
    fn is_finite_sample(&self) -> bool;
}

impl Sample for f32 {
    const ZERO: Self = 0.0;
    #[inline]
    fn is_finite_sample(&self) -> bool {
        self.is_finite()
    }
}

impl Sample for Complex32 {
    const ZERO: Self = Complex32::new(0.0, 0.0);
    #[inline]
    fn is_finite_sample(&self) -> bool {
        // x·0 is ±0 for finite x and NaN otherwise: the same answer as testing each part,
        // without a branch, so loops that test samples vectorise.
        self.re * 0.0 + self.im * 0.0 == 0.0
    }
}

/// `Complex32` values as their interleaved re/im `f32`s.
pub(crate) fn as_floats(x: &[Complex32]) -> &[f32] {
    // SAFETY: Complex32 is #[repr(C)] { re: f32, im: f32 }, so n values are 2n f32s.
    unsafe { std::slice::from_raw_parts(x.as_ptr().cast::<f32>(), 2 * x.len()) }
}

/// `Complex32` values as their interleaved re/im `f32`s, writable.
pub(crate) fn as_floats_mut(x: &mut [Complex32]) -> &mut [f32] {
    // SAFETY: as in `as_floats`; the borrow is exclusive.
    unsafe { std::slice::from_raw_parts_mut(x.as_mut_ptr().cast::<f32>(), 2 * x.len()) }
}

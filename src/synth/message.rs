//! Message (modulating) signals: the common interface and its normalisation.
//!
//! Every message is real, sampled at the rate it was built for, and normalised to a peak of
//! about 1 (exactly 1 for tones), so that a modulation index μ is the peak modulation and an
//! amplitude is the peak of the sideband for a full-scale tone.

/// A real message source at a fixed sample rate.
pub trait MessageSource: Send + std::fmt::Debug {
    /// Writes the next `out.len()` message samples. The sequence does not depend on how it is
    /// split between calls.
    fn fill(&mut self, out: &mut [f64]);

    /// Mean square E\[m²\] of the message (known from its construction or measured on it).
    fn mean_square(&self) -> f64;

    /// The band the message occupies, (lowest, highest) frequency in Hz: below the lowest and
    /// above the highest the content is at least 70 dB down (tones: the tone frequencies).
    fn band_hz(&self) -> (f64, f64);
}

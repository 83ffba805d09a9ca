//! Sample datatypes in SigMF notation and their decoding to `Complex32`.

use crate::{Complex32, Result};

/// A sample datatype: complex or real, component width and byte order.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
#[non_exhaustive]
pub enum SampleFormat {
    /// Complex unsigned 8-bit (offset binary, centre 127.5).
    Cu8,
    /// Complex signed 8-bit.
    Ci8,
    /// Complex signed 16-bit little-endian.
    Ci16Le,
    /// Complex signed 16-bit big-endian.
    Ci16Be,
    /// Complex 32-bit float little-endian.
    Cf32Le,
    /// Complex 32-bit float big-endian.
    Cf32Be,
    /// Real signed 16-bit little-endian.
    Ri16Le,
    /// Real 32-bit float little-endian.
    Rf32Le,
}

impl SampleFormat {
    /// Parses a SigMF datatype string such as `cu8` or `ci16_le`.
    pub fn parse(name: &str) -> Option<Self> {
        let _ = name;
        todo!()
    }
    /// The SigMF name.
    pub fn name(self) -> &'static str {
        todo!()
    }
    /// Bytes per sample of one channel (both components for complex types).
    pub fn bytes_per_sample(self) -> usize {
        todo!()
    }
    /// True for complex types.
    pub fn is_complex(self) -> bool {
        todo!()
    }
    /// Decodes one sample from exactly `bytes_per_sample()` bytes, scaled to about ±1 full scale.
    /// Real types decode to `x + 0j`.
    pub fn decode(self, bytes: &[u8]) -> Complex32 {
        let _ = bytes;
        todo!()
    }
    /// Encodes one sample into `out` (`bytes_per_sample()` long), clipping at full scale.
    pub fn encode(self, sample: Complex32, out: &mut [u8]) {
        let _ = (sample, out);
        todo!()
    }
}

/// Formats a list of supported datatypes for error messages.
pub fn supported_names() -> &'static str {
    "cu8, ci8, ci16_le, ci16_be, cf32_le, cf32_be, ri16_le, rf32_le"
}

#[allow(dead_code)]
fn _unused() -> Result<()> {
    Ok(())
}

//! Sample datatypes in SigMF notation and their decoding to `Complex32`.
//!
//! Scaling conventions (full scale maps to about ±1):
//! - `cu8`: offset binary centred on 127.5, `x = (b − 127.5) / 127.5`, so byte 0 → −1.0 and
//!   byte 255 → +1.0 exactly; zero is not representable and encodes to byte 128 (+0.0039).
//!   Common practice for 8-bit unsigned IQ, no source.
//! - `ci8`: `x = v / 128`; `ci16`: `x = v / 32768`; `ci32`: `x = v / 2³¹` (two's complement:
//!   the most negative code is exactly −1.0, the most positive is 1 − 1 LSB).
//! - float types are taken as they are.
//!
//! Encoding clips integer types at full scale and rounds to the nearest code; float types are
//! written unchanged (a float has no full scale to clip at). Non-finite values encode as zero.

use crate::sample::as_floats_mut;
use crate::Complex32;

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
    /// Complex signed 32-bit little-endian (decoded to f32, so only 24 bits of precision).
    Ci32Le,
    /// Complex 64-bit float little-endian (narrowed to f32; values beyond the f32 range become
    /// non-finite and are then replaced with zero by the sources).
    Cf64Le,
}

/// `(b − 127.5) / 127.5` for every byte, built at compile time for the `cu8` hot path.
const I8_SCALE: f32 = 1.0 / 128.0;
const I16_SCALE: f32 = 1.0 / 32768.0;
const I32_SCALE: f32 = 1.0 / 2_147_483_648.0;

impl SampleFormat {
    /// Every supported datatype, in the order of [`supported_names`].
    pub const ALL: [SampleFormat; 10] = [
        SampleFormat::Cu8,
        SampleFormat::Ci8,
        SampleFormat::Ci16Le,
        SampleFormat::Ci16Be,
        SampleFormat::Cf32Le,
        SampleFormat::Cf32Be,
        SampleFormat::Ri16Le,
        SampleFormat::Rf32Le,
        SampleFormat::Ci32Le,
        SampleFormat::Cf64Le,
    ];

    /// Parses a SigMF datatype string such as `cu8` or `ci16_le`.
    pub fn parse(name: &str) -> Option<Self> {
        Self::ALL.into_iter().find(|f| f.name() == name)
    }

    /// The SigMF name.
    pub fn name(self) -> &'static str {
        match self {
            SampleFormat::Cu8 => "cu8",
            SampleFormat::Ci8 => "ci8",
            SampleFormat::Ci16Le => "ci16_le",
            SampleFormat::Ci16Be => "ci16_be",
            SampleFormat::Cf32Le => "cf32_le",
            SampleFormat::Cf32Be => "cf32_be",
            SampleFormat::Ri16Le => "ri16_le",
            SampleFormat::Rf32Le => "rf32_le",
            SampleFormat::Ci32Le => "ci32_le",
            SampleFormat::Cf64Le => "cf64_le",
        }
    }

    /// Bytes of one component (I, Q or the real value).
    pub fn bytes_per_component(self) -> usize {
        match self {
            SampleFormat::Cu8 | SampleFormat::Ci8 => 1,
            SampleFormat::Ci16Le | SampleFormat::Ci16Be | SampleFormat::Ri16Le => 2,
            SampleFormat::Cf32Le
            | SampleFormat::Cf32Be
            | SampleFormat::Rf32Le
            | SampleFormat::Ci32Le => 4,
            SampleFormat::Cf64Le => 8,
        }
    }

    /// Bytes per sample of one channel (both components for complex types).
    pub fn bytes_per_sample(self) -> usize {
        let components = if self.is_complex() { 2 } else { 1 };
        components * self.bytes_per_component()
    }

    /// True for complex types.
    pub fn is_complex(self) -> bool {
        !matches!(self, SampleFormat::Ri16Le | SampleFormat::Rf32Le)
    }

    /// True for floating-point types, the only ones that can hold non-finite values.
    pub fn is_float(self) -> bool {
        matches!(
            self,
            SampleFormat::Cf32Le
                | SampleFormat::Cf32Be
                | SampleFormat::Rf32Le
                | SampleFormat::Cf64Le
        )
    }

    /// Decodes one sample from exactly `bytes_per_sample()` bytes, scaled to about ±1 full scale.
    /// Real types decode to `x + 0j`. Missing bytes read as zero.
    pub fn decode(self, bytes: &[u8]) -> Complex32 {
        let mut out = [Complex32::new(0.0, 0.0)];
        let mut padded = [0u8; 16];
        let n = bytes.len().min(self.bytes_per_sample());
        padded[..n].copy_from_slice(&bytes[..n]);
        self.decode_slice(&padded[..self.bytes_per_sample()], &mut out);
        out[0]
    }

    /// Decodes as many whole samples as both `bytes` and `out` hold; returns how many.
    ///
    /// This is the hot path: one tight loop per datatype (8- and 16-bit integers as one run of
    /// components that vectorises).
    pub fn decode_slice(self, bytes: &[u8], out: &mut [Complex32]) -> usize {
        match self {
            SampleFormat::Cu8 => flat::<1>(bytes, out, |c| (c[0] as f32 - 127.5) / 127.5),
            SampleFormat::Ci8 => flat::<1>(bytes, out, |c| c[0] as i8 as f32 * I8_SCALE),
            SampleFormat::Ci16Le => {
                flat::<2>(bytes, out, |c| i16::from_le_bytes(c) as f32 * I16_SCALE)
            }
            SampleFormat::Ci16Be => {
                complex::<2>(bytes, out, |c| i16::from_be_bytes(c) as f32 * I16_SCALE)
            }
            SampleFormat::Cf32Le => complex::<4>(bytes, out, f32::from_le_bytes),
            SampleFormat::Cf32Be => complex::<4>(bytes, out, f32::from_be_bytes),
            SampleFormat::Ri16Le => {
                real::<2>(bytes, out, |c| i16::from_le_bytes(c) as f32 * I16_SCALE)
            }
            SampleFormat::Rf32Le => real::<4>(bytes, out, f32::from_le_bytes),
            SampleFormat::Ci32Le => {
                complex::<4>(bytes, out, |c| i32::from_le_bytes(c) as f32 * I32_SCALE)
            }
            SampleFormat::Cf64Le => complex::<8>(bytes, out, |c| f64::from_le_bytes(c) as f32),
        }
    }

    /// Encodes one sample into `out` (`bytes_per_sample()` long): integer types clip at full
    /// scale and round to nearest; float types are exact; non-finite values encode as zero.
    /// Real types keep only the real part. A short `out` receives only the bytes that fit.
    pub fn encode(self, sample: Complex32, out: &mut [u8]) {
        let mut bytes = [0u8; 16];
        let width = self.bytes_per_component();
        self.encode_component(finite_or_zero(sample.re), &mut bytes[..width]);
        if self.is_complex() {
            self.encode_component(finite_or_zero(sample.im), &mut bytes[width..2 * width]);
        }
        let n = out.len().min(self.bytes_per_sample());
        out[..n].copy_from_slice(&bytes[..n]);
    }

    fn encode_component(self, x: f32, out: &mut [u8]) {
        match self {
            SampleFormat::Cu8 => out[0] = (x * 127.5 + 127.5).round().clamp(0.0, 255.0) as u8,
            SampleFormat::Ci8 => out[0] = (x * 128.0).round().clamp(-128.0, 127.0) as i8 as u8,
            SampleFormat::Ci16Le | SampleFormat::Ri16Le => {
                out.copy_from_slice(&to_i16(x).to_le_bytes())
            }
            SampleFormat::Ci16Be => out.copy_from_slice(&to_i16(x).to_be_bytes()),
            SampleFormat::Cf32Le | SampleFormat::Rf32Le => out.copy_from_slice(&x.to_le_bytes()),
            SampleFormat::Cf32Be => out.copy_from_slice(&x.to_be_bytes()),
            SampleFormat::Ci32Le => out.copy_from_slice(&to_i32(x).to_le_bytes()),
            SampleFormat::Cf64Le => out.copy_from_slice(&(x as f64).to_le_bytes()),
        }
    }
}

impl std::fmt::Display for SampleFormat {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

/// Formats a list of supported datatypes for error messages.
pub fn supported_names() -> &'static str {
    "cu8, ci8, ci16_le, ci16_be, cf32_le, cf32_be, ri16_le, rf32_le, ci32_le, cf64_le"
}

/// Replaces every non-finite sample with zero; returns how many were replaced.
pub fn replace_non_finite(samples: &mut [Complex32]) -> u64 {
    let mut replaced = 0;
    for s in samples.iter_mut() {
        if !(s.re.is_finite() && s.im.is_finite()) {
            *s = Complex32::new(0.0, 0.0);
            replaced += 1;
        }
    }
    replaced
}

fn finite_or_zero(x: f32) -> f32 {
    if x.is_finite() {
        x
    } else {
        0.0
    }
}

fn to_i16(x: f32) -> i16 {
    (x * 32768.0).round().clamp(-32768.0, 32767.0) as i16
}

fn to_i32(x: f32) -> i32 {
    // In f64 so that the clip bound 2³¹ − 1 is exact.
    (x as f64 * 2_147_483_648.0)
        .round()
        .clamp(i32::MIN as f64, i32::MAX as f64) as i32
}

/// Decodes interleaved I/Q pairs of `W`-byte components as one run of components, written
/// straight into the samples' `f32`s: a loop the compiler vectorises (AVX2 where the CPU has
/// it, chosen at run time). Callgrind on the am command's reader: the per-pair loop with a
/// 256-entry table cost 7.5 instructions per cu8 sample.
#[inline(always)]
fn flat<const W: usize>(
    bytes: &[u8],
    out: &mut [Complex32],
    component: impl Fn([u8; W]) -> f32 + Copy,
) -> usize {
    #[inline(always)]
    fn kernel<const W: usize>(bytes: &[u8], out: &mut [f32], component: impl Fn([u8; W]) -> f32) {
        for (o, c) in out.iter_mut().zip(bytes.chunks_exact(W)) {
            *o = component(<[u8; W]>::try_from(c).unwrap_or([0; W]));
        }
    }
    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    unsafe fn kernel_avx2<const W: usize>(
        bytes: &[u8],
        out: &mut [f32],
        component: impl Fn([u8; W]) -> f32,
    ) {
        kernel(bytes, out, component)
    }
    let n = out.len().min(bytes.len() / (2 * W));
    let (bytes, out) = (&bytes[..2 * W * n], as_floats_mut(&mut out[..n]));
    #[cfg(target_arch = "x86_64")]
    if std::arch::is_x86_feature_detected!("avx2") {
        // SAFETY: the CPU has AVX2 (checked just above).
        unsafe { kernel_avx2(bytes, out, component) };
        return n;
    }
    kernel(bytes, out, component);
    n
}

/// Decodes interleaved I/Q pairs of `W`-byte components.
#[inline(always)]
fn complex<const W: usize>(
    bytes: &[u8],
    out: &mut [Complex32],
    component: impl Fn([u8; W]) -> f32,
) -> usize {
    let n = out.len().min(bytes.len() / (2 * W));
    for (o, pair) in out[..n].iter_mut().zip(bytes.chunks_exact(2 * W)) {
        let (i, q) = pair.split_at(W);
        let i = <[u8; W]>::try_from(i).unwrap_or([0; W]);
        let q = <[u8; W]>::try_from(q).unwrap_or([0; W]);
        *o = Complex32::new(component(i), component(q));
    }
    n
}

/// Decodes real `W`-byte values to `x + 0j`.
#[inline(always)]
fn real<const W: usize>(
    bytes: &[u8],
    out: &mut [Complex32],
    component: impl Fn([u8; W]) -> f32,
) -> usize {
    let n = out.len().min(bytes.len() / W);
    for (o, value) in out[..n].iter_mut().zip(bytes.chunks_exact(W)) {
        let value = <[u8; W]>::try_from(value).unwrap_or([0; W]);
        *o = Complex32::new(component(value), 0.0);
    }
    n
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{rngs::StdRng, RngExt, SeedableRng};

    fn c(re: f32, im: f32) -> Complex32 {
        Complex32::new(re, im)
    }

    #[test]
    fn names_parse_back_and_match_the_supported_list() {
        for f in SampleFormat::ALL {
            assert_eq!(SampleFormat::parse(f.name()), Some(f));
        }
        let listed: Vec<&str> = supported_names().split(", ").collect();
        let all: Vec<&str> = SampleFormat::ALL.iter().map(|f| f.name()).collect();
        assert_eq!(listed, all);
        assert_eq!(SampleFormat::parse("ci32_be"), None);
        assert_eq!(SampleFormat::parse("CU8"), None);
    }

    #[test]
    fn sizes_follow_the_sigmf_grammar() {
        // SigMF: the width is per component, complex types hold I then Q.
        let expected = [2, 2, 4, 4, 8, 8, 2, 4, 8, 16];
        for (f, bytes) in SampleFormat::ALL.into_iter().zip(expected) {
            assert_eq!(f.bytes_per_sample(), bytes, "{f}");
        }
    }

    #[test]
    fn known_codes_decode_to_known_values() {
        use SampleFormat::*;
        let cases: &[(SampleFormat, &[u8], Complex32)] = &[
            (Cu8, &[0, 255], c(-1.0, 1.0)),
            (Cu8, &[128, 127], c(0.5 / 127.5, -0.5 / 127.5)),
            (Ci8, &[0x80, 0x40], c(-1.0, 0.5)),
            (Ci16Le, &[0x00, 0x80, 0x00, 0x40], c(-1.0, 0.5)),
            (Ci16Be, &[0x80, 0x00, 0xC0, 0x00], c(-1.0, -0.5)),
            (Cf32Le, &[0, 0, 0x80, 0x3F, 0, 0, 0, 0xC0], c(1.0, -2.0)),
            (Cf32Be, &[0x3F, 0x80, 0, 0, 0xC0, 0, 0, 0], c(1.0, -2.0)),
            (Ri16Le, &[0xFF, 0x7F], c(32767.0 / 32768.0, 0.0)),
            (Rf32Le, &[0, 0, 0, 0x3F], c(0.5, 0.0)),
            (Ci32Le, &[0, 0, 0, 0x80, 0, 0, 0, 0x40], c(-1.0, 0.5)),
            (
                Cf64Le,
                &[0, 0, 0, 0, 0, 0, 0xF0, 0x3F, 0, 0, 0, 0, 0, 0, 0xE0, 0xBF],
                c(1.0, -0.5),
            ),
        ];
        for &(f, bytes, want) in cases {
            assert_eq!(f.decode(bytes), want, "{f} {bytes:?}");
        }
    }

    #[test]
    fn encode_clips_rounds_and_zeroes_non_finite() {
        use SampleFormat::*;
        let mut b = [0u8; 4];
        Cu8.encode(c(2.0, -2.0), &mut b);
        assert_eq!(&b[..2], &[255, 0]);
        Cu8.encode(c(0.0, f32::NAN), &mut b);
        assert_eq!(&b[..2], &[128, 128]);
        Ci8.encode(c(1.0, -1.5), &mut b);
        assert_eq!(&b[..2], &[127, 0x80]);
        Ci16Le.encode(c(1.0, -1.0), &mut b);
        assert_eq!(b, [0xFF, 0x7F, 0x00, 0x80]);
        // 0.4 LSB rounds down, 0.6 LSB rounds up.
        Ci16Le.encode(c(0.4 / 32768.0, 0.6 / 32768.0), &mut b);
        assert_eq!(b, [0, 0, 1, 0]);
        Rf32Le.encode(c(f32::INFINITY, 3.0), &mut b);
        assert_eq!(b, 0.0f32.to_le_bytes());
    }

    #[test]
    fn every_integer_code_survives_decode_then_encode() {
        for f in SampleFormat::ALL
            .into_iter()
            .filter(|f| f.bytes_per_component() <= 2)
        {
            let codes = 1usize << (8 * f.bytes_per_component());
            for code in 0..codes {
                let mut bytes = [0u8; 4];
                let le = (code as u32).to_le_bytes();
                let w = f.bytes_per_component();
                bytes[..w].copy_from_slice(&le[..w]);
                bytes[w..2 * w].copy_from_slice(&le[..w]);
                let mut back = [0u8; 4];
                f.encode(f.decode(&bytes), &mut back);
                let n = f.bytes_per_sample();
                assert_eq!(&back[..n], &bytes[..n], "{f} code {code}");
            }
        }
    }

    /// Every cu8, ci8 and ci16 code through the vectorised slice decoder against the scaling
    /// written out in f64 (exact here: the codes and scales are exact in f32, and an f64
    /// quotient rounded to f32 is the correctly rounded f32 quotient), in a long run so the
    /// vector loop, not only its tail, is checked.
    #[test]
    fn vectorised_integer_decoding_matches_the_scaling() {
        use SampleFormat::*;
        type Scaling = fn(usize) -> f64;
        let cases: [(SampleFormat, usize, Scaling); 3] = [
            (Cu8, 256, |b| (b as f64 - 127.5) / 127.5),
            (Ci8, 256, |b| b as u8 as i8 as f64 / 128.0),
            (Ci16Le, 65536, |b| b as u16 as i16 as f64 / 32768.0),
        ];
        for (f, codes, want) in cases {
            let w = f.bytes_per_component();
            let bytes: Vec<u8> = (0..codes)
                .flat_map(|code| [code, codes - 1 - code])
                .flat_map(|code| (code as u32).to_le_bytes().into_iter().take(w))
                .collect();
            let mut out = vec![c(0.0, 0.0); codes];
            assert_eq!(f.decode_slice(&bytes, &mut out), codes);
            for (code, got) in out.iter().enumerate() {
                assert_eq!(got.re, want(code) as f32, "{f} code {code}");
                assert_eq!(got.im, want(codes - 1 - code) as f32, "{f} code {code}");
            }
        }
    }

    #[test]
    fn slice_decoding_equals_one_by_one_decoding() {
        let mut rng = StdRng::seed_from_u64(7);
        let bytes: Vec<u8> = (0..4096).map(|_| rng.random()).collect();
        for f in SampleFormat::ALL {
            let n = bytes.len() / f.bytes_per_sample();
            let mut fast = vec![c(0.0, 0.0); n + 3];
            assert_eq!(f.decode_slice(&bytes, &mut fast), n);
            for (i, got) in fast[..n].iter().enumerate() {
                let one = f.decode(&bytes[i * f.bytes_per_sample()..]);
                // Bit-exact, NaN included: both paths run the same component decoder.
                assert_eq!(got.re.to_bits(), one.re.to_bits(), "{f} sample {i}");
                assert_eq!(got.im.to_bits(), one.im.to_bits(), "{f} sample {i}");
            }
        }
    }

    #[test]
    fn non_finite_samples_are_counted_and_zeroed() {
        let mut s = [
            c(1.0, 2.0),
            c(f32::NAN, 0.0),
            c(0.0, f32::NEG_INFINITY),
            c(3.0, 4.0),
        ];
        assert_eq!(replace_non_finite(&mut s), 2);
        assert_eq!(s, [c(1.0, 2.0), c(0.0, 0.0), c(0.0, 0.0), c(3.0, 4.0)]);
    }
}

//! Every SigMF sample datatype's decoder on any bytes: the first byte picks the datatype; the
//! decoded samples must be finite after the source's guard, and `decode_slice` must never
//! write more samples than whole samples in the bytes.
#![no_main]
use amrx::io::format::replace_non_finite;
use amrx::io::SampleFormat;
use amrx::Complex32;
use libfuzzer_sys::fuzz_target;

const NAMES: &[&str] = &[
    "ci8", "cu8", "ci16_le", "ci16_be", "cu16_le", "cu16_be", "ci32_le", "ci32_be", "cu32_le",
    "cu32_be", "cf32_le", "cf32_be", "cf64_le", "cf64_be", "ri8", "ru8", "ri16_le", "ri16_be",
    "ru16_le", "ru16_be", "ri32_le", "ri32_be", "ru32_le", "ru32_be", "rf32_le", "rf32_be",
    "rf64_le", "rf64_be",
];

fuzz_target!(|data: &[u8]| {
    let Some((&pick, bytes)) = data.split_first() else {
        return;
    };
    let Some(format) = SampleFormat::parse(NAMES[usize::from(pick) % NAMES.len()]) else {
        return;
    };
    let width = format.bytes_per_sample();
    let mut out = vec![Complex32::default(); bytes.len() / width + 1];
    let n = format.decode_slice(bytes, &mut out);
    assert!(n <= bytes.len() / width);
    replace_non_finite(&mut out[..n]);
    assert!(out[..n].iter().all(|z| z.re.is_finite() && z.im.is_finite()));
    for (chunk, z) in bytes.chunks_exact(width).zip(&out[..n]) {
        let one = format.decode(chunk);
        if one.re.is_finite() && one.im.is_finite() {
            assert_eq!(one, *z, "decode and decode_slice agree");
        }
    }
});

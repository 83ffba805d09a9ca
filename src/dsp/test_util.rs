//! Helpers shared by the unit tests of every layer (dsp, sync, channel, synth): seeded
//! signals, probe tones, line amplitudes and chunked runs with limited output room.

use crate::block::Block;
use crate::Complex32;
use rand::{rngs::StdRng, RngExt, SeedableRng};

/// Seeded complex noise, each component uniform in [−1, 1).
pub(crate) fn random_complex(n: usize, seed: u64) -> Vec<Complex32> {
    let mut rng = StdRng::seed_from_u64(seed);
    (0..n)
        .map(|_| Complex32::new(rng.random_range(-1.0..1.0), rng.random_range(-1.0..1.0)))
        .collect()
}

/// Seeded real noise, uniform in [−1, 1).
pub(crate) fn random_real(n: usize, seed: u64) -> Vec<f32> {
    let mut rng = StdRng::seed_from_u64(seed);
    (0..n).map(|_| rng.random_range(-1.0..1.0)).collect()
}

/// Runs `block` over `input` in chunks of `chunk` inputs (0 = random sizes in 1..=2000), with
/// an output buffer of random size in 1..=max_output_len+1 each call (so the output-limited
/// paths run too).
pub(crate) fn run_chunked<B: Block>(
    block: &mut B,
    input: &[B::Input],
    chunk: usize,
    seed: u64,
) -> Vec<B::Output> {
    let mut rng = StdRng::seed_from_u64(seed);
    let mut out = Vec::new();
    let mut scratch = vec![B::Output::default(); block.max_output_len(input.len()) + 2];
    let mut pos = 0;
    while pos < input.len() {
        let size = if chunk == 0 {
            rng.random_range(1..=2000)
        } else {
            chunk
        };
        let end = (pos + size).min(input.len());
        let room = rng.random_range(1..=block.max_output_len(end - pos) + 1);
        let (c, p) = block.process(&input[pos..end], &mut scratch[..room]);
        out.extend_from_slice(&scratch[..p]);
        pos += c;
    }
    // Drain any outputs still pending after the last input.
    loop {
        let (_, p) = block.process(&[], &mut scratch[..]);
        if p == 0 {
            break;
        }
        out.extend_from_slice(&scratch[..p]);
    }
    out
}

/// Checks that the block gives identical output (bit-exact) for chunk sizes 1, 7, 1024 and
/// random, against one call on the whole input. Bit-exact because every output sample is
/// computed from the same window in the same summation order whatever the chunking.
pub(crate) fn assert_chunk_invariant<B>(make: impl Fn() -> B, input: &[B::Input])
where
    B: Block,
    B::Output: PartialEq + std::fmt::Debug,
{
    let whole = crate::block::process_to_vec(&mut make(), input);
    assert!(!whole.is_empty());
    for (i, chunk) in [1usize, 7, 1024, 0, 0].into_iter().enumerate() {
        let got = run_chunked(&mut make(), input, chunk, 100 + i as u64);
        assert_eq!(got.len(), whole.len(), "chunk {chunk}: length");
        assert!(got == whole, "chunk {chunk}: output differs");
    }
}

/// Amplitudes of the lines at f_c + f, f_c − f and f_c in `z` (DFT projections; exact for
/// whole numbers of cycles).
pub(crate) fn line_amplitudes(z: &[Complex32], f_c: f64, f: f64, fs: f64) -> (f64, f64, f64) {
    let project = |freq: f64| {
        let sum: num_complex::Complex64 = z
            .iter()
            .enumerate()
            .map(|(n, v)| {
                num_complex::Complex64::new(f64::from(v.re), f64::from(v.im))
                    * num_complex::Complex64::from_polar(
                        1.0,
                        -std::f64::consts::TAU * freq * n as f64 / fs,
                    )
            })
            .sum();
        sum.norm() / z.len() as f64
    };
    (project(f_c + f), project(f_c - f), project(f_c))
}

/// A cosine message of `len` samples.
pub(crate) fn cosine(f: f64, fs: f64, len: usize) -> Vec<f32> {
    (0..len)
        .map(|n| (std::f64::consts::TAU * f * n as f64 / fs).cos() as f32)
        .collect()
}

/// A real delay-probe tone: cos(2πfn) at `f` cycles per sample, `len` samples.
pub(crate) fn real_tone(len: usize, f: f64) -> Vec<f32> {
    cosine(f, 1.0, len)
}

/// A complex delay-probe tone: e^{j2πfn} at `f` cycles per sample, `len` samples.
pub(crate) fn complex_tone(len: usize, f: f64) -> Vec<Complex32> {
    (0..len)
        .map(|n| {
            let (s, c) = (std::f64::consts::TAU * (f * n as f64).fract()).sin_cos();
            Complex32::new(c as f32, s as f32)
        })
        .collect()
}

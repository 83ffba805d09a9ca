//! Helpers shared by the DSP unit tests: seeded signals and chunked runs.

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

//! The channel simulator: noise, frequency errors, phase noise, impulses, interference,
//! HF multipath fading and cheap-receiver impairments, each a [`Block`](crate::block::Block)
//! on complex baseband, seeded and chunk-invariant. It builds on [`crate::dsp`] only; the
//! scene generator and the interferer ([`crate::synth`]) sit above it.

pub mod awgn;
pub mod frequency_offset;
pub mod impair;
pub mod impulse_noise;
pub mod iq_imbalance;
pub mod phase_noise;
pub mod quantizer;
pub mod snr;
pub mod tap_gain;
pub mod watterson;

pub use awgn::Awgn;
pub use frequency_offset::FrequencyOffset;
pub use impair::{quantize_cu8, IqImpairment};
pub use impulse_noise::ImpulseNoise;
pub use iq_imbalance::IqImbalance;
pub use phase_noise::PhaseNoise;
pub use quantizer::Cu8Quantizer;
pub use tap_gain::TapGain;
pub use watterson::{HfCondition, PathSpec, WattersonChannel};

/// Test helper: chunk invariance of a channel block (bit-exact: every block's per-sample
/// recursion runs in the same order however the input is split).
#[cfg(test)]
pub(crate) fn assert_chunk_invariant<B>(make: impl Fn() -> B, input: &[crate::Complex32])
where
    B: crate::block::Block<Input = crate::Complex32, Output = crate::Complex32>,
{
    use crate::block::process_in_chunks;
    use rand::{rngs::StdRng, RngExt, SeedableRng};
    let whole = process_in_chunks(&mut make(), input, &[input.len()]);
    let mut rng = StdRng::seed_from_u64(99);
    let random: Vec<usize> = (0..64).map(|_| rng.random_range(1..3000)).collect();
    for sizes in [vec![1usize], vec![7, 1024], random] {
        assert!(
            process_in_chunks(&mut make(), input, &sizes) == whole,
            "chunking {:?}",
            &sizes[..2.min(sizes.len())]
        );
    }
}

//! The block contract every DSP stage follows, and a chain that composes two blocks.
//!
//! A block is a stateful `&mut self` processor: it reads an input slice and writes into a
//! caller-provided output slice, returning how much it consumed and produced. All state and
//! scratch is built in the constructor, so `process` never allocates. A block's output never
//! depends on how its input was split into chunks.

pub mod check;

/// Input samples a block or receiver works through in one internal step. Every internal
/// buffer is sized from it, so one number sets the working-set size everywhere.
pub const PIECE: usize = 8192;

/// A streaming DSP block.
///
/// The contract, checked for every block by [`check::check_block`]:
/// - `process` consumes as much input as fits and returns `(consumed, produced)`; with an
///   output of `max_output_len(input.len())` it consumes everything;
/// - the output never depends on how the input was split into calls;
/// - `rate_ratio` outputs come out per input on average, and the response to an input at time
///   t appears `delay()` input samples later;
/// - [`Block::flush`] at the end of a stream pushes out the tail still held in the filters.
pub trait Block {
    /// Input sample type.
    type Input: Copy + Default;
    /// Output sample type.
    type Output: Copy + Default;

    /// Processes as much of `input` as fits into `output` and returns `(consumed, produced)`.
    ///
    /// If `output.len() >= self.max_output_len(input.len())` the whole input is consumed.
    fn process(&mut self, input: &[Self::Input], output: &mut [Self::Output]) -> (usize, usize);

    /// The largest number of outputs that `input_len` inputs can produce, from any state.
    fn max_output_len(&self, input_len: usize) -> usize;

    /// Outputs per input over a long run (1 for a filter, 1/M for a decimator by M, L/M for a
    /// resampler, twice the audio/IQ rate ratio for interleaved stereo).
    fn rate_ratio(&self) -> f64;

    /// Group delay from input to output, in input samples.
    fn delay(&self) -> f64;

    /// Returns the block to its freshly constructed state.
    fn reset(&mut self);

    /// Inputs that [`Block::flush`] feeds: enough zeros to bring the last input's response
    /// out through the delay.
    fn flush_len(&self) -> usize {
        self.delay().max(0.0).ceil() as usize
    }

    /// Room [`Block::flush`] needs in its output.
    fn flush_output_len(&self) -> usize {
        pieces_bound(self.flush_len(), FLUSH_PIECE, |n| self.max_output_len(n))
    }

    /// Ends the stream: feeds [`Block::flush_len`] zero inputs and writes what comes out, the
    /// delayed tail of the real input. `output` needs [`Block::flush_output_len`] room.
    /// Returns the outputs written; the block should be reset before it is used again.
    fn flush(&mut self, output: &mut [Self::Output]) -> usize {
        feed_zeros(self, self.flush_len(), output)
    }
}

/// A block that works through its input in pieces of at most [`PieceWise::piece_len`] inputs,
/// each run through every internal stage before the next: its [`Block::process`] is
/// [`PieceWise::process_pieces`].
pub trait PieceWise {
    /// Input sample type.
    type In: Copy;
    /// Output sample type.
    type Out: Copy;
    /// The largest piece.
    fn piece_len(&self) -> usize {
        PIECE
    }

    /// Most outputs the next piece of `n ≤ piece_len()` inputs can give, from the current state.
    fn piece_output_len(&self, n: usize) -> usize;

    /// Runs one piece through every stage; returns the outputs written.
    fn process_piece(&mut self, input: &[Self::In], output: &mut [Self::Out]) -> usize;

    /// As many whole pieces as the output has room for; returns `(consumed, produced)`.
    fn process_pieces(&mut self, input: &[Self::In], output: &mut [Self::Out]) -> (usize, usize) {
        let mut consumed = 0;
        let mut produced = 0;
        while consumed < input.len() {
            let n = self.piece_len().min(input.len() - consumed);
            if self.piece_output_len(n) > output.len() - produced {
                break;
            }
            let piece = &input[consumed..consumed + n];
            produced += self.process_piece(piece, &mut output[produced..]);
            consumed += n;
        }
        (consumed, produced)
    }
}

/// Feeds `count` zero inputs to `block`, 256 per call, writing into `output`;
/// returns the outputs written. The body of the default [`Block::flush`], for blocks that
/// do something of their own at the end of a stream and then flush as usual.
pub fn feed_zeros<B: Block + ?Sized>(
    block: &mut B,
    count: usize,
    output: &mut [B::Output],
) -> usize {
    let zeros = [B::Input::default(); FLUSH_PIECE];
    let mut left = count;
    let mut produced = 0;
    while left > 0 {
        let n = left.min(FLUSH_PIECE);
        let (c, p) = block.process(&zeros[..n], &mut output[produced..]);
        produced += p;
        left -= c;
        if c == 0 {
            break;
        }
    }
    produced
}

/// Zeros fed per call by [`Block::flush`].
pub(crate) const FLUSH_PIECE: usize = 256;

/// A block that maps each input sample to exactly one output sample: write `next` and get
/// [`Block`] for free (rate 1, the slice loop, the output bound).
pub trait SampleBlock {
    /// Input sample type.
    type In: Copy + Default;
    /// Output sample type.
    type Out: Copy + Default;

    /// Processes one sample.
    fn next(&mut self, x: Self::In) -> Self::Out;

    /// Group delay in samples (0 for memoryless and loop blocks whose delay is not a filter's).
    fn sample_delay(&self) -> f64;

    /// Returns the block to its freshly constructed state.
    fn reset_state(&mut self);
}

impl<S: SampleBlock> Block for S {
    type Input = S::In;
    type Output = S::Out;

    #[inline]
    fn process(&mut self, input: &[S::In], output: &mut [S::Out]) -> (usize, usize) {
        let n = input.len().min(output.len());
        for (y, &x) in output[..n].iter_mut().zip(&input[..n]) {
            *y = self.next(x);
        }
        (n, n)
    }

    fn max_output_len(&self, input_len: usize) -> usize {
        input_len
    }

    fn rate_ratio(&self) -> f64 {
        1.0
    }

    fn delay(&self) -> f64 {
        self.sample_delay()
    }

    fn reset(&mut self) {
        self.reset_state();
    }
}

/// Runs `block` over all of `input` and returns the output in a new vector.
///
/// Allocates: a convenience for tests and one-shot use, not for the real-time path.
pub fn process_to_vec<B: Block + ?Sized>(block: &mut B, input: &[B::Input]) -> Vec<B::Output> {
    let mut out = vec![B::Output::default(); block.max_output_len(input.len())];
    let mut consumed = 0;
    let mut produced = 0;
    while consumed < input.len() {
        if produced == out.len() {
            out.resize(
                out.len() + block.max_output_len(input.len() - consumed) + 1,
                B::Output::default(),
            );
        }
        let (c, p) = block.process(&input[consumed..], &mut out[produced..]);
        consumed += c;
        produced += p;
        if c == 0 && p == 0 {
            break;
        }
    }
    out.truncate(produced);
    out
}

/// The output bound of a block that works through its input in pieces of at most `chunk`:
/// the sum of the bounds of the pieces, which for rate-changing stages exceeds the bound of one
/// piece of the whole length (each piece may round up).
pub fn pieces_bound(input_len: usize, chunk: usize, piece_bound: impl Fn(usize) -> usize) -> usize {
    let chunk = chunk.max(1);
    let whole = input_len / chunk;
    let rest = input_len % chunk;
    whole * piece_bound(chunk) + if rest > 0 { piece_bound(rest) } else { 0 }
}

/// Two blocks in series inside one thread, joined by an internal buffer built at construction.
#[derive(Debug, Clone)]
pub struct Chain<A: Block, B: Block<Input = A::Output>> {
    first: A,
    second: B,
    middle: Vec<A::Output>,
    chunk: usize,
}

impl<A: Block, B: Block<Input = A::Output>> Chain<A, B> {
    /// Joins `first` and `second`, processing at most `chunk` inputs at a time internally.
    ///
    /// ```
    /// use amrx::block::{Block, Chain, process_to_vec};
    /// use amrx::dsp::Gain;
    /// let mut chain = Chain::new(Gain::new(2.0), Gain::new(3.0), 256);
    /// assert_eq!(process_to_vec(&mut chain, &[1.0f32, 2.0]), vec![6.0, 12.0]);
    /// ```
    pub fn new(first: A, second: B, chunk: usize) -> Self {
        let chunk = chunk.max(1);
        let middle = vec![A::Output::default(); first.max_output_len(chunk)];
        Chain {
            first,
            second,
            middle,
            chunk,
        }
    }

    /// Most outputs one internal piece of `n ≤ chunk` inputs can give.
    fn piece_bound(&self, n: usize) -> usize {
        self.second.max_output_len(self.first.max_output_len(n))
    }

    /// The first block.
    pub fn first(&self) -> &A {
        &self.first
    }

    /// The second block.
    pub fn second(&self) -> &B {
        &self.second
    }
}

impl<A: Block, B: Block<Input = A::Output>> Block for Chain<A, B> {
    type Input = A::Input;
    type Output = B::Output;

    fn process(&mut self, input: &[A::Input], output: &mut [B::Output]) -> (usize, usize) {
        let mut consumed = 0;
        let mut produced = 0;
        while consumed < input.len() {
            let room = output.len() - produced;
            let mut n = self.chunk.min(input.len() - consumed);
            while n > 0 && self.piece_bound(n) > room {
                n /= 2;
            }
            if n == 0 {
                break;
            }
            let (c, mid) = self
                .first
                .process(&input[consumed..consumed + n], &mut self.middle);
            let (_, p) = self
                .second
                .process(&self.middle[..mid], &mut output[produced..]);
            consumed += c;
            produced += p;
        }
        (consumed, produced)
    }

    fn max_output_len(&self, input_len: usize) -> usize {
        pieces_bound(input_len, self.chunk, |n| self.piece_bound(n))
    }

    fn rate_ratio(&self) -> f64 {
        self.first.rate_ratio() * self.second.rate_ratio()
    }

    fn delay(&self) -> f64 {
        self.first.delay() + self.second.delay() / self.first.rate_ratio()
    }

    fn reset(&mut self) {
        self.first.reset();
        self.second.reset();
    }
}

/// Runs `block` over `input` split into pieces whose sizes come from `sizes` (cycled), with an
/// output buffer just large enough for each piece. Allocates: for chunk-invariance tests.
pub fn process_in_chunks<B: Block + ?Sized>(
    block: &mut B,
    input: &[B::Input],
    sizes: &[usize],
) -> Vec<B::Output> {
    let mut out = Vec::new();
    let mut at = 0;
    let mut piece: Vec<B::Output> = Vec::new();
    for &size in sizes.iter().cycle() {
        if at >= input.len() {
            break;
        }
        let n = size.max(1).min(input.len() - at);
        piece.resize(block.max_output_len(n), B::Output::default());
        let (consumed, produced) = block.process(&input[at..at + n], &mut piece);
        debug_assert_eq!(
            consumed, n,
            "block did not consume a piece that fits its output"
        );
        out.extend_from_slice(&piece[..produced]);
        at += consumed.max(1);
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::dsp::{FirDecimator, Gain};

    /// A chain holding a rate-changing block takes a whole input whose output buffer is
    /// `max_output_len`, and gives the same output however the input is chunked.
    #[test]
    fn chain_with_decimation_is_whole_and_chunk_invariant() {
        let make = || {
            Chain::new(
                FirDecimator::<f32>::new(&[0.25, 0.5, 0.25], 3).unwrap(),
                Gain::new(2.0),
                100,
            )
        };
        let input: Vec<f32> = (0..10_001).map(|n| (n as f32 * 0.01).sin()).collect();
        let mut chain = make();
        let mut out = vec![0.0; chain.max_output_len(input.len())];
        let (consumed, produced) = chain.process(&input, &mut out);
        assert_eq!(consumed, input.len());
        assert_eq!(produced, 3334);
        for sizes in [vec![1usize], vec![7, 1024], vec![99, 101, 3]] {
            assert_eq!(
                process_in_chunks(&mut make(), &input, &sizes),
                out[..produced].to_vec()
            );
        }
    }
}

//! The piece loop every receiver shares: work through the input in pieces of at most
//! [`CHUNK`] samples, each fully processed while its worst-case output still fits.

use super::front_end::CHUNK;
use crate::block::pieces_bound;
use crate::Complex32;

/// A receiver that processes one piece of at most [`CHUNK`] inputs at a time.
pub(crate) trait Pieces {
    /// Most outputs one piece of `n ≤ CHUNK` inputs can give.
    fn piece_bound(&self, n: usize) -> usize;

    /// Runs one piece through every stage; returns the outputs written.
    fn process_piece(&mut self, input: &[Complex32], output: &mut [f32]) -> usize;

    /// `Block::process` for a piece-wise receiver: as many whole pieces as fit.
    fn process_pieces(&mut self, input: &[Complex32], output: &mut [f32]) -> (usize, usize) {
        let mut consumed = 0;
        let mut produced = 0;
        while consumed < input.len() {
            let n = CHUNK.min(input.len() - consumed);
            if self.piece_bound(n) > output.len() - produced {
                break;
            }
            produced += self.process_piece(&input[consumed..consumed + n], &mut output[produced..]);
            consumed += n;
        }
        (consumed, produced)
    }

    /// `Block::max_output_len` for a piece-wise receiver: the sum of its pieces' bounds.
    fn pieces_output_len(&self, input_len: usize) -> usize {
        pieces_bound(input_len, CHUNK, |n| self.piece_bound(n))
    }
}

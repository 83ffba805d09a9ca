//! Sample history for FIR-type blocks: one linear buffer holding the last `span − 1` inputs
//! followed by room for new ones, so that every filter window is a single contiguous slice
//! (the inner loop is then a plain dot product the compiler vectorises).

use crate::sample::Sample;

/// A linear history buffer; the kept tail is moved to the front only when the buffer is full.
#[derive(Debug, Clone)]
pub(crate) struct History<T: Sample> {
    buf: Vec<T>,
    len: usize,
    span: usize,
}

impl<T: Sample> History<T> {
    /// Windows of `span` samples, with room for `room` new samples between tail moves.
    pub(crate) fn new(span: usize, room: usize) -> Self {
        let span = span.max(1);
        History {
            buf: vec![T::ZERO; span - 1 + room.max(1)],
            len: span - 1,
            span,
        }
    }

    /// Back to `span − 1` zeros of history.
    pub(crate) fn reset(&mut self) {
        self.buf.fill(T::ZERO);
        self.len = self.span - 1;
    }

    /// Free slots for new samples (at least one), moving the kept tail to the front if full.
    pub(crate) fn make_room(&mut self) -> usize {
        if self.len == self.buf.len() {
            let keep = self.span - 1;
            self.buf.copy_within(self.len - keep..self.len, 0);
            self.len = keep;
        }
        self.buf.len() - self.len
    }

    /// Appends `input` (at most `make_room()` samples). Non-finite samples are stored as zero so
    /// that one bad input cannot poison the output.
    pub(crate) fn push(&mut self, input: &[T]) {
        let dst = &mut self.buf[self.len..self.len + input.len()];
        for (d, &x) in dst.iter_mut().zip(input) {
            *d = if x.is_finite_sample() { x } else { T::ZERO };
        }
        self.len += input.len();
    }

    /// Number of samples held (history plus new ones).
    pub(crate) fn len(&self) -> usize {
        self.len
    }

    /// The `span` samples ending just before buffer position `end`.
    #[inline]
    pub(crate) fn window(&self, end: usize) -> &[T] {
        &self.buf[end - self.span..end]
    }

    /// The `span` newest samples.
    #[inline]
    pub(crate) fn latest(&self) -> &[T] {
        self.window(self.len)
    }
}

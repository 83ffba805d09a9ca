//! A receiver cut in two for two threads: the half at the input rate (guards and front end)
//! and the half at the detection rate (detector, measurement stage, gain control, audio).
//! [`crate::pipeline::split`] runs them on two cores; run one after the other, piece by
//! piece, they are exactly the one-thread receiver.

use crate::{Complex32, Result};

/// The first half: IQ at the input rate in, the channel at the detection rate out.
pub trait FrontHalf: Send {
    /// One piece of at most [`crate::block::PIECE`] IQ samples through the guards and the
    /// front end into `channel`; returns the channel samples written, `m`. When `wide` is not
    /// empty the front end's wide view of the piece is copied into `wide[..m]` (a front end
    /// without one leaves it alone and returns `(m, 0)`); returns `(m, wide samples)`.
    fn run_piece(
        &mut self,
        input: &[Complex32],
        channel: &mut [Complex32],
        wide: &mut [Complex32],
    ) -> (usize, usize);
    /// The most channel samples one piece gives.
    fn max_piece_output(&self) -> usize;
    /// Retunes the front end and the guards to `offset_hz`; returns the step to hand to
    /// [`BackHalf::retuned`].
    fn set_offset(&mut self, offset_hz: f64) -> Result<f64>;
    /// The tuned frequency relative to the recording centre, in Hz.
    fn offset_hz(&self) -> f64;
    /// Cuts the guards off, to run on another thread ahead of the rest: `(guards, rest)`,
    /// where `rest.run_piece` takes IQ the guards have already seen. Run one after the other
    /// on the same samples, the two are this half. `None` when there is nothing to cut off.
    fn split_guards(&mut self) -> Option<(&mut dyn GuardHalf, &mut dyn FrontHalf)> {
        None
    }
}

/// The front-end guards of a first half ([`FrontHalf::split_guards`]): IQ at the input rate in
/// and out, sample for sample.
pub trait GuardHalf: Send {
    /// `input` through every guard into `output` (as long as `input`); the samples do not
    /// depend on how the input is cut.
    fn guard(&mut self, input: &[Complex32], output: &mut [Complex32]);
    /// The front end was retuned to `offset_hz` (a blanked stretch is carried on at the tuned
    /// frequency).
    fn retune(&mut self, offset_hz: f64);
}

/// The second half: the channel (and the front end's wide view of it) in, interleaved audio
/// frames out.
pub trait BackHalf: Send {
    /// Whether the measurement stage reads the wide view (else pass an empty one).
    fn wants_wide(&self) -> bool;
    /// Most outputs a piece of `m` channel samples can give, from the current state.
    fn piece_output_len(&self, m: usize) -> usize;
    /// One piece of channel through the second half; returns the outputs written.
    fn run_piece(
        &mut self,
        channel: &mut [Complex32],
        wide: &[Complex32],
        output: &mut [f32],
    ) -> usize;
    /// The first half was retuned by `step_hz`: the detector's loops restart their search.
    fn retuned(&mut self, step_hz: f64);
    /// The end of the real input: the measurement stage stops (what follows is the flush).
    fn finish(&mut self);
    /// The measurement stage's CNR so far (modes with a carrier), dB.
    fn cnr_db(&self) -> Option<f64>;
}

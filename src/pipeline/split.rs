//! One stream on two cores: the receive job's runtime with the receiver cut in two
//! ([`Receiver::halves`](crate::demod::Receiver::halves)). Four threads joined by bounded
//! crossbeam channels carrying recycled buffers:
//!
//! ```text
//!  read + decode ──▶ front half (guards, mixer, decimators, channel filter)
//!                       ──(batches of pieces: channel + wide view)──▶
//!                    back half (detector, meter, AGC, audio stage) ──▶ write
//! ```
//!
//! The front half cuts each input buffer into the same pieces the one-thread receiver does
//! ([`crate::block::PIECE`]) and the back half runs each piece as the one-thread receiver's
//! piece loop would, with the end-of-input flush fed as the same zeros: the audio and the
//! measurements are the one-thread path's, sample for sample. Memory is bounded as in
//! [`super::runtime`]: every pool holds `depth` buffers, built before the first sample.

use super::live::{LiveControl, StatusTally};
use super::runtime::{joined, pool, read_stage, write_stage, Filled, RunTotals, RuntimeConfig};
use crate::block::{FLUSH_PIECE, PIECE};
use crate::demod::{BackHalf, FrontHalf};
use crate::{Complex32, Error, Result};
use crossbeam_channel::{bounded, Receiver as Rx, Sender as Tx};
use std::thread;

/// What the run needs to know of the whole receiver before it is cut in two.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SplitPlan {
    /// Zeros fed at the end of the input ([`crate::block::Block::flush_len`]).
    pub flush_len: usize,
    /// Output room of one batch: at least the receiver's `max_output_len(chunk)` and its
    /// `flush_output_len()`.
    pub out_len: usize,
    /// Input sample rate in Hz (for the live figures' half-second period).
    pub input_rate: f64,
}

/// Pieces of channel handed from the front half to the back half.
struct Batch {
    channel: Vec<Complex32>,
    wide: Vec<Complex32>,
    /// Room for each piece's channel (and wide view) in `channel` (and `wide`).
    per_piece: usize,
    /// Channel samples and wide-view samples of each piece.
    lens: Vec<(usize, usize)>,
    /// Input samples the batch covers (0 in the flush).
    inputs: usize,
    /// A retune applied before the batch's first piece: the step for the detector.
    retuned: Option<f64>,
    /// The real input ended before the batch's first piece.
    finish: bool,
}

impl Batch {
    fn new(pieces: usize, per_piece: usize, wide: bool) -> Self {
        Batch {
            channel: vec![Complex32::default(); pieces * per_piece],
            wide: vec![Complex32::default(); if wide { pieces * per_piece } else { 0 }],
            per_piece,
            lens: Vec::with_capacity(pieces),
            inputs: 0,
            retuned: None,
            finish: false,
        }
    }
}

/// Runs `source → front → back → sink` on four threads until the source returns 0 or any
/// stage fails, then flushes `plan.flush_len` zeros through both halves. `control` carries
/// retunes in (applied by the front half before an input buffer, handed to the back half
/// with that buffer's first piece) and the level, CNR (from the measurement stage) and
/// seconds out every half second of input.
pub fn run_split<Src, Snk>(
    mut source: Src,
    front: &mut dyn FrontHalf,
    back: &mut dyn BackHalf,
    mut sink: Snk,
    config: RuntimeConfig,
    plan: SplitPlan,
    control: &LiveControl,
) -> Result<RunTotals>
where
    Src: FnMut(&mut [Complex32]) -> Result<usize> + Send,
    Snk: FnMut(&[f32]) -> Result<()> + Send,
{
    let chunk = config.chunk.max(1);
    let depth = config.depth.max(1);
    let pieces = chunk.div_ceil(PIECE).max(1);
    let per_piece = front.max_piece_output();
    let wide = back.wants_wide();
    let (free_in_tx, free_in_rx) = pool(depth, chunk);
    let (full_in_tx, full_in_rx) = bounded::<Filled<Complex32>>(depth);
    let (free_batch_tx, free_batch_rx) = bounded::<Batch>(depth);
    for _ in 0..depth {
        // The channel has room for exactly `depth` batches and both ends are alive here.
        let _ = free_batch_tx.send(Batch::new(pieces, per_piece, wide));
    }
    let (full_batch_tx, full_batch_rx) = bounded::<Batch>(depth);
    let (free_out_tx, free_out_rx) = pool(depth, plan.out_len.max(1));
    let (full_out_tx, full_out_rx) = bounded::<Filled<f32>>(depth);
    control.publish_offset(front.offset_hz());

    thread::scope(|scope| {
        let reader = scope.spawn(move || read_stage(&mut source, free_in_rx, full_in_tx));
        let fronted = scope.spawn(move || {
            let mut stage = FrontStage {
                front,
                control,
                pieces,
                per_piece,
                free: free_batch_rx,
                full: full_batch_tx,
            };
            stage.run(full_in_rx, free_in_tx, plan.flush_len)
        });
        let backed = scope.spawn(move || {
            back_stage(
                back,
                control,
                plan.input_rate,
                full_batch_rx,
                free_batch_tx,
                free_out_rx,
                full_out_tx,
            )
        });
        let writer = scope.spawn(move || write_stage(&mut sink, full_out_rx, free_out_tx));
        let read = joined(reader, "source");
        let front_done = joined(fronted, "dsp");
        let back_done = joined(backed, "dsp");
        let written = joined(writer, "sink");
        Ok(RunTotals {
            samples_in: read?,
            samples_out: {
                front_done?;
                back_done?;
                written?
            },
        })
    })
}

/// The front half's thread: input buffers in, batches of pieces out.
struct FrontStage<'a> {
    front: &'a mut dyn FrontHalf,
    control: &'a LiveControl,
    pieces: usize,
    per_piece: usize,
    free: Rx<Batch>,
    full: Tx<Batch>,
}

/// Whether the back half has gone (the run is ending).
struct Gone;

impl FrontStage<'_> {
    fn run(
        &mut self,
        full_in: Rx<Filled<Complex32>>,
        free_in: Tx<Vec<Complex32>>,
        flush_len: usize,
    ) -> Result<()> {
        while let Ok(input) = full_in.recv() {
            let Ok(mut batch) = self.free.recv() else {
                return Ok(());
            };
            batch.retuned = self.retune();
            batch.inputs = input.len;
            let ok = self.pieces_of(&input.buf[..input.len], batch);
            // The reader may already have finished; a closed free channel is not an error.
            let _ = free_in.send(input.buf);
            if ok.is_err() {
                return Ok(());
            }
        }
        // The end of the input: the flush, as the one-thread receiver's (zeros in pieces of
        // FLUSH_PIECE), its first batch telling the back half to stop metering.
        let zeros = [Complex32::default(); FLUSH_PIECE];
        let Ok(mut batch) = self.free.recv() else {
            return Ok(());
        };
        batch.finish = true;
        let mut left = flush_len;
        while left > 0 {
            if batch.lens.len() == self.pieces {
                if self.full.send(batch).is_err() {
                    return Ok(());
                }
                let Ok(next) = self.free.recv() else {
                    return Ok(());
                };
                batch = next;
            }
            let n = left.min(FLUSH_PIECE);
            self.one_piece(&zeros[..n], &mut batch);
            left -= n;
        }
        let _ = self.full.send(batch);
        Ok(())
    }

    /// A pending retune, applied to the front half; the step for the back half.
    fn retune(&mut self) -> Option<f64> {
        let hz = self.control.take_retune()?;
        match self.front.set_offset(hz) {
            Ok(step) => {
                self.control.publish_offset(self.front.offset_hz());
                Some(step)
            }
            Err(e) => {
                self.control.report_problem(e.to_string());
                None
            }
        }
    }

    /// `input` in pieces of [`PIECE`] into `batch` (and more batches when it fills); sends it.
    fn pieces_of(
        &mut self,
        input: &[Complex32],
        mut batch: Batch,
    ) -> std::result::Result<(), Gone> {
        for part in input.chunks(PIECE) {
            if batch.lens.len() == self.pieces {
                self.full.send(batch).map_err(|_| Gone)?;
                batch = self.free.recv().map_err(|_| Gone)?;
            }
            self.one_piece(part, &mut batch);
        }
        self.full.send(batch).map_err(|_| Gone)
    }

    fn one_piece(&mut self, input: &[Complex32], batch: &mut Batch) {
        let k = batch.lens.len();
        let at = k * self.per_piece;
        let channel = &mut batch.channel[at..at + self.per_piece];
        let wide: &mut [Complex32] = if batch.wide.is_empty() {
            &mut []
        } else {
            &mut batch.wide[at..at + self.per_piece]
        };
        let lens = self.front.run_piece(input, channel, wide);
        batch.lens.push(lens);
    }
}

/// The back half's thread: batches in, audio out; publishes the live figures.
fn back_stage(
    back: &mut dyn BackHalf,
    control: &LiveControl,
    input_rate: f64,
    full: Rx<Batch>,
    free: Tx<Batch>,
    free_out: Rx<Vec<f32>>,
    full_out: Tx<Filled<f32>>,
) -> Result<()> {
    let mut tally = StatusTally::default();
    while let Ok(mut batch) = full.recv() {
        let Ok(mut out) = free_out.recv() else {
            return Ok(());
        };
        if let Some(step) = batch.retuned.take() {
            back.retuned(step);
        }
        if batch.finish {
            back.finish();
        }
        let per_piece = batch.per_piece;
        let mut produced = 0;
        for (k, &(m, w)) in batch.lens.iter().enumerate() {
            let at = k * per_piece;
            let room = out.len() - produced;
            if back.piece_output_len(m) > room {
                return Err(Error::Pipeline {
                    stage: "dsp",
                    problem: format!("a piece needs more than the {room} outputs left"),
                });
            }
            let wide = if w == m && !batch.wide.is_empty() {
                &batch.wide[at..at + m]
            } else {
                &[][..]
            };
            produced += back.run_piece(&mut batch.channel[at..at + m], wide, &mut out[produced..]);
        }
        tally.add(control, input_rate, batch.inputs, &out[..produced], || {
            back.cnr_db()
        });
        batch.lens.clear();
        batch.inputs = 0;
        batch.finish = false;
        // The front half may already have finished; a closed free channel is not an error.
        let _ = free.send(batch);
        if full_out
            .send(Filled {
                buf: out,
                len: produced,
            })
            .is_err()
        {
            return Ok(());
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::Block;
    use crate::demod::{build_receiver, Mode, Receiver, ReceiverConfig};
    use crate::dsp::ComplexNoise;
    use crate::pipeline::runtime::run_stream;
    use crate::synth::AmToneTransmitter;

    /// 0.6 s of tone AM 20 kHz above the centre of a 240 kS/s recording, in noise.
    fn recording() -> Vec<Complex32> {
        let rate = 240_000.0;
        let mut tx = AmToneTransmitter::new(0.25, 0.5, 1000.0, 20_000.0, rate).unwrap();
        let mut iq = vec![Complex32::default(); 144_000];
        tx.fill(&mut iq);
        ComplexNoise::new(1e-4, 11).add_to(&mut iq);
        iq
    }

    fn source(iq: &[Complex32]) -> impl FnMut(&mut [Complex32]) -> Result<usize> + Send + '_ {
        let mut at = 0;
        move |buf: &mut [Complex32]| {
            let n = buf.len().min(iq.len() - at);
            buf[..n].copy_from_slice(&iq[at..at + n]);
            at += n;
            Ok(n)
        }
    }

    fn receiver(mode: Mode) -> Box<dyn Receiver> {
        let mut config = ReceiverConfig::new(240_000.0, 20_000.0);
        config.options.noise_blanker = true;
        build_receiver(mode, &config).unwrap()
    }

    /// The one-thread runtime: the receiver as one block, then its flush.
    fn one_thread(mode: Mode, iq: &[Complex32], config: RuntimeConfig) -> (Vec<f32>, String) {
        let mut rx = receiver(mode);
        let mut audio = Vec::new();
        run_stream(
            source(iq),
            &mut rx,
            |p: &[f32]| {
                audio.extend_from_slice(p);
                Ok(())
            },
            config,
        )
        .unwrap();
        (audio, format!("{:?}", rx.measurements()))
    }

    fn two_halves(mode: Mode, iq: &[Complex32], config: RuntimeConfig) -> (Vec<f32>, String) {
        let mut rx = receiver(mode);
        let plan = SplitPlan {
            flush_len: rx.flush_len(),
            out_len: rx.max_output_len(config.chunk).max(rx.flush_output_len()),
            input_rate: 240_000.0,
        };
        let mut audio = Vec::new();
        let control = LiveControl::default();
        let (front, back) = rx.halves().unwrap();
        let totals = run_split(
            source(iq),
            front,
            back,
            |p: &[f32]| {
                audio.extend_from_slice(p);
                Ok(())
            },
            config,
            plan,
            &control,
        )
        .unwrap();
        assert_eq!(totals.samples_in, iq.len() as u64);
        assert_eq!(totals.samples_out, audio.len() as u64);
        assert!(control.status().seconds > 0.4, "{:?}", control.status());
        (audio, format!("{:?}", rx.measurements()))
    }

    /// Sample for sample and figure for figure, whatever the buffer size (smaller than a
    /// piece, not a multiple of it, several pieces) and however many buffers circulate.
    #[test]
    fn two_halves_give_the_one_thread_audio_and_measurements() {
        let iq = recording();
        for mode in [
            Mode::Am,
            Mode::Sam,
            Mode::Dsb,
            Mode::Usb,
            Mode::Isb,
            Mode::Vsb,
        ] {
            for (chunk, depth) in [(1000, 2), (PIECE, 3), (3 * PIECE + 77, 2), (1 << 16, 4)] {
                let config = RuntimeConfig { chunk, depth };
                let (audio, measured) = one_thread(mode, &iq, config);
                let (split_audio, split_measured) = two_halves(mode, &iq, config);
                assert!(audio.len() > 10_000, "{mode:?}");
                assert_eq!(audio.len(), split_audio.len(), "{mode:?} chunk {chunk}");
                let same = audio
                    .iter()
                    .zip(&split_audio)
                    .all(|(a, b)| a.to_bits() == b.to_bits());
                assert!(same, "{mode:?} chunk {chunk}: audio differs");
                assert_eq!(measured, split_measured, "{mode:?} chunk {chunk}");
            }
        }
    }

    #[test]
    fn a_retune_reaches_both_halves_and_a_refused_one_is_reported() {
        let iq = recording();
        let mut rx = receiver(Mode::Sam);
        let control = LiveControl::default();
        control.retune(-1e9);
        let plan = SplitPlan {
            flush_len: rx.flush_len(),
            out_len: rx.max_output_len(4096).max(rx.flush_output_len()),
            input_rate: 240_000.0,
        };
        let (front, back) = rx.halves().unwrap();
        let config = RuntimeConfig {
            chunk: 4096,
            depth: 2,
        };
        run_split(
            source(&iq),
            front,
            back,
            |_: &[f32]| Ok(()),
            config,
            plan,
            &control,
        )
        .unwrap();
        assert!(control.take_problem().is_some());
        control.retune(-500.0);
        let (front, back) = rx.halves().unwrap();
        run_split(
            source(&iq),
            front,
            back,
            |_: &[f32]| Ok(()),
            config,
            plan,
            &control,
        )
        .unwrap();
        assert_eq!(rx.offset_hz(), -500.0);
        assert_eq!(control.status().offset_hz, Some(-500.0));
    }

    #[test]
    fn a_sink_error_ends_the_run_with_that_error() {
        let iq = recording();
        let mut rx = receiver(Mode::Am);
        let plan = SplitPlan {
            flush_len: rx.flush_len(),
            out_len: rx.max_output_len(1024).max(rx.flush_output_len()),
            input_rate: 240_000.0,
        };
        let (front, back) = rx.halves().unwrap();
        let mut calls = 0;
        let result = run_split(
            source(&iq),
            front,
            back,
            |_: &[f32]| {
                calls += 1;
                if calls == 3 {
                    Err(Error::parameter("sink", 3, "refused"))
                } else {
                    Ok(())
                }
            },
            RuntimeConfig {
                chunk: 1024,
                depth: 2,
            },
            plan,
            &LiveControl::default(),
        );
        assert!(matches!(
            result,
            Err(Error::InvalidParameter { name: "sink", .. })
        ));
    }
}

//! The streaming runtime: source, DSP and sink on three threads joined by bounded crossbeam
//! channels that carry recycled buffers.
//!
//! Memory is bounded whatever the input length: each side has a fixed pool of buffers that
//! circulate between a "full" and a "free" channel, so a slow sink holds the source back
//! (back-pressure) instead of anything being dropped. A stage that fails returns its error and
//! drops its channel ends; the other stages then see a closed channel and stop, and the run
//! returns the first stage's error in pipeline order (source, DSP, sink), never hanging.

use crate::block::Block;
use crate::{Error, Result};
use crossbeam_channel::{bounded, Receiver as Rx, Sender as Tx};
use std::thread;

/// Buffer sizes and pool depth of a run.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct RuntimeConfig {
    /// Input samples per buffer.
    pub chunk: usize,
    /// Buffers in flight on each side (bounds memory: 2 × depth buffers in all).
    pub depth: usize,
}

impl Default for RuntimeConfig {
    fn default() -> Self {
        RuntimeConfig {
            chunk: 1 << 16,
            depth: 4,
        }
    }
}

/// Totals of a finished run.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct RunTotals {
    /// Input samples read from the source.
    pub samples_in: u64,
    /// Output samples written to the sink.
    pub samples_out: u64,
}

/// A filled buffer and how much of it is valid.
pub(super) struct Filled<T> {
    pub(super) buf: Vec<T>,
    pub(super) len: usize,
}

/// Runs `source → block → sink` on three threads until the source returns 0 (end of stream) or
/// any stage fails.
///
/// `source` fills a buffer and returns how many samples it wrote; `sink` takes each output
/// piece. Both run on their own threads; the block runs on a third.
///
/// ```
/// use amrx::dsp::Gain;
/// use amrx::pipeline::runtime::{run_stream, RuntimeConfig};
/// let data: Vec<f32> = (0..10_000).map(|i| i as f32).collect();
/// let mut at = 0;
/// let mut out = Vec::new();
/// let totals = run_stream(
///     |buf: &mut [f32]| {
///         let n = buf.len().min(data.len() - at);
///         buf[..n].copy_from_slice(&data[at..at + n]);
///         at += n;
///         Ok(n)
///     },
///     &mut Gain::new(2.0),
///     |piece: &[f32]| {
///         out.extend_from_slice(piece);
///         Ok(())
///     },
///     RuntimeConfig { chunk: 1000, depth: 2 },
/// )
/// .unwrap();
/// assert_eq!(totals.samples_out, 10_000);
/// assert_eq!(out[9_999], 19_998.0);
/// ```
pub fn run_stream<B, Src, Snk>(
    mut source: Src,
    block: &mut B,
    mut sink: Snk,
    config: RuntimeConfig,
) -> Result<RunTotals>
where
    B: Block + Send + ?Sized,
    B::Input: Send,
    B::Output: Send,
    Src: FnMut(&mut [B::Input]) -> Result<usize> + Send,
    Snk: FnMut(&[B::Output]) -> Result<()> + Send,
{
    let chunk = config.chunk.max(1);
    let depth = config.depth.max(1);
    let out_len = block.max_output_len(chunk).max(1);
    let (free_in_tx, free_in_rx) = pool(depth, chunk);
    let (free_out_tx, free_out_rx) = pool(depth, out_len);
    let (full_in_tx, full_in_rx) = bounded::<Filled<B::Input>>(depth);
    let (full_out_tx, full_out_rx) = bounded::<Filled<B::Output>>(depth);

    thread::scope(|scope| {
        let reader = scope.spawn(move || read_stage(&mut source, free_in_rx, full_in_tx));
        let worker =
            scope.spawn(move || dsp_stage(block, full_in_rx, free_in_tx, free_out_rx, full_out_tx));
        let writer = scope.spawn(move || write_stage(&mut sink, full_out_rx, free_out_tx));
        let read = joined(reader, "source");
        let dsp = joined(worker, "dsp");
        let written = joined(writer, "sink");
        Ok(RunTotals {
            samples_in: read?,
            samples_out: {
                dsp?;
                written?
            },
        })
    })
}

/// A channel pre-filled with `depth` buffers of `len` default samples.
pub(super) fn pool<T: Copy + Default>(depth: usize, len: usize) -> (Tx<Vec<T>>, Rx<Vec<T>>) {
    let (tx, rx) = bounded(depth);
    for _ in 0..depth {
        // The channel has room for exactly `depth` buffers and both ends are alive here.
        let _ = tx.send(vec![T::default(); len]);
    }
    (tx, rx)
}

pub(super) fn joined<T>(
    handle: thread::ScopedJoinHandle<'_, Result<T>>,
    stage: &'static str,
) -> Result<T> {
    handle.join().unwrap_or_else(|panic| {
        let problem = panic
            .downcast_ref::<&str>()
            .map(|s| s.to_string())
            .or_else(|| panic.downcast_ref::<String>().cloned())
            .unwrap_or_else(|| "panicked".to_string());
        Err(Error::Pipeline { stage, problem })
    })
}

/// Reads until end of stream; returns the samples read. Stops quietly if downstream has gone.
pub(super) fn read_stage<T, Src>(
    source: &mut Src,
    free: Rx<Vec<T>>,
    full: Tx<Filled<T>>,
) -> Result<u64>
where
    Src: FnMut(&mut [T]) -> Result<usize>,
{
    let mut total = 0u64;
    while let Ok(mut buf) = free.recv() {
        let len = source(&mut buf)?;
        if len == 0 {
            break;
        }
        total += len as u64;
        if full.send(Filled { buf, len }).is_err() {
            break;
        }
    }
    Ok(total)
}

fn dsp_stage<B: Block + ?Sized>(
    block: &mut B,
    full_in: Rx<Filled<B::Input>>,
    free_in: Tx<Vec<B::Input>>,
    free_out: Rx<Vec<B::Output>>,
    full_out: Tx<Filled<B::Output>>,
) -> Result<()> {
    while let Ok(input) = full_in.recv() {
        let Ok(mut out) = free_out.recv() else {
            return Ok(());
        };
        let (consumed, produced) = block.process(&input.buf[..input.len], &mut out);
        if consumed != input.len {
            return Err(Error::Pipeline {
                stage: "dsp",
                problem: format!("block consumed {consumed} of {} samples", input.len),
            });
        }
        // The reader may already have finished; a closed free channel is not an error.
        let _ = free_in.send(input.buf);
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
    send_flushed_tail(block, &free_out, &full_out);
    Ok(())
}

/// At the end of the input, the tail the block's filters still hold goes out too, so the
/// output covers the whole input. Allocates once, at the end of the stream.
fn send_flushed_tail<B: Block + ?Sized>(
    block: &mut B,
    free_out: &Rx<Vec<B::Output>>,
    full_out: &Tx<Filled<B::Output>>,
) {
    let mut tail = vec![B::Output::default(); block.flush_output_len()];
    let n = block.flush(&mut tail);
    let mut at = 0;
    while at < n {
        let Ok(mut out) = free_out.recv() else { return };
        let len = out.len().min(n - at);
        out[..len].copy_from_slice(&tail[at..at + len]);
        at += len;
        if full_out.send(Filled { buf: out, len }).is_err() {
            return;
        }
    }
}

pub(super) fn write_stage<T, Snk>(
    sink: &mut Snk,
    full: Rx<Filled<T>>,
    free: Tx<Vec<T>>,
) -> Result<u64>
where
    Snk: FnMut(&[T]) -> Result<()>,
{
    let mut total = 0u64;
    while let Ok(piece) = full.recv() {
        sink(&piece.buf[..piece.len])?;
        total += piece.len as u64;
        let _ = free.send(piece.buf);
    }
    Ok(total)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::dsp::Gain;

    fn counting_source(total: usize) -> impl FnMut(&mut [f32]) -> Result<usize> + Send {
        let mut at = 0usize;
        move |buf: &mut [f32]| {
            let n = buf.len().min(total - at);
            for (i, x) in buf[..n].iter_mut().enumerate() {
                *x = (at + i) as f32;
            }
            at += n;
            Ok(n)
        }
    }

    #[test]
    fn passes_every_sample_in_order() {
        let mut seen = Vec::new();
        let totals = run_stream(
            counting_source(100_003),
            &mut Gain::new(1.0),
            |p: &[f32]| {
                seen.extend_from_slice(p);
                Ok(())
            },
            RuntimeConfig {
                chunk: 4096,
                depth: 3,
            },
        )
        .unwrap();
        assert_eq!(
            totals,
            RunTotals {
                samples_in: 100_003,
                samples_out: 100_003
            }
        );
        assert!(seen.iter().enumerate().all(|(i, &x)| x == i as f32));
    }

    #[test]
    fn sink_error_ends_the_run_with_that_error() {
        let mut calls = 0;
        let result = run_stream(
            counting_source(usize::MAX / 2),
            &mut Gain::new(1.0),
            |_: &[f32]| {
                calls += 1;
                if calls == 3 {
                    Err(Error::parameter("sink", 3, "refused"))
                } else {
                    Ok(())
                }
            },
            RuntimeConfig {
                chunk: 256,
                depth: 2,
            },
        );
        assert!(matches!(
            result,
            Err(Error::InvalidParameter { name: "sink", .. })
        ));
    }

    #[test]
    fn source_error_ends_the_run_with_that_error() {
        let mut calls = 0;
        let result = run_stream(
            |buf: &mut [f32]| {
                calls += 1;
                if calls == 5 {
                    Err(Error::file("input.cu8", "broken"))
                } else {
                    Ok(buf.len())
                }
            },
            &mut Gain::new(1.0),
            |_: &[f32]| Ok(()),
            RuntimeConfig {
                chunk: 256,
                depth: 2,
            },
        );
        assert!(matches!(result, Err(Error::InvalidFile { .. })));
    }

    #[test]
    fn panicking_sink_is_reported_not_propagated() {
        let result = run_stream(
            counting_source(10_000),
            &mut Gain::new(1.0),
            |_: &[f32]| -> Result<()> { panic!("sink exploded") },
            RuntimeConfig {
                chunk: 256,
                depth: 2,
            },
        );
        match result {
            Err(Error::Pipeline { stage, problem }) => {
                assert_eq!(stage, "sink");
                assert!(problem.contains("exploded"));
            }
            other => panic!("expected a pipeline error, got {other:?}"),
        }
    }
}

//! # amrx
//!
//! A receiver library for the amplitude-modulation family of radio signals, working on complex
//! baseband (IQ) recordings or live streams: tune, filter, detect, measure, and write audio.
//!
//! The library is made of [`block::Block`]s: stateful processors that read an input slice and
//! write into a caller-provided buffer, allocation-free in the steady state, whose output does not
//! depend on how the input was chunked. Blocks compose in one thread with [`block::Chain`] or
//! run as stages of the threaded [`pipeline`] runtime.
//!
//! ## Modules
//! - [`dsp`]: NCO, mixer, Kaiser FIR design, FIR, polyphase decimation, rational resampling,
//!   DC blocker.
//! - [`demod`]: detectors and the per-mode receivers.
//! - [`sync`]: carrier recovery loops.
//! - [`io`]: SigMF, IQ WAV and raw inputs; WAV and raw audio outputs.
//! - [`measure`]: spectra, CNR, modulation depth, tone frequency, SINAD.
//! - [`synth`]: test-signal generation and impairments.
//! - [`pipeline`]: the streaming runtime and the receive job behind the CLI.
//!
//! ## Cargo features
//! None yet; every feature will be listed here.

pub mod block;
pub mod channel;
pub mod demod;
pub mod dsp;
pub mod error;
pub mod io;
pub mod lab;
pub mod measure;
pub mod pipeline;
pub mod sample;
pub mod sync;
pub mod synth;

pub use error::{Error, Result};
pub use num_complex;
pub use num_complex::Complex32;
pub use sample::Sample;

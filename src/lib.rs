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
//! Every feature of the crate, in one place:
//!
//! | feature | default | adds | extra crates |
//! |---|---|---|---|
//! | `cli` | on | the `amrx` command-line binary; turns on `lab` | clap, indicatif |
//! | `lab` | via `cli` | the noise lab's parallel sweep (`lab::run_sweep`) and PNG charts (`lab::write_png`) | rayon, plotters |
//!
//! With `default-features = false` the receiver core remains: every block, receiver, input,
//! output, measurement, the signal generator, the channel simulator, the threaded runtime and
//! the rest of [`lab`] (detectors, single trials, theory, CSV). It depends on num-complex,
//! rustfft, hound, serde, serde_json, thiserror, crossbeam-channel, rand and rand_distr.
//!
//! ## Embedding
//! Take the core only, and keep it optimised in your own debug builds: unoptimised, the DSP runs
//! about 40 times slower than a release build (an AM receiver over 10 s of 2.4 MS/s IQ took
//! 8.1 s in a plain debug build, 0.22 s with the setting below and 0.20 s in release; measured
//! on a shared 2-core machine, see the README).
//!
//! ```toml
//! [dependencies]
//! amrx = { version = "0.1", default-features = false }
//!
//! [profile.dev.package.amrx]
//! opt-level = 3
//!
//! # Optional: every other dependency too (rustfft, rand, serde_json, ...).
//! [profile.dev.package."*"]
//! opt-level = 3
//! ```

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

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
//! ```
//! use amrx::block::{process_to_vec, Block};
//! use amrx::demod::{Mode, Receiver, ReceiverConfig, SamReceiver};
//! use amrx::synth::AmToneTransmitter;
//! use amrx::Complex32;
//!
//! // An invented AM station 10 kHz above the centre of a 96 kS/s recording, 0.5 s long.
//! let mut tx = AmToneTransmitter::new(0.5, 0.4, 700.0, 10_000.0, 96_000.0)?;
//! let mut iq = vec![Complex32::default(); 48_000];
//! tx.fill(&mut iq);
//!
//! // Synchronous AM, every option at the mode's default from the mode table.
//! let mut rx = SamReceiver::new(Mode::Sam, &ReceiverConfig::new(96_000.0, 10_000.0))?;
//! let audio = process_to_vec(&mut rx, &iq);
//! let m = rx.measurements();
//! assert_eq!(m.locked, Some(true));
//! assert!(audio.len() > 20_000);
//! # Ok::<(), amrx::Error>(())
//! ```
//!
//! ## Modules
//! - [`dsp`]: NCO, mixer, Kaiser FIR design, FIR, polyphase decimation, rational resampling,
//!   DC blocker.
//! - [`block`]: the block contract and its shared test.
//! - [`band`]: the whole band at once: what is on it (`amrx scan`).
//! - [`channelize`]: many channels from one stream (the polyphase FFT channelizer).
//! - [`demod`]: the receiver assembly, the mode table and every mode's detector.
//! - [`sync`]: carrier recovery loops.
//! - [`io`]: SigMF, IQ WAV and raw inputs; WAV and raw audio outputs.
//! - `sound` (feature `sound`): sound-card audio out and IQ in.
//! - [`measure`]: spectra, CNR, modulation depth, tone frequency, SINAD.
//! - [`synth`]: test-signal generation (messages, modulators, scenes).
//! - [`channel`]: the channel simulator (noise, fading, drift, impairments).
//! - [`lab`]: the noise-performance lab.
//! - [`pipeline`]: the streaming runtime and the receive job behind the CLI.
//!
//! ## Cargo features
//! Every feature of the crate, in one place:
//!
//! | feature | default | adds | extra crates |
//! |---|---|---|---|
//! | `cli` | on | the `amrx` command-line binary; turns on `lab` | clap, indicatif |
//! | `lab` | via `cli` | the noise lab's parallel sweep (`lab::run_sweep`) and PNG charts (`lab::write_png`) | rayon, plotters |
//! | `sound` | off | the `sound` module: sound-card audio out (`demod --play`), sound-card IQ in (`sound:NAME`), `amrx devices`; building needs the system's ALSA headers (Debian `libasound2-dev`) | cpal, ringbuf, alsa |
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

pub mod band;
pub mod block;
pub mod channel;
pub mod channelize;
pub mod demod;
pub mod dsp;
pub mod error;
pub mod io;
pub mod lab;
pub mod measure;
pub mod pipeline;
pub mod sample;
#[cfg(feature = "sound")]
pub mod sound;
pub mod sync;
pub mod synth;

pub use error::{Error, Result};

/// The README's code, compiled and run as a doc test.
#[cfg(doctest)]
#[doc = include_str!("../README.md")]
pub struct ReadmeDoctests;
pub use num_complex;
pub use num_complex::Complex32;
pub use sample::Sample;

/// The README's Rust snippets, compiled and run as doc tests with every warning an error, so
/// that what a reader copies compiles clean.
#[cfg(doctest)]
#[doc(test(attr(deny(warnings))))]
#[doc = include_str!("../README.md")]
pub struct ReadmeSnippets;

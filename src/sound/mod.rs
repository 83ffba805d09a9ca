//! Live sound (cargo feature `sound`): audio out to a sound card, IQ in from a sound card, and
//! the list of devices.
//!
//! ```text
//!  DSP thread ──write──▶ PlayoutFeed ──push──▶ [ SPSC ring ] ──pop──▶ Playout::render ──▶ device
//!  (AudioSink)           (paces: waits while      (ringbuf)            (the device callback:
//!                         the ring holds its                            pops, counts underruns,
//!                         target fill)                                  never allocates/locks)
//!
//!  device ──▶ CaptureTap::take ──push──▶ [ SPSC ring ] ──pop──▶ CaptureReader ──▶ IqSource::read
//!             (the capture callback: L = I,                       (the reading thread)
//!              R = Q; counts overruns)
//! ```
//!
//! The callback halves ([`Playout`], [`CaptureTap`]) are plain structs with no device in them,
//! so their steady state can be tested without a sound card (an allocation-counting test in
//! `tests/sound_callback.rs`); [`SoundSink`] and [`SoundSource`] put them on `cpal` streams.
//! Both sides keep a [`RateMeter`] on the device clock, from which the clock error in ppm is
//! reported ([`LiveStats`]).

mod capture;
mod device;
mod drift;
mod playout;
mod sink;
mod source;
mod stats;

pub use capture::{capture_ring, CaptureReader, CaptureTap};
pub use device::{list_devices, Capability, DeviceSummary};
pub use drift::{DriftCorrector, RingView, MAX_PPM};
pub use playout::{playout_ring, Playout, PlayoutFeed};
pub use sink::{SoundSink, SoundSinkSettings, DEFAULT_LATENCY_S};
pub use source::SoundSource;
pub use stats::{LiveFigures, LiveStats, RateMeter};

/// The prefix that names a sound-card input (`sound:default`, `sound:NAME`).
pub const INPUT_PREFIX: &str = "sound:";

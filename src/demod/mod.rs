//! Detectors and per-mode receivers.

pub mod am;
pub mod envelope;
pub mod mode;
pub mod receiver;

pub use am::{AmConfig, AmReceiver};
pub use envelope::EnvelopeDetector;
pub use mode::Mode;
pub use receiver::{Measurements, Receiver};

//! Detectors and per-mode receivers.

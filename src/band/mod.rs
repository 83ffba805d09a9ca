//! Watching a whole band: what is on it (`amrx scan`).
//!
//! One pass over the recording ([`BandRecorder`]) gathers the Welch-averaged spectrum, the
//! spectrum of the squared signal and a waterfall; [`detect()`] finds the emissions over a
//! CFAR threshold, times them from the waterfall, classes them and measures level, CNR and
//! 99 % occupied bandwidth; [`run_scan`] wires it to an input and [`ScanOutcome`] writes the
//! JSON, the table and the SigMF annotations. The pictures (`write_spectrum_png`,
//! `write_waterfall_png`) need the `lab` feature.

pub mod detect;
#[cfg(feature = "lab")]
pub mod picture;
pub mod recorder;
pub mod scan;

pub use detect::{detect, Class, Detection, Found, Rejected};
#[cfg(feature = "lab")]
pub use picture::{write_spectrum_png, write_waterfall_png};
pub use recorder::{scan_fft_len, BandRecord, BandRecorder};
pub use scan::{run_scan, ScanEmission, ScanOutcome, ScanReport, ScanRequest};

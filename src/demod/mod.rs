//! Detectors and per-mode receivers.
//!
//! Every receiver is a [`ChannelFrontEnd`] (tune, decimate, channel filter, spectrum), a
//! detector, and an [`AudioStage`] (DC removal, audio low-pass, resampling).

pub mod am;
pub mod audio_stage;
pub mod build;
pub mod config;
pub mod diode;
pub mod dsb;
pub mod envelope;
pub mod front_end;
pub mod iq_corrected;
pub mod isb;
pub mod mode;
pub(crate) mod pieces;
pub mod receiver;
pub mod sam;
pub mod sideband_selector;
pub mod ssb;
pub mod ssb_phasing;
pub mod ssb_weaver;
pub mod vsb;

pub use am::{AmConfig, AmReceiver};
pub use audio_stage::AudioStage;
pub use build::build_receiver;
pub use config::{LoopSettings, ReceiverConfig, ReceiverOptions, Sideband, SsbMethod};
pub use diode::{capacitor_voltage, diode_step, DiodeConfig, DiodeDetector};
pub use dsb::{DsbConfig, DsbReceiver};
pub use envelope::EnvelopeDetector;
pub use front_end::{ChannelFrontEnd, FrontEndConfig};
pub use iq_corrected::IqCorrected;
pub use isb::{IsbConfig, IsbReceiver};
pub use mode::Mode;
pub use receiver::{Measurements, Receiver};
pub use sam::{SamConfig, SamReceiver};
pub use ssb::{ssb_detector, SsbConfig, SsbDetector, SsbReceiver};
pub use ssb_phasing::{PhasingDetector, PhasingImbalance};
pub use ssb_weaver::WeaverDetector;
pub use vsb::{VsbConfig, VsbReceiver};

//! Many channels from one wideband stream: the polyphase FFT channelizer, the front end fed by
//! one of its bins, and `amrx watch` (every channel of a plan received, squelched and logged).

pub mod band_meter;
pub mod channelizer;
pub mod front_end;
pub mod watch;

pub use band_meter::BandMeter;
pub use channelizer::PolyphaseChannelizer;
pub use front_end::BinFrontEnd;
pub use watch::{
    run_watch, ChannelPlan, PlanFrequencies, WatchOutcome, WatchRequest, WatchSummary,
};

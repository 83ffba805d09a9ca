//! Many channels from one wideband stream: the polyphase FFT channelizer (the first part of
//! `amrx watch`; the watch runtime is not written yet).

pub mod channelizer;

pub use channelizer::PolyphaseChannelizer;

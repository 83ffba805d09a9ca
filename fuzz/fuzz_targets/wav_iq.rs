//! IQ WAV input: any bytes as a .wav file, opened and read to the end.
#![no_main]
use libfuzzer_sys::fuzz_target;

mod common;

fuzz_target!(|data: &[u8]| {
    let path = common::scratch().join("f.wav");
    std::fs::write(&path, data).unwrap();
    if let Ok(mut source) = amrx::io::WavIqSource::open(&path) {
        common::drain(&mut source, &[1, 7, 255]);
    }
});

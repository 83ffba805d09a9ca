//! SigMF metadata: any bytes as the .sigmf-meta beside a fixed 64-byte data file.
#![no_main]
use libfuzzer_sys::fuzz_target;

mod common;

fuzz_target!(|data: &[u8]| {
    let dir = common::scratch();
    let meta = dir.join("f.sigmf-meta");
    std::fs::write(&meta, data).unwrap();
    std::fs::write(dir.join("f.sigmf-data"), [0x3fu8; 64]).unwrap();
    for channel in [0, 1] {
        if let Ok(mut source) = amrx::io::SigmfSource::open(&meta, None, channel) {
            common::drain(&mut source, &[3, 0, 200]);
        }
    }
    let _ = amrx::pipeline::info::describe(&meta, &amrx::io::InputOptions::default());
});

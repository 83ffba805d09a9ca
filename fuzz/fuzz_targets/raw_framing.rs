//! Raw input framing: any bytes through `RawSource::from_reader` (standard input's path), in
//! the datatype picked by the first byte, read with buffer sizes from the second: the source
//! yields exactly the whole samples there are, all finite.
#![no_main]
use amrx::io::{IqSource, RawSource, SampleFormat};
use libfuzzer_sys::fuzz_target;
use std::io::Read;

mod common;

/// A reader that returns at most `step` bytes per call, like a pipe.
struct Trickle {
    data: Vec<u8>,
    at: usize,
    step: usize,
}

impl Read for Trickle {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = buf.len().min(self.step).min(self.data.len() - self.at);
        buf[..n].copy_from_slice(&self.data[self.at..self.at + n]);
        self.at += n;
        Ok(n)
    }
}

fuzz_target!(|data: &[u8]| {
    let [pick, step, rest @ ..] = data else {
        return;
    };
    let names = ["cu8", "ci8", "ci16_le", "cf32_le", "cf64_be", "ri16_le", "rf32_le"];
    // Not every name is a datatype amrx reads (real ones are refused by name).
    let Some(format) = SampleFormat::parse(names[usize::from(*pick) % names.len()]) else {
        return;
    };
    let reader = Trickle {
        data: rest.to_vec(),
        at: 0,
        step: usize::from(*step).max(1),
    };
    let source = RawSource::from_reader(
        Box::new(reader),
        std::path::Path::new("-"),
        format,
        48_000.0,
    );
    let whole = rest.len() / format.bytes_per_sample();
    match source {
        Err(_) => assert_eq!(whole, 0, "refused a stream with samples"),
        Ok(mut source) => {
            let mut buf = vec![amrx::Complex32::default(); 333];
            let mut total = 0;
            loop {
                let n = source.read(&mut buf).unwrap();
                if n == 0 {
                    break;
                }
                assert!(buf[..n].iter().all(|z| z.re.is_finite() && z.im.is_finite()));
                total += n;
            }
            assert_eq!(total, whole);
        }
    }
});

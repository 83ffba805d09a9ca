//! WAV output past the 32-bit RIFF size becomes RF64 (EBU Tech 3306, "RF64: An extended File
//! Format for Audio", 2009): the limit is injected so that the test writes kilobytes, not 4 GiB.
//! The files are left in target/tmp/io_rf64/ for tests/io_rf64_check.py (CI), a reader
//! written from the EBU document rather than from this code.

use amrx::io::{AudioSink, WavAudioSink, WavEncoding};
use std::path::PathBuf;

fn out_dir() -> PathBuf {
    let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("io_rf64");
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn u32_at(b: &[u8], at: usize) -> u32 {
    u32::from_le_bytes(b[at..at + 4].try_into().unwrap())
}

fn u64_at(b: &[u8], at: usize) -> u64 {
    u64::from_le_bytes(b[at..at + 8].try_into().unwrap())
}

/// Writes `frames` stereo frames of a ramp with a RIFF limit of `limit` bytes.
fn write(name: &str, pcm16: bool, frames: usize, limit: u64) -> (PathBuf, Vec<f32>) {
    let path = out_dir().join(name);
    let samples: Vec<f32> = (0..2 * frames)
        .map(|i| (i % 1000) as f32 / 1000.0 - 0.5)
        .collect();
    let mut sink = Box::new(
        WavAudioSink::create(
            &path,
            8000,
            2,
            if pcm16 {
                WavEncoding::Pcm16
            } else {
                WavEncoding::Float32
            },
        )
        .unwrap()
        .with_riff_limit(limit),
    );
    for piece in samples.chunks(777) {
        sink.write(piece).unwrap();
    }
    sink.finish().unwrap();
    (path, samples)
}

#[test]
fn past_the_limit_the_header_is_rf64_with_64_bit_sizes() {
    let frames = 5000;
    let (path, samples) = write("float-rf64.wav", false, frames, 1000);
    let b = std::fs::read(&path).unwrap();
    // EBU Tech 3306 §3: "RF64", RIFF size -1, "WAVE", then "ds64" first.
    assert_eq!(&b[0..4], b"RF64");
    assert_eq!(u32_at(&b, 4), u32::MAX);
    assert_eq!(&b[8..12], b"WAVE");
    assert_eq!(&b[12..16], b"ds64");
    let data_len = (samples.len() * 4) as u64;
    assert_eq!(u64_at(&b, 20), b.len() as u64 - 8, "ds64 riffSize");
    assert_eq!(u64_at(&b, 28), data_len, "ds64 dataSize");
    assert_eq!(u64_at(&b, 36), frames as u64, "ds64 sampleCount");
    let data_at = b.len() - data_len as usize;
    assert_eq!(&b[data_at - 8..data_at - 4], b"data");
    assert_eq!(u32_at(&b, data_at - 4), u32::MAX, "data size -1: see ds64");
    for (i, x) in samples.iter().enumerate() {
        let at = data_at + 4 * i;
        assert_eq!(f32::from_le_bytes(b[at..at + 4].try_into().unwrap()), *x);
    }
}

#[test]
fn below_the_limit_the_file_is_plain_riff_that_hound_reads() {
    for (name, pcm16) in [("float-riff.wav", false), ("pcm16-riff.wav", true)] {
        let (path, samples) = write(name, pcm16, 3000, u64::from(u32::MAX));
        let b = std::fs::read(&path).unwrap();
        assert_eq!(&b[0..4], b"RIFF");
        assert_eq!(u32_at(&b, 4) as usize, b.len() - 8);
        assert_eq!(&b[12..16], b"JUNK", "room kept for a ds64 chunk");
        let reader = hound::WavReader::open(&path).unwrap();
        assert_eq!(reader.spec().channels, 2);
        assert_eq!(reader.len() as usize, samples.len());
    }
    // An RF64 PCM file for the external check too.
    write("pcm16-rf64.wav", true, 3000, 100);
}

//! Raw and IQ WAV sources, dispatch by name in `open_input`, and the audio sinks. WAV files are
//! written and read back with hound, which the project did not write.

use amrx::io::{
    open_input, AudioSink, InputOptions, IqSource, RawAudioSink, RawSource, SampleFormat,
    SigmfWriter, WavAudioSink, WavEncoding, WavIqSource,
};
mod common;

use amrx::{Complex32, Error};
use common::{c, read_all, TempDir};
use rand::{rngs::StdRng, RngExt, SeedableRng};
use std::io::{Cursor, Write};
use std::path::Path;
use std::sync::{Arc, Mutex};

fn options(format: Option<SampleFormat>, rate: Option<f64>) -> InputOptions {
    InputOptions {
        format,
        rate,
        channel: 0,
        ..InputOptions::default()
    }
}

fn assert_names(err: &Error, file: &str, words: &str) {
    let text = err.to_string();
    assert!(text.contains(file) && text.contains(words), "{text}");
}

// ---- raw ----

#[test]
fn raw_file_decodes_known_cu8_bytes_and_knows_its_length() {
    let dir = TempDir::new("raw");
    let path = dir.path("capture.bin");
    std::fs::write(&path, [0u8, 255, 255, 0, 128, 127, 42]).unwrap();
    let mut s = RawSource::open(&path, SampleFormat::Cu8, 2.4e6).unwrap();
    assert_eq!(s.info().total_samples, Some(3));
    assert_eq!(s.info().datatype, "cu8");
    let got = read_all(&mut s, 2);
    let half = 0.5 / 127.5;
    assert_eq!(got, [c(-1.0, 1.0), c(1.0, -1.0), c(half, -half)]);
    assert_eq!(
        s.warnings(),
        ["1 trailing byte ignored (not a whole sample)"]
    );
}

/// A reader that gives out random small pieces, like a pipe.
struct Pieces {
    data: Cursor<Vec<u8>>,
    rng: StdRng,
}

impl std::io::Read for Pieces {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = buf.len().min(self.rng.random_range(1..20));
        self.data.read(&mut buf[..n])
    }
}

#[test]
fn raw_reader_output_does_not_depend_on_chunking() {
    let mut rng = StdRng::seed_from_u64(9);
    let bytes: Vec<u8> = (0..8 * 3000 + 3).map(|_| rng.random()).collect();
    let open = |seed| {
        let reader = Pieces {
            data: Cursor::new(bytes.clone()),
            rng: StdRng::seed_from_u64(seed),
        };
        RawSource::from_reader(Box::new(reader), Path::new("-"), SampleFormat::Cf32Le, 1e6).unwrap()
    };
    // Expected values decoded independently with std's from_le_bytes, NaN/inf set to zero.
    let f = |i: usize| f32::from_le_bytes(bytes[i..i + 4].try_into().unwrap());
    let finite = |x: f32| if x.is_finite() { x } else { f32::NAN };
    let expected: Vec<Complex32> = (0..3000)
        .map(|k| {
            let (re, im) = (finite(f(8 * k)), finite(f(8 * k + 4)));
            if re.is_nan() || im.is_nan() {
                c(0.0, 0.0)
            } else {
                c(re, im)
            }
        })
        .collect();
    let replaced = expected
        .iter()
        .zip(0..)
        .filter(|(_, k)| !(f(8 * k).is_finite() && f(8 * k + 4).is_finite()));
    let replaced = replaced.count();
    assert!(replaced > 0, "random bytes include NaN patterns");
    for (seed, chunk) in [(1, 1), (2, 7), (3, 1000), (4, 4096)] {
        let mut s = open(seed);
        assert_eq!(read_all(&mut s, chunk), expected, "chunk {chunk}");
        assert_eq!(
            s.warnings(),
            [
                format!("{replaced} non-finite samples replaced with zero"),
                "3 trailing bytes ignored (not a whole sample)".to_string()
            ]
        );
    }
}

#[test]
fn raw_real_formats_decode_to_x_plus_0j() {
    let bytes: Vec<u8> = [-32768i16, 16384, 32767]
        .iter()
        .flat_map(|v| v.to_le_bytes())
        .collect();
    let mut s = RawSource::from_reader(
        Box::new(Cursor::new(bytes)),
        Path::new("-"),
        SampleFormat::Ri16Le,
        8e3,
    )
    .unwrap();
    assert_eq!(
        read_all(&mut s, 10),
        [c(-1.0, 0.0), c(0.5, 0.0), c(32767.0 / 32768.0, 0.0)]
    );
}

#[test]
fn raw_errors_name_the_file() {
    let dir = TempDir::new("rawerr");
    let empty = dir.path("empty.iq");
    std::fs::write(&empty, []).unwrap();
    let err = RawSource::open(&empty, SampleFormat::Ci16Le, 1e6)
        .err()
        .unwrap();
    assert!(matches!(err, Error::InvalidFile { .. }));
    assert_names(&err, "empty.iq", "no samples");
    let missing = dir.path("missing.iq");
    let err = RawSource::open(&missing, SampleFormat::Ci16Le, 1e6)
        .err()
        .unwrap();
    assert!(matches!(&err, Error::Io { path, .. } if path == &missing));
    let err = RawSource::open(&empty, SampleFormat::Ci16Le, 0.0)
        .err()
        .unwrap();
    assert!(matches!(
        err,
        Error::InvalidParameter {
            name: "sample_rate",
            ..
        }
    ));
}

// ---- IQ WAV ----

fn write_wav(path: &Path, channels: u16, bits: u16, float: bool, values: &[i32]) {
    let spec = hound::WavSpec {
        channels,
        sample_rate: 96_000,
        bits_per_sample: bits,
        sample_format: if float {
            hound::SampleFormat::Float
        } else {
            hound::SampleFormat::Int
        },
    };
    let mut w = hound::WavWriter::create(path, spec).unwrap();
    for &v in values {
        match (float, bits) {
            (true, _) => w.write_sample(v as f32 / 4.0).unwrap(),
            (false, 8) => w.write_sample(v as i8).unwrap(),
            (false, 16) => w.write_sample(v as i16).unwrap(),
            (false, _) => w.write_sample(v).unwrap(),
        }
    }
    w.finalize().unwrap();
}

/// Bits, float, codes written, expected samples, datatype name.
type WavCase = (u16, bool, Vec<i32>, Vec<Complex32>, &'static str);

#[test]
fn wav_iq_reads_every_supported_sample_width() {
    let dir = TempDir::new("wav");
    // (bits, float, codes written, expected I/Q values). hound takes 8-bit as signed and
    // stores it offset by 128, so code -128 is byte 0 → −1.0.
    let cases: [WavCase; 5] = [
        (8, false, vec![-128, 64], vec![c(-1.0, 0.5)], "wav-u8"),
        (
            16,
            false,
            vec![-32768, 16384, 32767, 0],
            vec![c(-1.0, 0.5), c(32767.0 / 32768.0, 0.0)],
            "wav-i16",
        ),
        (
            24,
            false,
            vec![-8_388_608, 4_194_304],
            vec![c(-1.0, 0.5)],
            "wav-i24",
        ),
        (
            32,
            false,
            vec![i32::MIN, 1 << 30],
            vec![c(-1.0, 0.5)],
            "wav-i32",
        ),
        (
            32,
            true,
            vec![-4, 2, 1, 0],
            vec![c(-1.0, 0.5), c(0.25, 0.0)],
            "wav-f32",
        ),
    ];
    for (bits, float, codes, want, datatype) in cases {
        let path = dir.path(&format!("iq-{datatype}.wav"));
        write_wav(&path, 2, bits, float, &codes);
        let mut s = WavIqSource::open(&path).unwrap();
        assert_eq!(s.info().datatype, datatype);
        assert_eq!(s.info().sample_rate, 96_000.0);
        assert_eq!(s.info().total_samples, Some(want.len() as u64));
        assert_eq!(read_all(&mut s, 1), want, "{datatype}");
        assert!(s.warnings().is_empty());
    }
}

#[test]
fn wav_iq_chunking_does_not_matter_and_trailing_chunks_are_not_samples() {
    let dir = TempDir::new("wavchunk");
    let path = dir.path("long.wav");
    let mut rng = StdRng::seed_from_u64(2);
    let codes: Vec<i32> = (0..2 * 3001)
        .map(|_| rng.random_range(-32768..32768))
        .collect();
    write_wav(&path, 2, 16, false, &codes);
    // A chunk after the data chunk (as some writers add) must not be read as samples.
    let mut file = std::fs::OpenOptions::new()
        .append(true)
        .open(&path)
        .unwrap();
    file.write_all(b"LIST\x04\x00\x00\x00abcd").unwrap();
    drop(file);
    let expected: Vec<Complex32> = codes
        .chunks(2)
        .map(|p| c(p[0] as f32 / 32768.0, p[1] as f32 / 32768.0))
        .collect();
    for chunk in [1, 7, 1000, 5000] {
        let mut s = WavIqSource::open(&path).unwrap();
        assert_eq!(read_all(&mut s, chunk), expected, "chunk {chunk}");
        assert!(s.warnings().is_empty());
    }
}

#[test]
fn wav_errors() {
    let dir = TempDir::new("waverr");
    let mono = dir.path("mono.wav");
    write_wav(&mono, 1, 16, false, &[1, 2, 3]);
    let err = WavIqSource::open(&mono).err().unwrap();
    assert!(matches!(err, Error::InvalidFile { .. }));
    assert_names(
        &err,
        "mono.wav",
        "WAV has 1 channel; IQ needs 2 (I left, Q right)",
    );
    let garbage = dir.path("garbage.wav");
    std::fs::write(&garbage, b"not a wave file at all").unwrap();
    let err = WavIqSource::open(&garbage).err().unwrap();
    assert!(
        matches!(err, Error::InvalidFile { .. } | Error::Io { .. }),
        "{err}"
    );
    assert_names(&err, "garbage.wav", "");
    let empty = dir.path("empty.wav");
    write_wav(&empty, 2, 16, false, &[]);
    assert_names(
        &WavIqSource::open(&empty).err().unwrap(),
        "empty.wav",
        "no samples",
    );
    let missing = dir.path("missing.wav");
    assert!(matches!(WavIqSource::open(&missing), Err(Error::Io { .. })));
}

// ---- open_input ----

#[test]
fn open_input_dispatches_by_name() {
    let dir = TempDir::new("dispatch");
    let base = dir.path("rec");
    let mut w = SigmfWriter::create(&base, SampleFormat::Ci16Le, 1e6, Some(1e7), "").unwrap();
    w.write(&[c(0.5, -0.5)]).unwrap();
    w.finish().unwrap();
    for name in [
        "rec.sigmf-meta",
        "rec.sigmf-data",
        "rec.sigmf-",
        "rec.",
        "rec",
    ] {
        let s = open_input(&dir.path(name), &InputOptions::default()).unwrap();
        assert_eq!(s.info().datatype, "ci16_le", "{name}");
        assert_eq!(s.info().centre_frequency, Some(1e7));
    }
    let wav = dir.path("iq.WAV");
    write_wav(&wav, 2, 16, false, &[1, 2]);
    assert_eq!(
        open_input(&wav, &InputOptions::default())
            .unwrap()
            .info()
            .datatype,
        "wav-i16"
    );
    let raw = dir.path("iq.dat");
    std::fs::write(&raw, [1u8, 2, 3, 4]).unwrap();
    let s = open_input(&raw, &options(Some(SampleFormat::Ci8), Some(1e3))).unwrap();
    assert_eq!(s.info().total_samples, Some(2));
}

#[test]
fn open_input_errors() {
    let dir = TempDir::new("openerr");
    let raw = dir.path("iq.dat");
    std::fs::write(&raw, [1u8, 2, 3, 4]).unwrap();
    let err = open_input(&raw, &options(None, Some(1e3))).err().unwrap();
    assert!(matches!(err, Error::InvalidFile { .. }));
    assert_names(
        &err,
        "iq.dat",
        "unknown input type; name the file after its datatype",
    );
    let err = open_input(&raw, &options(Some(SampleFormat::Cu8), None))
        .err()
        .unwrap();
    assert_names(&err, "iq.dat", "--rate");

    let missing = dir.path("gone.dat");
    let err = open_input(&missing, &options(None, None)).err().unwrap();
    assert!(
        matches!(&err, Error::Io { path, .. } if path == &missing),
        "{err}"
    );
    let err = open_input(&dir.path("gone.sigmf-meta"), &options(None, None))
        .err()
        .unwrap();
    assert!(matches!(err, Error::Io { .. }), "{err}");

    let empty = dir.path("empty.dat");
    std::fs::write(&empty, []).unwrap();
    let err = open_input(&empty, &options(Some(SampleFormat::Cu8), Some(1.0)))
        .err()
        .unwrap();
    assert_names(&err, "empty.dat", "no samples");

    let wav = dir.path("iq.wav");
    write_wav(&wav, 2, 16, false, &[1, 2]);
    let mut with_channel = options(None, None);
    with_channel.channel = 1;
    let err = open_input(&wav, &with_channel).err().unwrap();
    assert!(
        matches!(
            err,
            Error::InvalidParameter {
                name: "channel",
                ..
            }
        ),
        "{err}"
    );

    with_channel.format = Some(SampleFormat::Cu8);
    with_channel.rate = Some(1.0);
    let err = open_input(&raw, &with_channel).err().unwrap();
    assert!(
        matches!(
            err,
            Error::InvalidParameter {
                name: "channel",
                ..
            }
        ),
        "{err}"
    );

    let base = dir.path("rec");
    let mut w = SigmfWriter::create(&base, SampleFormat::Ci16Le, 1e6, None, "").unwrap();
    w.write(&[c(0.5, -0.5)]).unwrap();
    w.finish().unwrap();
    let err = open_input(&base, &options(Some(SampleFormat::Cu8), None))
        .err()
        .unwrap();
    assert!(
        matches!(err, Error::InvalidParameter { name: "format", .. }),
        "{err}"
    );
    let archive = dir.path("pack.sigmf");
    std::fs::write(&archive, [0u8; 16]).unwrap();
    assert_names(
        &open_input(&archive, &options(None, None)).err().unwrap(),
        "pack.sigmf",
        "archive",
    );
}

// ---- audio sinks ----

#[test]
fn wav_audio_sink_writes_float_and_pcm16() {
    let dir = TempDir::new("audio");
    let samples = [0.5f32, -0.25, f32::NAN, 1.5, -2.0, f32::INFINITY];
    let float_path = dir.path("out-f32.wav");
    let mut sink: Box<dyn AudioSink> =
        Box::new(WavAudioSink::create(&float_path, 8000, 2, WavEncoding::Float32).unwrap());
    sink.write(&samples[..4]).unwrap();
    sink.write(&samples[4..]).unwrap();
    sink.finish().unwrap();
    let mut r = hound::WavReader::open(&float_path).unwrap();
    assert_eq!(r.spec().channels, 2);
    assert_eq!(r.spec().sample_rate, 8000);
    assert_eq!(r.spec().sample_format, hound::SampleFormat::Float);
    let got: Vec<f32> = r.samples::<f32>().map(Result::unwrap).collect();
    assert_eq!(got, [0.5, -0.25, 0.0, 1.5, -2.0, 0.0]);

    let pcm_path = dir.path("out-i16.wav");
    let mut sink: Box<dyn AudioSink> =
        Box::new(WavAudioSink::create(&pcm_path, 8000, 1, WavEncoding::Pcm16).unwrap());
    sink.write(&samples).unwrap();
    sink.finish().unwrap();
    let mut r = hound::WavReader::open(&pcm_path).unwrap();
    assert_eq!(r.spec().bits_per_sample, 16);
    let got: Vec<i16> = r.samples::<i16>().map(Result::unwrap).collect();
    assert_eq!(got, [16384, -8192, 0, 32767, -32768, 0]);

    let err = WavAudioSink::create(
        &dir.path("no/such/dir/out.wav"),
        8000,
        1,
        WavEncoding::Float32,
    );
    assert!(matches!(&err, Err(Error::Io { path, .. }) if path.ends_with("out.wav")));
}

/// A `Write` whose bytes the test can look at after the sink is gone.
#[derive(Clone, Default)]
struct Shared(Arc<Mutex<Vec<u8>>>);

impl Write for Shared {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        self.0.lock().unwrap().extend_from_slice(buf);
        Ok(buf.len())
    }
    fn flush(&mut self) -> std::io::Result<()> {
        Ok(())
    }
}

#[test]
fn raw_audio_sink_writes_little_endian_f32() {
    let out = Shared::default();
    let mut sink: Box<dyn AudioSink> = Box::new(RawAudioSink::new(Box::new(out.clone())));
    sink.write(&[1.0, f32::NAN, -0.5]).unwrap();
    sink.finish().unwrap();
    let bytes = out.0.lock().unwrap().clone();
    let want: Vec<u8> = [1.0f32, 0.0, -0.5]
        .iter()
        .flat_map(|x| x.to_le_bytes())
        .collect();
    assert_eq!(bytes, want);
}

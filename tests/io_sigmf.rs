//! SigMF writer → reader round trips, multi-channel selection, error cases, and a check of the
//! written metadata against the published SigMF schema (tests/data/sigmf-schema.json).

use amrx::io::{IqSource, SampleFormat, SigmfAnnotation, SigmfSource, SigmfWriter};
mod common;

use amrx::{Complex32, Error};
use common::{c, read_all, TempDir};
use rand::{rngs::StdRng, RngExt, SeedableRng};
use serde_json::Value;
use std::path::{Path, PathBuf};

fn write_recording(base: &Path, format: SampleFormat, samples: &[Complex32]) {
    let mut w = SigmfWriter::create(base, format, 48_000.0, Some(7.1e6), "test tone").unwrap();
    w.write(samples).unwrap();
    w.finish().unwrap();
}

fn write_meta(path: &Path, meta: &str) {
    std::fs::write(path, meta).unwrap();
}

/// Values every format represents exactly (or, for integers, at a known code).
fn exact_values(format: SampleFormat) -> Vec<(Complex32, Complex32)> {
    use SampleFormat::*;
    let identity = |v: &[Complex32]| v.iter().map(|&x| (x, x)).collect::<Vec<_>>();
    let real = |v: &[Complex32]| v.iter().map(|&x| (x, c(x.re, 0.0))).collect::<Vec<_>>();
    match format {
        // (b − 127.5)/127.5: byte 0 → −1, 255 → +1; 2.0 clips to 255.
        Cu8 => vec![
            (c(-1.0, 1.0), c(-1.0, 1.0)),
            (c(2.0, -3.0), c(1.0, -1.0)),
            (c(0.0, 0.0), c(0.5 / 127.5, 0.5 / 127.5)),
        ],
        Ci8 => vec![
            (c(-1.0, 0.5), c(-1.0, 0.5)),
            (c(1.0, 0.0), c(127.0 / 128.0, 0.0)),
        ],
        Ci16Le | Ci16Be => vec![
            (c(-1.0, 0.25), c(-1.0, 0.25)),
            (c(1.0, -1.5), c(32767.0 / 32768.0, -1.0)),
        ],
        Ci32Le => vec![
            (c(-1.0, 0.125), c(-1.0, 0.125)),
            (c(1.5, 0.0), c(1.0, 0.0)), // 2³¹ − 1 rounds to 1.0 in f32
        ],
        Ri16Le => vec![(c(-1.0, 0.7), c(-1.0, 0.0)), (c(0.5, -0.5), c(0.5, 0.0))],
        Rf32Le => real(&[c(3.5, 1.0), c(-1e-3, 2.0)]),
        _ => identity(&[c(3.5, -2.25), c(1e-7, -123.0)]),
    }
}

/// The round trip error bound: half a code step for integers (rounding), exact for floats.
fn tolerance(format: SampleFormat) -> f32 {
    match format.bytes_per_component() {
        1 if format == SampleFormat::Cu8 => 0.5 / 127.5,
        1 => 0.5 / 128.0,
        2 => 0.5 / 32768.0,
        4 if format == SampleFormat::Ci32Le => 1e-7, // f32 holds 24 of the 31 bits
        _ => 0.0,
    }
}

#[test]
fn every_datatype_round_trips_with_known_values() {
    let dir = TempDir::new("roundtrip");
    let mut rng = StdRng::seed_from_u64(3);
    for format in SampleFormat::ALL {
        let exact = exact_values(format);
        // Inside ±0.99 so that no value clips (clipping is covered by the exact values).
        let random: Vec<Complex32> = (0..999)
            .map(|_| c(rng.random_range(-0.99..0.99), rng.random_range(-0.99..0.99)))
            .collect();
        let mut written: Vec<Complex32> = exact.iter().map(|p| p.0).collect();
        written.extend_from_slice(&random);
        let base = dir.path(format.name());
        write_recording(&base, format, &written);

        let mut source = SigmfSource::open(&base.with_extension("sigmf-meta"), None, 0).unwrap();
        let info = source.info().clone();
        assert_eq!(info.datatype, format.name());
        assert_eq!(info.sample_rate, 48_000.0);
        assert_eq!(info.centre_frequency, Some(7.1e6));
        assert_eq!(info.total_samples, Some(written.len() as u64));
        let got = read_all(&mut source, 100);
        assert_eq!(got.len(), written.len(), "{format}");
        for (i, (_, want)) in exact.iter().enumerate() {
            assert_eq!(got[i], *want, "{format} exact sample {i}");
        }
        // Slack 1e-6: the scaling itself runs in f32 and may cross a rounding boundary.
        let tol = tolerance(format) + 1e-6;
        for (g, w) in got[exact.len()..].iter().zip(&random) {
            let w_im = if format.is_complex() { w.im } else { 0.0 };
            assert!(
                (g.re - w.re).abs() <= tol && (g.im - w_im).abs() <= tol,
                "{format} {g} {w}"
            );
        }
        assert!(
            source.warnings().is_empty(),
            "{format}: {:?}",
            source.warnings()
        );
    }
}

#[test]
fn data_file_and_short_names_open_the_same_pair() {
    let dir = TempDir::new("names");
    let base = dir.path("rec");
    let samples = [c(0.5, -0.5), c(0.25, 0.75)];
    write_recording(&base, SampleFormat::Cf32Le, &samples);
    for name in [
        "rec.sigmf-meta",
        "rec.sigmf-data",
        "rec.sigmf-",
        "rec.",
        "rec",
    ] {
        let mut s = SigmfSource::open(&dir.path(name), None, 0).unwrap();
        assert_eq!(read_all(&mut s, 8), samples, "{name}");
        assert_eq!(s.info().path, dir.path("rec.sigmf-data"));
    }
}

#[test]
fn reading_in_pieces_of_any_size_gives_the_same_samples() {
    let dir = TempDir::new("chunks");
    let base = dir.path("rec");
    let mut rng = StdRng::seed_from_u64(5);
    let samples: Vec<Complex32> = (0..5000)
        .map(|_| c(rng.random_range(-1.0..1.0), rng.random_range(-1.0..1.0)))
        .collect();
    write_recording(&base, SampleFormat::Ci16Le, &samples);
    let open = || SigmfSource::open(&base, None, 0).unwrap();
    let reference = read_all(&mut open(), 5000);
    for chunk in [1, 7, 1000] {
        assert_eq!(read_all(&mut open(), chunk), reference, "chunk {chunk}");
    }
    let mut source = open();
    let mut all = Vec::new();
    let mut buf = vec![c(0.0, 0.0); 600];
    loop {
        let len = rng.random_range(0..600);
        let n = source.read(&mut buf[..len]).unwrap();
        if n == 0 && len > 0 {
            break;
        }
        all.extend_from_slice(&buf[..n]);
    }
    assert_eq!(all, reference);
}

/// Writes `frames` of `channels` interleaved ci16_le samples; channel k of frame i is
/// `(i·channels + k) / 32768` on I and its negative on Q.
fn write_multichannel(dir: &TempDir, channels: usize, frames: usize) -> PathBuf {
    let mut data = Vec::new();
    for i in 0..frames {
        for k in 0..channels {
            let v = (i * channels + k) as i16;
            data.extend_from_slice(&v.to_le_bytes());
            data.extend_from_slice(&(-v).to_le_bytes());
        }
    }
    std::fs::write(dir.path("multi.sigmf-data"), data).unwrap();
    let meta = format!(
        r#"{{"global": {{"core:datatype": "ci16_le", "core:version": "1.2.0",
            "core:sample_rate": 1000, "core:num_channels": {channels}, "vendor:extra": [1, 2]}},
            "captures": [{{"core:sample_start": 0, "core:frequency": -5.5}}],
            "annotations": []}}"#
    );
    let meta_path = dir.path("multi.sigmf-meta");
    write_meta(&meta_path, &meta);
    meta_path
}

#[test]
fn multi_channel_recordings_return_only_the_chosen_channel() {
    let dir = TempDir::new("multi");
    let meta = write_multichannel(&dir, 3, 257);
    for channel in 0..3 {
        let mut s = SigmfSource::open(&meta, None, channel).unwrap();
        assert_eq!(s.info().num_channels, 3);
        assert_eq!(s.info().total_samples, Some(257));
        assert_eq!(s.info().centre_frequency, Some(-5.5));
        let got = read_all(&mut s, 10);
        let want: Vec<Complex32> = (0..257)
            .map(|i| {
                let v = (i * 3 + channel) as f32 / 32768.0;
                c(v, -v)
            })
            .collect();
        assert_eq!(got, want, "channel {channel}");
    }
    let err = SigmfSource::open(&meta, None, 3).err().unwrap();
    assert_file_error(&err, "multi.sigmf-meta", "channel 3");
}

fn assert_file_error(err: &Error, file: &str, words: &str) {
    let text = err.to_string();
    assert!(matches!(err, Error::InvalidFile { .. }), "{text}");
    assert!(text.contains(file) && text.contains(words), "{text}");
    assert!(!text.contains('\n'), "one line: {text}");
}

fn open_err(meta: &Path, rate: Option<f64>) -> Error {
    SigmfSource::open(meta, rate, 0).err().expect("should fail")
}

#[test]
fn bad_recordings_give_errors_naming_the_file() {
    let dir = TempDir::new("errors");
    let meta = dir.path("bad.sigmf-meta");
    let data = dir.path("bad.sigmf-data");

    // Missing meta, then missing data: Error::Io naming the missing file.
    let err = open_err(&dir.path("none.sigmf-data"), None);
    assert!(
        matches!(&err, Error::Io { path, .. } if path.ends_with("none.sigmf-meta")),
        "{err}"
    );
    write_meta(
        &meta,
        r#"{"global": {"core:datatype": "cu8", "core:sample_rate": 1e6}}"#,
    );
    let err = open_err(&meta, None);
    assert!(
        matches!(&err, Error::Io { path, .. } if path.ends_with("bad.sigmf-data")),
        "{err}"
    );

    std::fs::write(&data, []).unwrap();
    assert_file_error(&open_err(&meta, None), "bad.sigmf-data", "no samples");
    std::fs::write(&data, [1u8]).unwrap();
    assert_file_error(&open_err(&meta, None), "bad.sigmf-data", "no samples");
    std::fs::write(&data, [1u8, 2, 3, 4, 5]).unwrap();

    let cases = [
        (r#"{"global": {"core:datatype": "cu8", "#, "not valid JSON"),
        (r#"{"global": {"core:datatype": 8}}"#, "does not fit SigMF"),
        (r#"{"captures": []}"#, "does not fit SigMF"),
        (
            r#"{"global": {"core:sample_rate": 1e6}}"#,
            "core:datatype missing",
        ),
        (
            r#"{"global": {"core:datatype": "ci32_be", "core:sample_rate": 1}}"#,
            "cu8, ci8",
        ),
        (
            r#"{"global": {"core:datatype": "cu8"}}"#,
            "core:sample_rate missing; give --rate",
        ),
        (
            r#"{"global": {"core:datatype": "cu8", "core:sample_rate": -2}}"#,
            "not positive",
        ),
        (
            r#"{"global": {"core:datatype": "cu8", "core:sample_rate": 0}}"#,
            "not positive",
        ),
        (
            r#"{"global": {"core:datatype": "cu8", "core:sample_rate": 1, "core:num_channels": 0}}"#,
            "core:num_channels 0",
        ),
        (
            r#"{"global": {"core:datatype": "cu8", "core:sample_rate": 1, "core:trailing_bytes": 9}}"#,
            "core:trailing_bytes",
        ),
    ];
    for (text, words) in cases {
        write_meta(&meta, text);
        assert_file_error(&open_err(&meta, None), "bad.sigmf-meta", words);
    }
    write_meta(&meta, "{\n  \"global\": {,}\n}");
    let text = open_err(&meta, None).to_string();
    assert!(
        text.contains("line 2 column"),
        "JSON position given: {text}"
    );

    // A missing rate is supplied by --rate; a bad --rate is a parameter error.
    write_meta(&meta, r#"{"global": {"core:datatype": "cu8"}}"#);
    let s = SigmfSource::open(&meta, Some(2e6), 0).unwrap();
    assert_eq!(s.info().sample_rate, 2e6);
    assert!(s.warnings().is_empty());
    let err = open_err(&meta, Some(f64::NAN));
    assert!(
        matches!(
            err,
            Error::InvalidParameter {
                name: "sample_rate",
                ..
            }
        ),
        "{err}"
    );
}

#[test]
fn explicit_rate_overrides_the_file_and_is_noted() {
    let dir = TempDir::new("override");
    let base = dir.path("rec");
    write_recording(&base, SampleFormat::Cu8, &[c(0.0, 0.0)]);
    let s = SigmfSource::open(&base, Some(96_000.0), 0).unwrap();
    assert_eq!(s.info().sample_rate, 96_000.0);
    assert_eq!(
        s.warnings(),
        ["the given rate 96000 Hz overrides core:sample_rate 48000 Hz"]
    );
}

#[test]
fn non_finite_samples_and_trailing_bytes_are_reported() {
    let dir = TempDir::new("nonfinite");
    let mut data = Vec::new();
    let values = [
        1.0f32,
        2.0,
        f32::NAN,
        0.5,
        f32::INFINITY,
        f32::NEG_INFINITY,
        -1.0,
        0.0,
    ];
    for v in values {
        data.extend_from_slice(&v.to_le_bytes());
    }
    data.extend_from_slice(&[1, 2, 3]);
    std::fs::write(dir.path("nf.sigmf-data"), data).unwrap();
    let meta = r#"{"global": {"core:datatype": "cf32_le", "core:sample_rate": 10}}"#;
    write_meta(&dir.path("nf.sigmf-meta"), meta);
    let mut s = SigmfSource::open(&dir.path("nf"), None, 0).unwrap();
    assert_eq!(s.info().total_samples, Some(4));
    let got = read_all(&mut s, 3);
    assert_eq!(got, [c(1.0, 2.0), c(0.0, 0.0), c(0.0, 0.0), c(-1.0, 0.0)]);
    assert_eq!(
        s.warnings(),
        [
            "2 non-finite samples replaced with zero",
            "3 trailing bytes ignored (not a whole sample)"
        ]
    );
}

#[test]
fn annotations_are_written_and_read_back() {
    let dir = TempDir::new("annot");
    let base = dir.path("rec");
    let mut w = SigmfWriter::create(&base, SampleFormat::Ci8, 1e6, None, "two carriers").unwrap();
    w.write(&[c(0.1, 0.2); 10]).unwrap();
    let first = SigmfAnnotation {
        sample_start: 2,
        sample_count: Some(5),
        freq_lower_edge: Some(-4500.0),
        freq_upper_edge: Some(4500.0),
        label: Some("A3E carrier".into()),
        comment: Some("invented test emission".into()),
    };
    let second = SigmfAnnotation {
        sample_start: 7,
        ..Default::default()
    };
    w.annotate(first.clone());
    w.annotate(second.clone());
    w.finish().unwrap();
    let s = SigmfSource::open(&base, None, 0).unwrap();
    assert_eq!(s.annotations(), [first, second]);
    assert_eq!(s.info().centre_frequency, None);
}

#[test]
fn writer_rejects_what_sigmf_cannot_hold() {
    let dir = TempDir::new("writer");
    let base = dir.path("rec");
    for rate in [0.0, 0.5, f64::NAN, 2e12] {
        let r = SigmfWriter::create(&base, SampleFormat::Cu8, rate, None, "");
        assert!(
            matches!(r, Err(Error::InvalidParameter { .. })),
            "rate {rate}"
        );
    }
    let r = SigmfWriter::create(&base, SampleFormat::Cu8, 1e6, Some(f64::INFINITY), "");
    assert!(matches!(r, Err(Error::InvalidParameter { .. })));
    let r = SigmfWriter::create(
        &dir.path("no/such/dir/rec"),
        SampleFormat::Cu8,
        1e6,
        None,
        "",
    );
    assert!(matches!(&r, Err(Error::Io { path, .. }) if path.ends_with("rec.sigmf-data")));

    let mut w = SigmfWriter::create(&base, SampleFormat::Cf32Le, 1e6, None, "").unwrap();
    w.write(&[c(f32::NAN, 1.0), c(1.0, 1.0)]).unwrap();
    assert_eq!(w.non_finite_replaced(), 1);
    w.annotate(SigmfAnnotation {
        freq_upper_edge: Some(1.0),
        ..Default::default()
    });
    assert!(matches!(w.finish(), Err(Error::InvalidParameter { .. })));
}

// ---- structural check of the written metadata against the published schema ----

fn schema() -> Value {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/sigmf-schema.json");
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

/// Checks the subset of JSON Schema the SigMF schema uses for our keys: `type`, `required`,
/// `properties`, `items`, `minimum`, `maximum`, `additionalProperties: false`. Patterns are
/// checked separately (no regex engine here); the python script runs the full validator.
fn check(value: &Value, schema: &Value, at: &str, problems: &mut Vec<String>) {
    if let Some(kind) = schema.get("type").and_then(Value::as_str) {
        let ok = match kind {
            "object" => value.is_object(),
            "array" => value.is_array(),
            "string" => value.is_string(),
            "boolean" => value.is_boolean(),
            "integer" => value.is_u64() || value.is_i64(),
            "number" => value.is_number(),
            _ => true,
        };
        if !ok {
            problems.push(format!("{at}: not of type {kind}"));
            return;
        }
    }
    if let (Some(x), Some(min)) = (
        value.as_f64(),
        schema.get("minimum").and_then(Value::as_f64),
    ) {
        if x < min {
            problems.push(format!("{at}: {x} below {min}"));
        }
    }
    if let (Some(x), Some(max)) = (
        value.as_f64(),
        schema.get("maximum").and_then(Value::as_f64),
    ) {
        if x > max {
            problems.push(format!("{at}: {x} above {max}"));
        }
    }
    for key in schema
        .get("required")
        .and_then(Value::as_array)
        .into_iter()
        .flatten()
    {
        let key = key.as_str().unwrap();
        if value.get(key).is_none() {
            problems.push(format!("{at}: required {key} missing"));
        }
    }
    if let (Some(object), Some(props)) = (value.as_object(), schema.get("properties")) {
        for (key, v) in object {
            match props.get(key) {
                Some(sub) => check(v, sub, &format!("{at}/{key}"), problems),
                None if schema.get("additionalProperties") == Some(&Value::Bool(false)) => {
                    problems.push(format!("{at}: {key} not allowed"))
                }
                None => problems.push(format!("{at}: {key} is not a SigMF core key")),
            }
        }
    }
    if let (Some(items), Some(sub)) = (value.as_array(), schema.get("items")) {
        for (i, v) in items.iter().enumerate() {
            check(v, sub, &format!("{at}/{i}"), problems);
        }
    }
}

/// The `core:datatype` grammar of SigMF v1.2: `(r|c)(f32|f64|i32|i16|u32|u16)_(le|be)` or
/// `(r|c)(i8|u8)`; written out here rather than derived from our own parser.
fn matches_datatype_grammar(name: &str) -> bool {
    let Some(rest) = name.strip_prefix('c').or_else(|| name.strip_prefix('r')) else {
        return false;
    };
    if rest == "i8" || rest == "u8" {
        return true;
    }
    let Some((kind, order)) = rest.split_once('_') else {
        return false;
    };
    ["f32", "f64", "i32", "i16", "u32", "u16"].contains(&kind) && (order == "le" || order == "be")
}

#[test]
fn written_metadata_follows_the_published_schema() {
    let schema = schema();
    // Written where the python validator can find them: target/tmp/io_sigmf_schema/.
    let out = Path::new(env!("CARGO_TARGET_TMPDIR")).join("io_sigmf_schema");
    std::fs::create_dir_all(&out).unwrap();
    for format in SampleFormat::ALL {
        let base = out.join(format!("sample-{}", format.name()));
        let centre = (format == SampleFormat::Cu8).then_some(100e6);
        let mut w = SigmfWriter::create(&base, format, 250e3, centre, "schema sample").unwrap();
        w.write(&[c(0.5, -0.5); 4]).unwrap();
        if format == SampleFormat::Ci16Le {
            w.annotate(SigmfAnnotation {
                sample_start: 1,
                sample_count: Some(2),
                freq_lower_edge: Some(-1e3),
                freq_upper_edge: Some(1e3),
                label: Some("DSB test".into()),
                comment: Some("invented".into()),
            });
        }
        w.finish().unwrap();
        let meta_path = base.with_extension("sigmf-meta");
        let meta: Value = serde_json::from_str(&std::fs::read_to_string(&meta_path).unwrap())
            .expect("meta is JSON");
        let mut problems = Vec::new();
        check(&meta, &schema, "", &mut problems);
        assert!(problems.is_empty(), "{}: {problems:?}", meta_path.display());

        let global = &meta["global"];
        assert!(matches_datatype_grammar(
            global["core:datatype"].as_str().unwrap()
        ));
        assert_eq!(global["core:datatype"], format.name());
        assert_eq!(global["core:version"], "1.2.0");
        assert_eq!(global["core:recorder"], "amrx");
        assert_eq!(global["core:num_channels"], 1);
        assert_eq!(global["core:sample_rate"], 250e3);
        assert_eq!(global["core:description"], "schema sample");
        assert_eq!(meta["captures"][0]["core:sample_start"], 0);
        assert_eq!(
            meta["captures"][0].get("core:frequency").is_some(),
            centre.is_some()
        );
        let annotations = meta["annotations"].as_array().unwrap();
        assert_eq!(
            annotations.len(),
            usize::from(format == SampleFormat::Ci16Le)
        );
    }
}

#[test]
fn the_schema_check_catches_bad_metadata() {
    // Guards the checker itself: each of these breaks one rule of the schema.
    let schema = schema();
    let bad = [
        r#"{"global": {"core:datatype": "cu8"}, "captures": [], "annotations": []}"#,
        r#"{"global": {"core:datatype": "cu8", "core:version": "1.2.0", "core:sample_rate": 0},
            "captures": [], "annotations": []}"#,
        r#"{"global": {"core:datatype": "cu8", "core:version": "1.2.0"}, "captures": [{}],
            "annotations": []}"#,
        r#"{"global": {"core:datatype": "cu8", "core:version": "1.2.0"}, "captures": [],
            "annotations": [{"core:sample_start": -1}]}"#,
        r#"{"global": {"core:datatype": "cu8", "core:version": "1.2.0"}, "captures": [],
            "annotations": [], "extra": 1}"#,
    ];
    for text in bad {
        let mut problems = Vec::new();
        check(
            &serde_json::from_str(text).unwrap(),
            &schema,
            "",
            &mut problems,
        );
        assert!(!problems.is_empty(), "{text}");
    }
    assert!(!matches_datatype_grammar("cf32"));
    assert!(!matches_datatype_grammar("ci16"));
    assert!(matches_datatype_grammar("ru16_be"));
}

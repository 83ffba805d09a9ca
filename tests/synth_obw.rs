//! Occupied bandwidth (ITU-R SM.328: the band outside which lies 0.5 % of the mean power on
//! each side) of generated emissions for a flat band-limited message of band [f_l, W]: the
//! DSB spectrum is two mirrored flat bands, so its 99 % width is 2W − 0.02(W − f_l) ≈ 2W; an
//! SSB spectrum is one band, 0.99(W − f_l) ≈ W. Measured on the Welch PSD.

use amrx::measure::PowerSpectrum;
use amrx::synth::{Emission, EmissionSpec};
use amrx::Complex32;
use std::path::Path;

fn obw_hz(mode: &str, w: f64, low: f64) -> f64 {
    let fs = 48e3;
    let spec: EmissionSpec = serde_json::from_str(&format!(
        r#"{{"label":"x","mode":"{mode}","offset_hz":2000,"amplitude":0.2,
            "message":{{"type":"noise","bandwidth_hz":{w},"low_hz":{low},"crest_factor":3.0}}}}"#
    ))
    .unwrap();
    let n = 1 << 21;
    let mut e = Emission::new(&spec, fs, n as u64, 4, Path::new(".")).unwrap();
    let mut psd = PowerSpectrum::new(8192, fs).unwrap();
    let mut piece = vec![Complex32::default(); 1 << 15];
    for _ in 0..n / piece.len() {
        piece.fill(Complex32::default());
        e.add_to(&mut piece);
        psd.push(&piece);
    }
    let d = psd.density();
    let len = d.len();
    // Ascending frequency order (FFT order wraps negative frequencies above N/2).
    let ordered: Vec<f64> = (0..len).map(|i| d[(i + len / 2) % len]).collect();
    let total: f64 = ordered.iter().sum();
    let edge = |fraction: f64| -> f64 {
        let mut acc = 0.0;
        for (i, p) in ordered.iter().enumerate() {
            if acc + p >= fraction * total {
                let within = (fraction * total - acc) / p;
                return (i as f64 + within - len as f64 / 2.0) * psd.bin_width();
            }
            acc += p;
        }
        fs / 2.0
    };
    edge(0.995) - edge(0.005)
}

#[test]
fn dsb_occupies_2w_and_ssb_w() {
    // Tolerance 3 %: the message's own transitions (0.15·W wide at the top) and its limiter
    // products are outside the flat-band idealisation.
    let (w, low) = (3000.0, 150.0);
    let dsb = obw_hz("dsb", w, low);
    let usb = obw_hz("usb", w, low);
    let lsb = obw_hz("lsb", w, low);
    let (want_dsb, want_ssb) = (2.0 * w - 0.02 * (w - low), 0.99 * (w - low));
    eprintln!("OBW 99 %: DSB {dsb:.0} Hz (≈ {want_dsb:.0}), USB {usb:.0} Hz, LSB {lsb:.0} Hz (≈ {want_ssb:.0}), W = {w}");
    assert!((dsb / want_dsb - 1.0).abs() < 0.03);
    assert!((usb / want_ssb - 1.0).abs() < 0.03);
    assert!((lsb / want_ssb - 1.0).abs() < 0.03);
}

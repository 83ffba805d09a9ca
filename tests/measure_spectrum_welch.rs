//! PowerSpectrum against scipy.signal.welch (tests/reference/welch_reference.py, output stored
//! in tests/reference/welch_fixture.json): Hann (periodic), nperseg N, 50 % overlap,
//! detrend=False, two-sided, scaling='density'.

use amrx::measure::PowerSpectrum;
use amrx::Complex32;

#[derive(serde::Deserialize)]
struct Fixture {
    fft_len: usize,
    sample_rate: f64,
    frames: usize,
    re: Vec<f64>,
    im: Vec<f64>,
    density: Vec<f64>,
    frequency: Vec<f64>,
}

fn fixture() -> Fixture {
    let text = include_str!("reference/welch_fixture.json");
    serde_json::from_str(text).expect("fixture parses")
}

#[test]
fn density_matches_scipy_welch() {
    let f = fixture();
    // The fixture's values are float32 numbers written in full; the cast is exact.
    let x: Vec<Complex32> =
        f.re.iter()
            .zip(&f.im)
            .map(|(&re, &im)| Complex32::new(re as f32, im as f32))
            .collect();
    let mut s = PowerSpectrum::new(f.fft_len, f.sample_rate).unwrap();
    s.push(&x);
    assert_eq!(s.frames(), f.frames);
    let got = s.density();
    let peak = f.density.iter().cloned().fold(0.0, f64::max);
    let worst = got
        .iter()
        .zip(&f.density)
        .map(|(g, w)| (g - w).abs() / w.abs())
        .fold(0.0, f64::max);
    eprintln!("largest relative difference from scipy: {worst:.2e}");
    // 1e-4 relative: both sides compute in f64 from identical inputs, so agreement is to
    // rounding (~1e-12); bins far below the peak are compared with a floor of 1e-9·peak, still
    // far above rounding of the largest terms.
    for (k, (g, want)) in got.iter().zip(&f.density).enumerate() {
        let tol = 1e-4 * want.abs().max(1e-9 * peak);
        assert!((g - want).abs() <= tol, "bin {k}: got {g}, scipy {want}");
        assert!((s.bin_frequency(k) - f.frequency[k]).abs() < 1e-9);
    }
}

//! Checks the DSP primitives against fixtures computed by numpy/scipy
//! (tests/reference/make_vectors.py; rerun it to regenerate them bit for bit).

use amrx::block::process_to_vec;
use amrx::dsp::{
    dc_blocker_pole, design_lowpass, kaiser_beta, kaiser_num_taps, FirDecimator, LowpassSpec,
    RationalResampler,
};
use amrx::Complex32;
use serde_json::Value;

fn fixture(name: &str) -> Value {
    let path = format!("{}/tests/reference/{name}", env!("CARGO_MANIFEST_DIR"));
    let text = std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{path}: {e}"));
    serde_json::from_str(&text).unwrap()
}

fn numbers(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

fn max_abs_diff(a: impl IntoIterator<Item = f64>, b: &[f64]) -> f64 {
    let a: Vec<f64> = a.into_iter().collect();
    assert_eq!(a.len(), b.len(), "lengths differ");
    a.iter()
        .zip(b)
        .map(|(x, y)| (x - y).abs())
        .fold(0.0, f64::max)
}

/// scipy.signal.kaiserord + firwin (Kaiser 1974): same N, β and taps. Tolerance 1e-6: both are
/// computed in f64 and ours is rounded once to f32 (taps ≤ 0.2, so rounding is ≤ 1e-8).
#[test]
fn kaiser_taps_match_scipy_firwin() {
    let fx = fixture("kaiser_taps.json");
    for case in fx["cases"].as_array().unwrap() {
        let get = |k: &str| case[k].as_f64().unwrap();
        let spec = LowpassSpec {
            passband_hz: get("passband_hz"),
            stopband_hz: get("stopband_hz"),
            attenuation_db: get("attenuation_db"),
            sample_rate: get("sample_rate"),
        };
        let width = (spec.stopband_hz - spec.passband_hz) / spec.sample_rate;
        assert_eq!(
            kaiser_num_taps(spec.attenuation_db, width) as u64,
            case["kaiserord_numtaps"].as_u64().unwrap(),
            "{spec:?}"
        );
        assert!((kaiser_beta(spec.attenuation_db) - get("beta")).abs() < 1e-12);
        let want = numbers(&case["taps"]);
        let got = design_lowpass(&spec).unwrap();
        let err = max_abs_diff(got.iter().map(|&h| h as f64), &want);
        println!("{spec:?}: {} taps, max |Δh| = {err:.2e}", got.len());
        assert!(err < 1e-6, "{spec:?}: {err}");
    }
}

/// scipy.signal.upfirdn(h, x, 1, 5): output 0 is h[0]·x[0] (zeroed history), as in the block.
/// Tolerance 1e-5: f32 accumulation of 49 products of N(0,1) inputs against scipy's f64.
#[test]
fn decimation_matches_scipy_upfirdn() {
    let fx = fixture("decimate_by_5.json");
    let taps: Vec<f32> = numbers(&fx["taps"]).iter().map(|&h| h as f32).collect();
    let (re, im) = (numbers(&fx["input_re"]), numbers(&fx["input_im"]));
    let x: Vec<Complex32> = re
        .iter()
        .zip(&im)
        .map(|(&r, &i)| Complex32::new(r as f32, i as f32))
        .collect();
    let factor = fx["factor"].as_u64().unwrap() as usize;
    let y = process_to_vec(&mut FirDecimator::new(&taps, factor).unwrap(), &x);
    let err_re = max_abs_diff(y.iter().map(|c| c.re as f64), &numbers(&fx["output_re"]));
    let err_im = max_abs_diff(y.iter().map(|c| c.im as f64), &numbers(&fx["output_im"]));
    println!("decimate by {factor}: max error {:.2e}", err_re.max(err_im));
    assert!(err_re < 1e-5 && err_im < 1e-5, "{err_re} {err_im}");
}

/// scipy.signal.upfirdn(L·h, x, L, M) equals the block exactly in alignment; resample_poly(x, L,
/// M, window=h) centres the filter, so with (N−1)/2 a multiple of M its output j is the block's
/// output j + (N−1)/(2M). Tolerance 1e-5 as above (f32 sums of 25 terms).
#[test]
fn resampling_matches_scipy_upfirdn_and_resample_poly() {
    let fx = fixture("resample_3_4.json");
    let taps: Vec<f32> = numbers(&fx["taps"]).iter().map(|&h| h as f32).collect();
    let x: Vec<f32> = numbers(&fx["input"]).iter().map(|&v| v as f32).collect();
    let (up, down) = (fx["up"].as_u64().unwrap(), fx["down"].as_u64().unwrap());
    let mut r = RationalResampler::new(up as usize, down as usize, &taps).unwrap();
    let y: Vec<f64> = process_to_vec(&mut r, &x)
        .iter()
        .map(|&v| v as f64)
        .collect();
    let err = max_abs_diff(y.iter().copied(), &numbers(&fx["upfirdn_output"]));
    println!("resample {up}/{down} vs upfirdn: max error {err:.2e}");
    assert!(err < 1e-5, "{err}");
    let shift = fx["resample_poly_shift"].as_u64().unwrap() as usize;
    let centred = numbers(&fx["resample_poly_output"]);
    let overlap = y.len() - shift;
    let err = max_abs_diff(y[shift..].iter().copied(), &centred[..overlap]);
    println!("resample {up}/{down} vs resample_poly (shift {shift}): max error {err:.2e}");
    assert!(err < 1e-5, "{err}");
}

/// scipy.signal.butter(1, fc, 'highpass', fs) is the pre-warped bilinear first-order high-pass:
/// b = g·[1, −1], a = [1, −p]. Our pole must equal p, and b must have the (1 − z⁻¹) shape our
/// block uses (it only drops the constant g). Tolerance 1e-12: both are f64 closed forms.
#[test]
fn dc_blocker_pole_matches_scipy_butter() {
    let fx = fixture("dc_blocker.json");
    for case in fx["cases"].as_array().unwrap() {
        let fc = case["cutoff_hz"].as_f64().unwrap();
        let fs = case["sample_rate"].as_f64().unwrap();
        let (b, a) = (numbers(&case["b"]), numbers(&case["a"]));
        let pole = dc_blocker_pole(fc, fs).unwrap();
        assert!(
            (pole + a[1]).abs() < 1e-12,
            "{fc}/{fs}: {pole} vs {}",
            -a[1]
        );
        assert!((b[0] + b[1]).abs() < 1e-15 && (b[0] - (1.0 + pole) / 2.0).abs() < 1e-12);
        let db = case["gain_db_at_cutoff"].as_f64().unwrap();
        assert!((db + 3.0103).abs() < 1e-3, "scipy's corner is {db} dB");
    }
}

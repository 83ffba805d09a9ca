//! Measured output SNR against the textbook figures of merit above threshold (Haykin,
//! Communication Systems, ch. 2, noise in AM, DSB-SC and SSB receivers).
//!
//! Each point averages 8 trials of 0.5 s; the per-point standard error is printed and stays
//! near 0.03 dB (noise measured in about 2500 Hann-windowed bins per trial), so the ±0.5 dB
//! tolerance is more than 10 standard errors and covers the receivers' filter ripple.

use amrx::demod::Mode;
use amrx::lab::{run_sweep, theory, Axis, Detector, SweepSpec};

/// Sweeps `detector` at μ over channel SNR 20, 25, 30 dB and checks each point against
/// theory within `tolerance_db`; returns the largest deviation.
fn check_above_threshold(detector: Detector, mu: f64, tolerance_db: f64) -> f64 {
    let mut spec = SweepSpec::new(vec![detector], Axis::Snr, vec![20.0, 25.0, 30.0]);
    spec.trial.mu = mu;
    spec.seed = 20;
    let result = run_sweep(&spec, |_| {}).unwrap();
    let mut worst: f64 = 0.0;
    for p in &result.curves[0].points {
        eprintln!(
            "{detector} μ {mu}: channel SNR {:.0} dB → output {:.3} dB (± {:.3}), theory {:.3} dB, \
             measured − theory {:+.3} dB",
            p.channel_snr_db,
            p.output_snr_db,
            p.stderr_db,
            p.theory_db,
            -p.loss_db()
        );
        assert!(p.stderr_db < 0.1, "standard error {:.3} dB", p.stderr_db);
        assert!(p.loss_db().abs() < tolerance_db, "{detector} μ {mu}: {p:?}");
        worst = worst.max(p.loss_db().abs());
    }
    worst
}

#[test]
fn envelope_detector_meets_mu2_over_2_plus_mu2() {
    // Haykin, Communication Systems, ch. 2: FoM = μ²/(2+μ²) above threshold.
    for mu in [0.3, 0.5, 0.8] {
        check_above_threshold(Detector::Receiver(Mode::Am), mu, 0.5);
    }
}

#[test]
fn envelope_detector_at_full_modulation_is_shown_not_asserted_tightly() {
    // At μ = 1 the envelope touches zero at the tone's troughs, where the small-noise
    // approximation r ≈ A(t) + n_I behind μ²/(2+μ²) fails; printed for the record and only
    // held to 1.5 dB.
    let worst = check_above_threshold(Detector::Receiver(Mode::Am), 1.0, 1.5);
    eprintln!("μ = 1: largest deviation from μ²/(2+μ²) is {worst:.2} dB");
    assert!(theory::db(theory::full_carrier_figure_of_merit(1.0)) < -4.7);
}

#[test]
fn diode_detector_meets_the_envelope_theory() {
    // The diode's peak detector scales signal and noise alike (gain ≈ 1 − T_c/2RC), so above
    // threshold it follows the same μ²/(2+μ²) (Haykin ch. 2).
    check_above_threshold(Detector::diode(), 0.5, 0.5);
}

#[test]
fn synchronous_am_meets_mu2_over_2_plus_mu2() {
    // Coherent detection of full-carrier AM: FoM μ²/(2+μ²) (Haykin ch. 2).
    let sam = Detector::Receiver(Mode::Sam);
    for mu in [0.3, 0.5, 0.8] {
        check_above_threshold(sam, mu, 0.5);
    }
}

#[test]
fn dsb_sc_meets_unity_figure_of_merit() {
    // Coherent DSB-SC: FoM = 1 (Haykin ch. 2, noise in DSB-SC receivers).
    let dsb = Detector::Receiver(Mode::Dsb);
    check_above_threshold(dsb, 0.5, 0.5);
}

#[test]
fn ssb_meets_unity_figure_of_merit() {
    // SSB: FoM = 1 (Haykin ch. 2, noise in SSB receivers).
    for mode in [Mode::Usb, Mode::Lsb] {
        let ssb = Detector::Receiver(mode);
        check_above_threshold(ssb, 0.5, 0.5);
    }
}

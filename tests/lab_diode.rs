//! The diode-and-RC detector's time constant: 1/f_c ≪ RC ≪ 1/W, and the diagonal-clipping
//! bound RC ≤ √(1−μ²)/(μ·ω_m) (Haykin, Communication Systems, ch. 2, envelope detector;
//! Carlson, Communication Systems, envelope detection).

use amrx::lab::{measure_rc, theory};

const MU: f64 = 0.5;
const TONE_HZ: f64 = 1000.0;

#[test]
fn three_time_constants() {
    let limit = theory::diagonal_clipping_limit_s(MU, TONE_HZ);
    let short = measure_rc(2e-6, MU, TONE_HZ).unwrap();
    let good = measure_rc(50e-6, MU, TONE_HZ).unwrap();
    let long = measure_rc(1e-3, MU, TONE_HZ).unwrap();
    for m in [&short, &good, &long] {
        eprintln!(
            "RC {:6.1} µs: RC/T_c {:5.1}, RC/limit {:4.2}, ripple {:.3} (bound {:.3}), gain {:.3}, \
             capacitor SINAD {:5.1} dB, audio SINAD {:5.1} dB",
            m.rc_s * 1e6,
            m.rc_over_carrier_period,
            m.rc_over_clipping_limit,
            m.ripple,
            m.ripple_theory,
            m.gain,
            m.capacitor_sinad_db,
            m.sinad_db
        );
    }
    // Too short: the capacitor empties between carrier peaks (ripple near 100 %), and the
    // detection gain falls towards the half-wave rectifier's 1/π; the ripple is at the IF, so
    // the audio low-pass removes it and the ideal diode does not distort the audio.
    assert!(short.ripple > 0.9 && short.capacitor_sinad_db < 3.0);
    assert!(short.gain < 0.5);
    // Good: inside the clipping bound, ripple ≈ T_c/RC, clean audio.
    assert!(good.rc_over_clipping_limit < 1.0 && good.rc_over_carrier_period > 3.0);
    assert!(good.sinad_db > 30.0);
    // Too long: past the bound, the capacitor misses the envelope's troughs.
    assert!(long.rc_over_clipping_limit > 1.0);
    assert!(long.sinad_db < good.sinad_db - 10.0);
    assert!(limit > 275e-6 && limit < 276e-6);
}

#[test]
fn clipping_starts_at_the_textbook_bound() {
    // Below the bound the audio stays clean; 25 % past it the distortion is already heavy.
    let limit = theory::diagonal_clipping_limit_s(MU, TONE_HZ);
    let inside = measure_rc(0.9 * limit, MU, TONE_HZ).unwrap();
    let outside = measure_rc(1.25 * limit, MU, TONE_HZ).unwrap();
    eprintln!(
        "SINAD at 0.9 × bound {:.1} dB, at 1.25 × bound {:.1} dB",
        inside.sinad_db, outside.sinad_db
    );
    assert!(inside.sinad_db > 40.0);
    assert!(outside.sinad_db < 35.0);
    // At μ = 0.8 the bound is shorter, √0.36/(0.8·ω_m) = 119 µs.
    let deep = theory::diagonal_clipping_limit_s(0.8, TONE_HZ);
    let inside = measure_rc(0.9 * deep, 0.8, TONE_HZ).unwrap();
    let outside = measure_rc(1.25 * deep, 0.8, TONE_HZ).unwrap();
    eprintln!(
        "μ 0.8: SINAD at 0.9 × bound {:.1} dB, at 1.25 × bound {:.1} dB",
        inside.sinad_db, outside.sinad_db
    );
    assert!(inside.sinad_db > 40.0);
    assert!(outside.sinad_db < inside.sinad_db - 10.0);
}

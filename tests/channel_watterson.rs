//! Watterson fading checked against the model's theory (C. C. Watterson, J. R. Juroshek,
//! W. D. Bensema, "Experimental confirmation of an HF channel model", IEEE Trans. Commun.
//! Technol., 1970): each path is a zero-mean complex Gaussian (Rayleigh) tap of unit power
//! with a Gaussian Doppler spectrum S(f) ∝ e^{−f²/(2σ²)}, whose autocorrelation is
//! R(τ) = e^{−2π²σ²τ²}. Moderate conditions (CCIR Rec. 520 / ITU-R F.520): spread 2σ = 0.5 Hz.

use amrx::block::Block;
use amrx::channel::{HfCondition, TapGain, WattersonChannel};
use amrx::measure::PowerSpectrum;
use amrx::Complex32;
use num_complex::Complex64;

/// Moderate conditions' σ (Doppler spread 0.5 Hz = 2σ).
const SIGMA: f64 = 0.25;

/// 10⁵ s of the tap at r_t = 20πσ, so that the lag 1/(2πσ) is exactly 10 samples.
fn long_tap_run() -> (Vec<Complex64>, f64) {
    let rate = 20.0 * std::f64::consts::PI * SIGMA;
    let mut g = TapGain::new(SIGMA, rate, 1, 520).unwrap();
    let n = (1e5 * rate) as usize;
    ((0..n).map(|_| g.next_low_rate()).collect(), rate)
}

#[test]
fn tap_power_and_rayleigh_fade_probability() {
    // ≈ 10⁵ s / 0.64 s coherence ≈ 1.6·10⁵ independent looks: the mean's std is ≈ 0.3 %,
    // P's ≈ 0.0007; the limits 3 % and 0.01 are the requirement.
    let (g, _) = long_tap_run();
    let n = g.len() as f64;
    let mean = g.iter().map(|v| v.norm_sqr()).sum::<f64>() / n;
    let fade = g.iter().filter(|v| v.norm_sqr() < 0.1).count() as f64 / n;
    let want = 1.0 - (-0.1f64).exp(); // exponential |g|² of mean 1 (Rayleigh envelope)
    eprintln!(
        "Watterson moderate: mean |g|² {mean:.4}, P(|g|² < 0.1) {fade:.4} (theory {want:.4})"
    );
    assert!((mean - 1.0).abs() < 0.03);
    assert!((fade - want).abs() < 0.01);
}

#[test]
fn doppler_spectrum_width_and_autocorrelation() {
    let (g, rate) = long_tap_run();
    // σ from the second moment of the Welch PSD (Hann, 50 %); the window adds
    // 1/(√3·N) cycles/sample of rms width, 0.6 % of σ here, negligible against 10 %.
    let mut psd = PowerSpectrum::new(2048, rate).unwrap();
    let z: Vec<Complex32> = g
        .iter()
        .map(|v| Complex32::new(v.re as f32, v.im as f32))
        .collect();
    psd.push(&z);
    let d = psd.density();
    let (mut m0, mut m2) = (0.0, 0.0);
    for (k, p) in d.iter().enumerate() {
        let f = psd.bin_frequency(k);
        m0 += p;
        m2 += p * f * f;
    }
    let sigma = (m2 / m0).sqrt();
    eprintln!("Watterson moderate: Doppler σ from the PSD {sigma:.4} Hz (requested {SIGMA}), spread {:.4} Hz", 2.0 * sigma);
    assert!((sigma / SIGMA - 1.0).abs() < 0.10);

    // R(1/(2πσ)) = e^{−1/2}; normalised by R(0).
    let lag = 10;
    let r = |k: usize| {
        g.iter()
            .zip(&g[k..])
            .map(|(a, b)| b * a.conj())
            .sum::<Complex64>()
            / (g.len() - k) as f64
    };
    let rho = r(lag).re / r(0).re;
    eprintln!("Watterson moderate: R(1/(2πσ))/R(0) = {rho:.4} (e^−½ = 0.6065)");
    assert!((rho - (-0.5f64).exp()).abs() < 0.05);
}

#[test]
fn whole_channel_keeps_rayleigh_statistics_at_the_output_rate() {
    // A constant input through two equal-power paths gives y = (g₁ + g₂)/√2, itself complex
    // Gaussian of unit power: the same two checks, on the interpolated output-rate gains.
    // 2·10⁴ s at 500 Hz: ≈ 3·10⁴ independent looks, std of the mean ≈ 0.6 %.
    let fs = 500.0;
    let mut ch = WattersonChannel::from_condition(HfCondition::Moderate, fs, 9).unwrap();
    let x = vec![Complex32::new(1.0, 0.0); 1 << 16];
    let mut y = vec![Complex32::default(); 1 << 16];
    let total = (2e4 * fs) as usize;
    let (mut done, mut power, mut fades) = (0usize, 0.0f64, 0usize);
    while done < total {
        ch.process(&x, &mut y);
        for v in &y {
            let p = f64::from(v.norm_sqr());
            power += p;
            fades += usize::from(p < 0.1);
        }
        done += y.len();
    }
    let mean = power / done as f64;
    let fade = fades as f64 / done as f64;
    eprintln!("Watterson channel output: mean power {mean:.4}, P(<0.1) {fade:.4}");
    assert!((mean - 1.0).abs() < 0.03);
    assert!((fade - (1.0 - (-0.1f64).exp())).abs() < 0.01);
}

//! Power split of tone AM measured through the Welch spectrum, against
//! S. Haykin, Communication Systems, ch. 2: for s = A_c(1 + μ cos ω_m t)e^{jω_c t} the carrier
//! holds A_c² and each sideband A_c²μ²/4, so the sidebands carry μ²/(2 + μ²) of the total
//! power (at most 1/3, at μ = 1).

use amrx::measure::{find_carrier, PowerSpectrum};
use amrx::synth::AmToneTransmitter;
use amrx::Complex32;

#[test]
fn sideband_fraction_matches_theory() {
    // Off-bin carrier and tone so that leakage is exercised; ±2-bin sums lose < 0.1 % of each
    // tone's power (Hann sidelobes), equally for carrier and sidebands, so 0.5 % absolute is
    // loose by an order of magnitude.
    let (fs, fft_len) = (48e3, 4096);
    let (f_c, f_m) = (3210.7, 987.3);
    for mu in [0.3, 0.5, 0.8, 1.0] {
        let mut tx = AmToneTransmitter::new(0.6, mu, f_m, f_c, fs).unwrap();
        let mut spectrum = PowerSpectrum::new(fft_len, fs).unwrap();
        let mut block = vec![Complex32::default(); 3000];
        for _ in 0..32 {
            tx.fill(&mut block);
            spectrum.push(&block);
        }
        let carrier = find_carrier(&spectrum, f_c, 50.0).unwrap();
        let upper = find_carrier(&spectrum, f_c + f_m, 50.0).unwrap();
        let lower = find_carrier(&spectrum, f_c - f_m, 50.0).unwrap();
        let sidebands = upper.power + lower.power;
        let measured = sidebands / (carrier.power + sidebands);
        let theory = mu * mu / (2.0 + mu * mu);
        eprintln!("μ {mu}: sideband fraction {measured:.5}, theory {theory:.5}");
        assert!(
            (measured - theory).abs() < 0.005,
            "μ {mu}: {measured} vs {theory}"
        );
        assert!(measured <= 1.0 / 3.0 + 1e-3);
        // Absolute levels too: carrier A_c², each sideband A_c²μ²/4.
        assert!((carrier.power / 0.36 - 1.0).abs() < 2e-3);
        assert!((upper.power / (0.36 * mu * mu / 4.0) - 1.0).abs() < 2e-3);
        assert!((lower.power / (0.36 * mu * mu / 4.0) - 1.0).abs() < 2e-3);
    }
}

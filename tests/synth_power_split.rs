//! Power split of full-carrier AM from the general AmModulator, against S. Haykin,
//! Communication Systems, ch. 2: for s = A_c(1 + μ m)e^{jω_c t} with a zero-mean message of
//! mean square P the carrier holds A_c² and the sidebands A_c²μ²P, i.e. a fraction
//! μ²P/(1 + μ²P) of the total; a tone has P = 1/2, giving μ²/(2 + μ²).

use amrx::block::process_to_vec;
use amrx::measure::{find_carrier, PowerSpectrum};
use amrx::synth::{AmModulator, MessageSource, NoiseMessage, ToneMessage};
use amrx::Complex32;

fn modulate(
    mut message: impl MessageSource,
    a_c: f64,
    mu: f64,
    f_c: f64,
    fs: f64,
    n: usize,
) -> Vec<Complex32> {
    let mut m = vec![0.0; n];
    message.fill(&mut m);
    let m: Vec<f32> = m.iter().map(|v| *v as f32).collect();
    process_to_vec(&mut AmModulator::new(a_c, mu, f_c, fs).unwrap(), &m)
}

#[test]
fn tone_sideband_fraction_is_mu2_over_2_plus_mu2() {
    // Off-bin tones as in measure_power_split.rs; ±2-bin sums lose < 0.1 % (Hann sidelobes).
    let (fs, f_c, f_m) = (48e3, 3210.7, 987.3);
    for mu in [0.3, 0.5, 0.8, 1.0] {
        let s = modulate(
            ToneMessage::single(f_m, fs).unwrap(),
            0.6,
            mu,
            f_c,
            fs,
            96_000,
        );
        let mut psd = PowerSpectrum::new(4096, fs).unwrap();
        psd.push(&s);
        let c = find_carrier(&psd, f_c, 50.0).unwrap().power;
        let sb = find_carrier(&psd, f_c + f_m, 50.0).unwrap().power
            + find_carrier(&psd, f_c - f_m, 50.0).unwrap().power;
        let got = sb / (c + sb);
        let want = mu * mu / (2.0 + mu * mu);
        eprintln!("AmModulator μ {mu}: sideband fraction {got:.5}, theory {want:.5}");
        assert!((got - want).abs() < 0.005);
    }
}

#[test]
fn noise_message_sideband_fraction() {
    // Total mean power A_c²(1 + μ²P) by time average (10⁶ samples of a message with ~10³
    // independent samples per 10⁴: std well under 1 %); the carrier by its coherent
    // projection A_c (the message has no content below its band edge).
    let (fs, f_c, a_c, mu) = (24e3, 1500.0, 0.4, 0.9);
    let msg = NoiseMessage::new(300.0, 3000.0, 3.0, fs, 17).unwrap();
    let p = msg.mean_square();
    let s = modulate(msg, a_c, mu, f_c, fs, 1_000_000);
    let total = s.iter().map(|z| f64::from(z.norm_sqr())).sum::<f64>() / s.len() as f64;
    let want = mu * mu * p / (1.0 + mu * mu * p);
    let got = (total - a_c * a_c) / total;
    eprintln!(
        "AmModulator noise message: sideband fraction {got:.4}, theory {want:.4} (P = {p:.4})"
    );
    assert!((got / want - 1.0).abs() < 0.03);
}

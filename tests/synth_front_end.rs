//! A synthetic cheap front end seen through the spectrum: the IQ-imbalance image of an AM
//! carrier appears at −f_c at the level the image-rejection relation predicts, the DC offset
//! appears at 0 Hz, and 8-bit quantisation keeps samples within half a step.

use amrx::channel::{quantize_cu8, IqImpairment};
use amrx::measure::{find_carrier, PowerSpectrum};
use amrx::synth::AmToneTransmitter;
use amrx::Complex32;

#[test]
fn image_and_dc_levels_in_the_spectrum() {
    // IRR = (1 + 2g cos φ + g²)/(1 − 2g cos φ + g²) (standard image-rejection relation, e.g.
    // B. Razavi, RF Microelectronics, image-reject receivers; from memory). The image of the
    // carrier is 25 dB down, far above leakage (Hann sidelobes at 500 bins are < −100 dB);
    // 0.2 dB tolerance.
    let (fs, f_c) = (96e3, 12_345.6);
    let imp = IqImpairment {
        dc: Complex32::new(0.02, -0.01),
        gain_db: 0.8,
        phase_deg: 4.0,
    };
    let mut tx = AmToneTransmitter::new(0.5, 0.5, 1000.0, f_c, fs).unwrap();
    let mut spectrum = PowerSpectrum::new(4096, fs).unwrap();
    let mut block = vec![Complex32::default(); 8192];
    for _ in 0..8 {
        tx.fill(&mut block);
        imp.apply(&mut block);
        spectrum.push(&block);
    }
    let wanted = find_carrier(&spectrum, f_c, 100.0).unwrap();
    let image = find_carrier(&spectrum, -f_c, 100.0).unwrap();
    let measured_db = 10.0 * (wanted.power / image.power).log10();
    let theory_db = 10.0 * imp.image_rejection_ratio().log10();
    eprintln!("image rejection {measured_db:.3} dB, relation {theory_db:.3} dB");
    assert!((measured_db - theory_db).abs() < 0.2);
    assert!((image.frequency_hz + f_c).abs() < 1.0);
    let dc = find_carrier(&spectrum, 0.0, 10.0).unwrap();
    assert!((dc.power / imp.dc.norm_sqr() as f64 - 1.0).abs() < 0.01);
}

#[test]
fn cu8_round_trip_within_half_a_step() {
    let mut tx = AmToneTransmitter::new(0.45, 0.9, 700.0, 3000.0, 48e3).unwrap();
    let mut x = vec![Complex32::default(); 10_000];
    tx.fill(&mut x);
    let mut bytes = Vec::new();
    quantize_cu8(&x, &mut bytes);
    assert_eq!(bytes.len(), 2 * x.len());
    let back = |b: u8| f32::from(b) / 127.5 - 1.0;
    for (z, iq) in x.iter().zip(bytes.chunks_exact(2)) {
        assert!((back(iq[0]) - z.re).abs() <= 0.5 / 127.5 + 1e-6);
        assert!((back(iq[1]) - z.im).abs() <= 0.5 / 127.5 + 1e-6);
    }
}

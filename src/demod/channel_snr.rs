//! A channel SNR estimate for every mode, read from the front end's averaged spectrum: the power
//! in the band the mode's emission occupies, less the noise floor's share of it, over the noise
//! in the message bandwidth.
//!
//! Definition (S. Haykin, Communication Systems, ch. 2, noise in AM receivers, written for
//! complex baseband as in [`crate::channel::snr`]): channel SNR = mean|s|² / (N0·W), with s the
//! received emission (carrier included), N0 the two-sided noise density and W the message
//! bandwidth. It is the figure `amrx synth` prints for each emission and the lab's input axis.

use super::config::ModeSettings;
use super::Mode;
use crate::measure::{estimate_noise_density_within, CarrierPeak, PowerSpectrum};

/// The band an emission of `settings.mode` occupies around the tuned frequency, in Hz
/// (lower edge, upper edge): ±W for the double-sideband modes (am, sam, dsb, isb), 0…W for usb,
/// −W…0 for lsb, −vestige…W for vsb.
pub fn occupied_band_hz(settings: &ModeSettings) -> (f64, f64) {
    let w = settings.bandwidth_hz;
    match settings.mode {
        Mode::Usb => (0.0, w),
        Mode::Lsb => (-w, 0.0),
        Mode::Vsb => (-settings.vestige_hz.unwrap_or(w).min(w), w),
        // sam with one sideband kept: the station still occupies both.
        Mode::Am | Mode::Sam | Mode::Dsb | Mode::Isb => (-w, w),
    }
}

/// Channel SNR in dB of the emission occupying `band_hz` around 0 Hz in `spectrum`, message
/// bandwidth `message_bandwidth_hz`; the noise floor is read outside the band where
/// |f| ≤ `flat_hz` ([`estimate_noise_density_within`]).
///
/// `None` when the floor cannot be read (too little input, too few floor bins) or nothing
/// stands above it in the band.
pub fn estimate_channel_snr_db(
    spectrum: &PowerSpectrum,
    band_hz: (f64, f64),
    message_bandwidth_hz: f64,
    flat_hz: f64,
) -> Option<f64> {
    let (lo, hi) = band_hz;
    if !(message_bandwidth_hz > 0.0 && lo < hi) {
        return None;
    }
    let centre = CarrierPeak {
        frequency_hz: 0.0,
        power: 0.0,
    };
    let n0 = estimate_noise_density_within(spectrum, &centre, lo.abs().max(hi.abs()), flat_hz)?;
    let (signal, _) = signal_in_band(spectrum, n0, band_hz);
    if n0 <= 0.0 || signal <= 0.0 {
        return None;
    }
    Some(10.0 * (signal / (n0 * message_bandwidth_hz)).log10())
}

/// (power above the floor, the floor's power) in `band_hz` of `spectrum`, for a floor of
/// two-sided density `n0`.
fn signal_in_band(spectrum: &PowerSpectrum, n0: f64, (lo, hi): (f64, f64)) -> (f64, f64) {
    let bin = spectrum.bin_width();
    let (mut power, mut bins) = (0.0, 0usize);
    for (k, d) in spectrum.density().iter().enumerate() {
        let f = spectrum.bin_frequency(k);
        if f >= lo && f <= hi {
            power += d * bin;
            bins += 1;
        }
    }
    let floor = n0 * bin * bins as f64;
    (power - floor, floor)
}

/// How much more power (dB) stands in the mirror of `band_hz` (the other side of the tuned
/// frequency) than in `band_hz` itself, when the mirror clearly holds an emission (its power
/// at least 10 times the floor's there). A single-sideband emission found on the wrong side
/// means the sidebands are reversed: I and Q swapped by the front end, or the other sideband
/// chosen. `None` when the mirror holds nothing clear or the floor cannot be read.
pub fn mirror_excess_db(
    spectrum: &PowerSpectrum,
    band_hz: (f64, f64),
    flat_hz: f64,
) -> Option<f64> {
    let (lo, hi) = band_hz;
    let centre = CarrierPeak {
        frequency_hz: 0.0,
        power: 0.0,
    };
    let n0 = estimate_noise_density_within(spectrum, &centre, lo.abs().max(hi.abs()), flat_hz)?;
    let (wanted, floor) = signal_in_band(spectrum, n0, band_hz);
    let (mirror, mirror_floor) = signal_in_band(spectrum, n0, (-hi, -lo));
    if !(mirror > 10.0 * mirror_floor && mirror_floor > 0.0) {
        return None;
    }
    // The wanted side counts at least its floor's share, so an empty side gives a finite ratio.
    Some(10.0 * (mirror / wanted.max(floor).max(f64::MIN_POSITIVE)).log10())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_single_sideband_on_the_wrong_side_is_seen_in_the_mirror() {
        let fs = 24_000.0;
        let usb = usb_in_noise(fs, 4.0, 1e-2, 1e-4);
        let lsb: Vec<Complex32> = usb.iter().map(|z| z.conj()).collect();
        let w = 3000.0;
        let read = |x: &[Complex32]| {
            let mut spectrum = PowerSpectrum::new(4096, fs).unwrap();
            spectrum.push(x);
            mirror_excess_db(&spectrum, (0.0, w), 2.0 * w)
        };
        // Tuned as usb: the usb emission leaves nothing clear in the mirror...
        assert_eq!(read(&usb), None);
        // ...the lsb one stands there far above an empty wanted side (its floor's share):
        // 1e-2 of tones over 1e-4 · 3000/24000 of noise in the band is about 29 dB.
        let excess = read(&lsb).unwrap();
        assert!((20.0..35.0).contains(&excess), "{excess} dB");
    }
    use crate::dsp::ComplexNoise;
    use crate::Complex32;

    /// A single-sideband "emission": three tones inside 0…W, in white noise of known density.
    fn usb_in_noise(fs: f64, seconds: f64, tone_power: f64, noise_power: f64) -> Vec<Complex32> {
        let n = (fs * seconds) as usize;
        let amplitude = (tone_power / 3.0).sqrt();
        let mut x: Vec<Complex32> = (0..n)
            .map(|i| {
                let t = i as f64 / fs;
                let s: f64 = [500.0, 1300.0, 2100.0]
                    .iter()
                    .map(|f| (std::f64::consts::TAU * f * t).cos())
                    .sum();
                let c: f64 = [500.0, 1300.0, 2100.0]
                    .iter()
                    .map(|f| (std::f64::consts::TAU * f * t).sin())
                    .sum();
                Complex32::new((amplitude * s) as f32, (amplitude * c) as f32)
            })
            .collect();
        ComplexNoise::new(noise_power, 11).add_to(&mut x);
        x
    }

    #[test]
    fn reads_the_channel_snr_of_a_known_signal_in_white_noise() {
        // Textbook definition (Haykin, ch. 2): SNR = S/(N0·W) with N0 = noise power / fs.
        let fs = 24_000.0;
        let w = 2_700.0;
        for (tone_power, noise_power) in [(1e-2, 1e-3), (1e-3, 1e-3), (1e-4, 1e-3)] {
            let x = usb_in_noise(fs, 4.0, tone_power, noise_power);
            let mut spectrum = PowerSpectrum::new(2048, fs).unwrap();
            spectrum.push(&x);
            let want = 10.0 * (tone_power / (noise_power / fs * w)).log10();
            let got = estimate_channel_snr_db(&spectrum, (0.0, w), w, 2.0 * w).unwrap();
            // Tolerance: the floor's median over ~500 bins of 40 averaged frames is good to
            // about 2 %; the band's noise share matters most at the lowest SNR (≈ 9.5 dB).
            assert!(
                (got - want).abs() < 0.3,
                "want {want:.2} dB, got {got:.2} dB"
            );
        }
    }

    #[test]
    fn noise_alone_reads_no_snr_or_a_very_low_one() {
        let fs = 24_000.0;
        let mut x = vec![Complex32::default(); 96_000];
        ComplexNoise::new(1e-3, 5).add_to(&mut x);
        let mut spectrum = PowerSpectrum::new(2048, fs).unwrap();
        spectrum.push(&x);
        let got = estimate_channel_snr_db(&spectrum, (0.0, 2700.0), 2700.0, 5400.0);
        assert!(got.is_none_or(|s| s < -10.0), "{got:?}");
    }

    #[test]
    fn no_input_reads_nothing() {
        let spectrum = PowerSpectrum::new(2048, 24_000.0).unwrap();
        assert_eq!(
            estimate_channel_snr_db(&spectrum, (-5e3, 5e3), 5e3, 1e4),
            None
        );
    }
}

//! Theoretical noise performance of the AM family, in the convention the lab measures in.
//!
//! Convention (S. Haykin, Communication Systems, ch. 2, "noise in AM receivers", at complex
//! baseband): message bandwidth W; complex white noise of two-sided density N0, so that
//! E|w|² = N0·fs at sample rate fs; channel SNR = mean|s|²/(N0·W); output SNR = tone power over
//! the noise power in (0, W] after detection; figure of merit = output SNR / channel SNR;
//! carrier-to-noise ratio ρ = carrier power/(N0·2W).

/// Figure of merit of full-carrier tone AM of index μ, by envelope detection above threshold or
/// by coherent detection: μ²/(2 + μ²) (Haykin, Communication Systems, ch. 2, noise in AM
/// receivers using envelope detection; the same for coherent detection of full-carrier AM).
pub fn full_carrier_figure_of_merit(mu: f64) -> f64 {
    mu * mu / (2.0 + mu * mu)
}

/// Figure of merit of coherent DSB-SC and of SSB: 1 (Haykin, Communication Systems, ch. 2,
/// noise in DSB-SC and SSB receivers).
pub const SUPPRESSED_CARRIER_FIGURE_OF_MERIT: f64 = 1.0;

/// Figure of merit of synchronous detection of one sideband of full-carrier tone AM of index
/// μ: the kept line μA_c/2 is detected with the noise of one sideband (N0·W, half of it in
/// the real part), so output SNR = μ²A_c²/(4N0W) over channel SNR A_c²(1+μ²/2)/(N0W) gives
/// μ²/(2(2+μ²)): 3 dB below both sidebands, whose lines add coherently while their noises add
/// in power (derived in Haykin's convention, Communication Systems, ch. 2).
pub fn one_sideband_figure_of_merit(mu: f64) -> f64 {
    full_carrier_figure_of_merit(mu) / 2.0
}

/// Figure of merit of the vestigial-sideband receiver (Nyquist-slope filter H = ½(1 + S),
/// audio 2·Re(H∗x), see [`crate::demod::vsb`]) for a carrier A_c and one line μA_c/2 above
/// the vestige f_v: the audio tone has power μ²A_c²/2; the noise in (0, W] is
/// 2N0·∫(|H(f)|² + |H(−f)|²)df = 2N0(W − f_v/3) (the slope gives (1 + f²/f_v²)/2 inside the
/// vestige, 1 above); channel SNR = A_c²(1 + μ²/4)/(N0W). So FoM = μ²/(4 + μ²)·W/(W − f_v/3)
/// (derived here in Haykin's convention, Communication Systems, ch. 2, VSB).
pub fn vestigial_figure_of_merit(mu: f64, bandwidth_hz: f64, vestige_hz: f64) -> f64 {
    mu * mu / (4.0 + mu * mu) * bandwidth_hz / (bandwidth_hz - vestige_hz / 3.0)
}

/// Power ratio to decibels.
pub fn db(ratio: f64) -> f64 {
    10.0 * ratio.log10()
}

/// Decibels to a power ratio.
pub fn from_db(db: f64) -> f64 {
    10f64.powf(db / 10.0)
}

/// Channel SNR over CNR for tone AM of index μ: mean|s|² = A_c²(1 + μ²/2) and ρ uses the
/// carrier A_c² in 2W, so SNR_channel = ρ·(2 + μ²).
pub fn channel_snr_over_cnr_db(mu: f64) -> f64 {
    db(2.0 + mu * mu)
}

/// The noise power E|w|² = N0·fs giving `channel_snr_db` for a signal of mean power
/// `signal_power` in message bandwidth `bandwidth_hz`: N0 = P/(SNR·W).
pub fn noise_power(signal_power: f64, channel_snr_db: f64, bandwidth_hz: f64, rate: f64) -> f64 {
    signal_power / (from_db(channel_snr_db) * bandwidth_hz) * rate
}

/// The envelope detector's threshold CNR by the 1 % rule: the noise envelope (Rayleigh, mean
/// square 2σ² = N0·2W) exceeds the carrier amplitude A_c with probability e^(−ρ); setting that
/// to 0.01 gives ρ = ln 100, 6.6 dB (Haykin, Communication Systems, ch. 2, threshold effect).
pub fn envelope_threshold_cnr_db() -> f64 {
    db(100f64.ln())
}

/// The longest RC time constant free of diagonal clipping for tone AM of index μ at `tone_hz`:
/// RC ≤ √(1 − μ²)/(μ·ω_m) (Haykin, Communication Systems, ch. 2, envelope detector; Carlson,
/// Communication Systems, envelope detection). Infinite for μ = 0; zero for μ ≥ 1.
pub fn diagonal_clipping_limit_s(mu: f64, tone_hz: f64) -> f64 {
    let omega = std::f64::consts::TAU * tone_hz;
    if mu <= 0.0 {
        f64::INFINITY
    } else {
        (1.0 - mu * mu).max(0.0).sqrt() / (mu * omega)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn textbook_values() {
        // μ = 1: FoM 1/3, −4.77 dB (Haykin ch. 2: "at best one third").
        assert!((db(full_carrier_figure_of_merit(1.0)) + 4.771).abs() < 1e-3);
        assert!((envelope_threshold_cnr_db() - 6.632).abs() < 1e-3);
        // 1 kHz at μ = 0.5: √0.75 / (0.5 · 2π · 1000) = 275.7 µs.
        assert!((diagonal_clipping_limit_s(0.5, 1000.0) - 275.66e-6).abs() < 0.01e-6);
        assert_eq!(diagonal_clipping_limit_s(1.0, 1000.0), 0.0);
        assert!((channel_snr_over_cnr_db(0.5) - 3.522).abs() < 1e-3);
    }

    #[test]
    fn noise_power_inverts_the_channel_snr() {
        let p = noise_power(0.1, 20.0, 5000.0, 96_000.0);
        // SNR = P / (N0 W) with N0 = p / fs.
        let snr = 0.1 / (p / 96_000.0 * 5000.0);
        assert!((db(snr) - 20.0).abs() < 1e-9);
    }
}

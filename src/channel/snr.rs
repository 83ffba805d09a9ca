//! Channel SNR and carrier-to-noise ratio ↔ noise density, as defined for complex baseband.
//!
//! Definitions (S. Haykin, Communication Systems, ch. 2, noise in AM receivers, written for
//! complex baseband): complex white noise w of two-sided density N0 has E|w|² = N0·fs at
//! sample rate fs; for a message of bandwidth W,
//! - channel (baseband) SNR = mean|s|² / (N0·W),
//! - CNR ρ = carrier power / (N0·2W), the noise counted in the 2W a DSB channel occupies.
//!
//! For tone AM of index μ, mean|s|² = A_c²(1 + μ²/2), so ρ = SNR/(2 + μ²).

use crate::{Error, Result};

fn checked(name: &'static str, v: f64) -> Result<f64> {
    if v.is_finite() && v > 0.0 {
        Ok(v)
    } else {
        Err(Error::parameter(name, v, "must be positive and finite"))
    }
}

fn finite_db(name: &'static str, db: f64) -> Result<f64> {
    if db.is_finite() {
        Ok(10f64.powf(db / 10.0))
    } else {
        Err(Error::parameter(name, format!("{db} dB"), "must be finite"))
    }
}

/// N0 giving channel SNR `snr_db` for signal power S and message bandwidth W: S/(W·SNR).
pub fn n0_from_snr(signal_power: f64, snr_db: f64, bandwidth_hz: f64) -> Result<f64> {
    let s = checked("signal_power", signal_power)?;
    let w = checked("message bandwidth", bandwidth_hz)?;
    Ok(s / (w * finite_db("channel SNR", snr_db)?))
}

/// N0 giving CNR `cnr_db` for carrier power C and message bandwidth W: C/(2W·CNR).
pub fn n0_from_cnr(carrier_power: f64, cnr_db: f64, bandwidth_hz: f64) -> Result<f64> {
    let c = checked("carrier power", carrier_power)?;
    let w = checked("message bandwidth", bandwidth_hz)?;
    Ok(c / (2.0 * w * finite_db("CNR", cnr_db)?))
}

/// Channel SNR in dB for signal power S, density N0 and bandwidth W.
pub fn snr_db(signal_power: f64, n0: f64, bandwidth_hz: f64) -> f64 {
    10.0 * (signal_power / (n0 * bandwidth_hz)).log10()
}

/// CNR in dB for carrier power C, density N0 and bandwidth W.
pub fn cnr_db(carrier_power: f64, n0: f64, bandwidth_hz: f64) -> f64 {
    10.0 * (carrier_power / (n0 * 2.0 * bandwidth_hz)).log10()
}

/// Complex noise power per sample E|w|² = N0·fs.
pub fn noise_power(n0: f64, sample_rate: f64) -> f64 {
    n0 * sample_rate
}

/// ρ = SNR/(2 + μ²) for tone AM (both linear), Haykin ch. 2.
pub fn tone_am_cnr_from_snr(snr_linear: f64, mu: f64) -> f64 {
    snr_linear / (2.0 + mu * mu)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn identities_hold() {
        // Round trips are exact to rounding; the tone-AM relation ρ = SNR/(2 + μ²) follows
        // from mean|s|² = A_c²(1 + μ²/2) (Haykin ch. 2).
        let (a_c, w) = (0.3, 4500.0);
        for mu in [0.0, 0.3, 0.8, 1.0] {
            for snr in [-5.0, 10.0, 37.5] {
                let s = a_c * a_c * (1.0 + mu * mu / 2.0);
                let n0 = n0_from_snr(s, snr, w).unwrap();
                assert!((snr_db(s, n0, w) - snr).abs() < 1e-9);
                let rho = cnr_db(a_c * a_c, n0, w);
                let want = 10.0 * tone_am_cnr_from_snr(10f64.powf(snr / 10.0), mu).log10();
                assert!((rho - want).abs() < 1e-9, "μ {mu}: {rho} vs {want}");
                let n0_c = n0_from_cnr(a_c * a_c, rho, w).unwrap();
                assert!((n0_c / n0 - 1.0).abs() < 1e-12);
            }
        }
        assert!(n0_from_cnr(1.0, f64::INFINITY, 1.0).is_err());
        assert!(n0_from_snr(1.0, 10.0, 0.0).is_err());
        assert_eq!(noise_power(2e-6, 48e3), 2e-6 * 48e3);
    }
}

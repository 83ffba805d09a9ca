//! Parameter checks shared by the modulators.

use crate::{Error, Result};

/// A finite amplitude ≥ 0 whose peak with `peak_factor` stays far inside the f32 range.
pub(crate) fn amplitude(name: &'static str, value: f64, peak_factor: f64) -> Result<f64> {
    if !(value.is_finite() && value >= 0.0) {
        return Err(Error::parameter(name, value, "must be finite and ≥ 0"));
    }
    if value * peak_factor > 1e30 {
        return Err(Error::parameter(name, value, "peak amplitude beyond 1e30"));
    }
    Ok(value)
}

/// A finite modulation index ≥ 0.
pub(crate) fn modulation_index(value: f64) -> Result<f64> {
    if !(value.is_finite() && value >= 0.0) {
        return Err(Error::parameter("mu", value, "must be finite and ≥ 0"));
    }
    Ok(value)
}

/// The carrier amplitude for a carrier `carrier_db` (< 0) below the peak envelope power of an
/// emission whose sidebands alone peak at `sideband_peak`: with r = 10^(dB/20) the carrier is
/// r·(A_c + peak) = A_c, so A_c = r·peak/(1 − r). `None` is a suppressed carrier.
pub(crate) fn carrier_amplitude(carrier_db: Option<f64>, sideband_peak: f64) -> Result<f64> {
    match carrier_db {
        None => Ok(0.0),
        Some(db) if db.is_finite() && db < 0.0 => {
            let r = 10f64.powf(db / 20.0);
            Ok(r * sideband_peak / (1.0 - r))
        }
        Some(db) => Err(Error::parameter(
            "carrier level",
            format!("{db} dB"),
            "must be finite and below 0 dB relative to peak envelope power",
        )),
    }
}

/// Converts an f64 sample to Complex32, non-finite values to zero.
#[inline]
pub(crate) fn to_c32(v: num_complex::Complex64) -> crate::Complex32 {
    if v.re.is_finite() && v.im.is_finite() {
        crate::Complex32::new(v.re as f32, v.im as f32)
    } else {
        crate::Complex32::default()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn carrier_level_convention() {
        // −6.02 dB: carrier equal to the sideband peak, envelope peak 2A, PEP 4A² (H3E).
        let a = carrier_amplitude(Some(20.0 * 0.5f64.log10()), 1.0).unwrap();
        assert!((a - 1.0).abs() < 1e-12);
        let a = carrier_amplitude(Some(-16.0), 0.3).unwrap();
        assert!((20.0 * (a / (a + 0.3)).log10() + 16.0).abs() < 1e-9);
        assert_eq!(carrier_amplitude(None, 1.0).unwrap(), 0.0);
        assert!(carrier_amplitude(Some(0.0), 1.0).is_err());
        assert!(carrier_amplitude(Some(f64::NAN), 1.0).is_err());
    }
}

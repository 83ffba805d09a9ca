//! Receiver sensitivity the way bench engineers quote it: the RF level at the antenna input
//! that gives 12 dB SINAD, or 10 dB (S+N)/N, for a receiver of a given noise figure, read
//! from a sweep.
//!
//! Procedure followed (its shape, from memory; the documents were not consulted here): the
//! SINAD reference sensitivity of TIA-603 (formerly EIA-603, land-mobile receivers: the RF
//! level, with the standard test modulation, that gives 12 dB SINAD at the audio output) and
//! the classic AM/SSB figure of 10 dB (S+N)/N (as in the IEC 60315 series of broadcast
//! receiver measurements). A bench lowers the generator level until the audio meter reads
//! the target; the lab instead interpolates the swept curve, then turns the channel SNR into
//! a level with the thermal noise of the receiver: P = SNR·k·T₀·F·W, with k = 1.380649e-23
//! J/K (SI, exact), T₀ = 290 K (the standard reference temperature of noise figure, IEEE Std
//! 100 / ITU-R P.372 usage), F the noise figure and W the sweep's message bandwidth (the lab
//! defines channel SNR against the noise in W).
//!
//! Levels are quoted as bench generators set them: the unmodulated carrier power for
//! full-carrier AM, the tone's power (its PEP) for one sideband, the mean power for DSB-SC.
//! Voltages are potential differences across 50 Ω (the open-circuit EMF is twice, +6 dB).
//! The lab's output SNR is tone over noise and distortion, S/(N+D): SINAD = 1 + S/(N+D), and
//! (S+N)/N is read as (S+N+D)/(N+D) (the tone method cannot part N from D; near the
//! sensitivity level noise dominates).

use super::detector::Detector;
use super::signal::TestSignal;
use super::sweep::{Curve, SweepResult};
use super::theory::{db, from_db};

/// Boltzmann's constant, J/K (SI 2019, exact).
pub const BOLTZMANN: f64 = 1.380_649e-23;
/// The reference temperature of noise figure, K.
pub const T0_KELVIN: f64 = 290.0;
/// The reference impedance of the voltages, Ω.
pub const REFERENCE_OHMS: f64 = 50.0;

/// Checks a receiver noise figure: finite, 0 to 60 dB.
pub fn check_noise_figure(noise_figure_db: f64) -> crate::Result<()> {
    if noise_figure_db.is_finite() && (0.0..=60.0).contains(&noise_figure_db) {
        Ok(())
    } else {
        Err(crate::Error::parameter(
            "noise_figure_db",
            noise_figure_db,
            "must be 0 to 60 dB",
        ))
    }
}

/// k·T₀ in dBm per hertz (−173.98).
pub fn thermal_noise_dbm_per_hz() -> f64 {
    db(BOLTZMANN * T0_KELVIN * 1e3)
}

/// A power in dBm as the RMS voltage across `REFERENCE_OHMS`, µV.
pub fn dbm_to_microvolts(dbm: f64) -> f64 {
    (from_db(dbm) * 1e-3 * REFERENCE_OHMS).sqrt() * 1e6
}

/// What a sensitivity figure asks of the audio.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Criterion {
    /// (S+N+D)/(N+D) = 12 dB.
    Sinad12,
    /// (S+N)/N = 10 dB.
    SPlusNOverN10,
}

impl Criterion {
    /// The output S/(N+D) in dB that meets the criterion: 10·log10(10^(x/10) − 1).
    pub fn output_snr_db(self) -> f64 {
        let x: f64 = match self {
            Criterion::Sinad12 => 12.0,
            Criterion::SPlusNOverN10 => 10.0,
        };
        db(from_db(x) - 1.0)
    }

    /// `12 dB SINAD` or `10 dB (S+N)/N`.
    pub fn label(self) -> &'static str {
        match self {
            Criterion::Sinad12 => "12 dB SINAD",
            Criterion::SPlusNOverN10 => "10 dB (S+N)/N",
        }
    }
}

/// One detector's sensitivity by one criterion.
#[derive(Debug, Clone, PartialEq)]
pub struct Sensitivity {
    /// The detector.
    pub detector: Detector,
    /// The criterion.
    pub criterion: Criterion,
    /// Channel SNR where the curve meets it, dB.
    pub channel_snr_db: f64,
    /// The level quoted, dBm.
    pub level_dbm: f64,
    /// The same as µV across 50 Ω.
    pub microvolts: f64,
    /// What the level is of: `carrier`, `PEP` or `mean`.
    pub reference: &'static str,
}

/// The quoted level over the test signal's mean power, dB, and its name (`carrier`, `PEP`
/// or `mean`).
pub fn reference_offset_db(detector: &Detector, mu: f64) -> (f64, &'static str) {
    match detector.test_signal() {
        Ok(TestSignal::FullCarrier) => (-db(1.0 + mu * mu / 2.0), "carrier"),
        Ok(TestSignal::Vestigial) => (-db(1.0 + mu * mu / 4.0), "carrier"),
        Ok(TestSignal::SuppressedCarrier) | Err(_) => (0.0, "mean"),
        Ok(TestSignal::UpperSideband | TestSignal::LowerSideband) => (0.0, "PEP"),
    }
}

/// Coming up from the lowest input, the channel SNR where the output SNR first reaches
/// `target_db`, linearly interpolated; `None` if no pair of points brackets it.
pub fn crossing(curve: &Curve, target_db: f64) -> Option<f64> {
    let mut points: Vec<(f64, f64)> = curve
        .points
        .iter()
        .map(|p| (p.channel_snr_db, p.output_snr_db))
        .collect();
    points.sort_by(|a, b| a.0.total_cmp(&b.0));
    points.windows(2).find_map(|w| {
        let ((x0, y0), (x1, y1)) = (w[0], w[1]);
        (y0 < target_db && y1 >= target_db).then(|| x0 + (target_db - y0) / (y1 - y0) * (x1 - x0))
    })
}

/// Every detector's sensitivity by both criteria for a receiver of noise figure
/// `noise_figure_db`, where the sweep brackets it.
pub fn sensitivities(result: &SweepResult, noise_figure_db: f64) -> Vec<Sensitivity> {
    let w = result.spec.trial.bandwidth_hz;
    let noise_dbm = thermal_noise_dbm_per_hz() + noise_figure_db + db(w);
    let mut out = Vec::new();
    for curve in &result.curves {
        for criterion in [Criterion::Sinad12, Criterion::SPlusNOverN10] {
            if let Some(snr) = crossing(curve, criterion.output_snr_db()) {
                let (offset, name) = reference_offset_db(&curve.detector, result.spec.trial.mu);
                let level_dbm = noise_dbm + snr + offset;
                out.push(Sensitivity {
                    detector: curve.detector,
                    criterion,
                    channel_snr_db: snr,
                    level_dbm,
                    microvolts: dbm_to_microvolts(level_dbm),
                    reference: name,
                });
            }
        }
    }
    out
}

/// One line per sensitivity figure, and a line for each detector the sweep does not bracket.
pub fn sensitivity_lines(result: &SweepResult, noise_figure_db: f64) -> Vec<String> {
    let found = sensitivities(result, noise_figure_db);
    let mut lines = vec![format!(
        "sensitivity, noise figure {noise_figure_db} dB, noise in W = {} Hz at T0 = 290 K \
         (levels across 50 Ω; EMF +6 dB):",
        result.spec.trial.bandwidth_hz
    )];
    for curve in &result.curves {
        for criterion in [Criterion::Sinad12, Criterion::SPlusNOverN10] {
            match found
                .iter()
                .find(|s| s.detector == curve.detector && s.criterion == criterion)
            {
                Some(s) => lines.push(format!(
                    "  {}: {} at {:.1} dBm {} ({:.3} µV), channel SNR {:.1} dB",
                    s.detector,
                    criterion.label(),
                    s.level_dbm,
                    s.reference,
                    s.microvolts,
                    s.channel_snr_db
                )),
                None => lines.push(format!(
                    "  {}: {} not bracketed by the swept range",
                    curve.detector,
                    criterion.label()
                )),
            }
        }
    }
    lines
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::demod::Mode;
    use crate::lab::{Axis, SweepPoint, SweepSpec};

    #[test]
    fn textbook_constants() {
        // kT₀ = −174 dBm/Hz (−173.98), the figure every receiver text quotes; 0 dBµV across
        // 50 Ω is −107 dBm (−106.99), and 0 dBm is 223.6 mV (both common bench figures).
        assert!((thermal_noise_dbm_per_hz() + 173.975).abs() < 0.01);
        assert!((dbm_to_microvolts(-106.99) - 1.0).abs() < 1e-3);
        assert!((dbm_to_microvolts(0.0) - 223_606.8).abs() < 0.1);
        // 12 dB SINAD is S/(N+D) = 11.717 dB; 10 dB (S+N)/N is S/N = 9.542 dB.
        assert!((Criterion::Sinad12.output_snr_db() - 11.717).abs() < 1e-3);
        assert!((Criterion::SPlusNOverN10.output_snr_db() - 9.542).abs() < 1e-3);
    }

    #[test]
    fn a_straight_curve_gives_the_hand_computed_level() {
        // usb on FoM 1: output = channel SNR, so 12 dB SINAD at 11.717 dB; with NF 10 dB and
        // W = 2700 Hz the noise is −173.98 + 10 + 34.31 = −129.66 dBm, the level −117.945 dBm
        // PEP = 0.2833 µV (checked by hand in Python).
        let mut spec = SweepSpec::new(
            vec![Detector::Receiver(Mode::Usb)],
            Axis::Snr,
            vec![0.0, 10.0, 20.0],
        );
        spec.trial.bandwidth_hz = 2700.0;
        let point = |x: f64| SweepPoint {
            input_db: x,
            channel_snr_db: x,
            cnr_db: None,
            output_snr_db: x,
            stderr_db: 0.0,
            theory_db: x,
            trials: 1,
        };
        let result = SweepResult {
            curves: vec![Curve {
                detector: spec.detectors[0],
                points: vec![point(0.0), point(10.0), point(20.0)],
            }],
            spec,
            trial_db: vec![],
        };
        let s = &sensitivities(&result, 10.0)[0];
        assert!((s.channel_snr_db - 11.717).abs() < 1e-3);
        assert!((s.level_dbm + 117.945).abs() < 0.01, "{s:?}");
        assert!((s.microvolts - 0.2833).abs() < 1e-3, "{s:?}");
        assert_eq!(s.reference, "PEP");
        assert_eq!(sensitivity_lines(&result, 10.0).len(), 3);
    }
}

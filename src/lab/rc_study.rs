//! The diode detector's time-constant trade-off on a clean tone: ripple when RC is short
//! against the carrier period, diagonal clipping when it is long against the message period.

use super::diode_receiver::diode_receiver;
use super::theory::diagonal_clipping_limit_s;
use crate::block::process_to_vec;
use crate::demod::{capacitor_voltage, DiodeConfig, ReceiverConfig};
use crate::measure::{fit_tone, sinad_db};
use crate::synth::AmToneTransmitter;
use crate::{Complex32, Error, Result};
use std::f64::consts::TAU;

/// IQ rate, carrier offset, bandwidth and audio rate of the study (the lab's trial settings).
const IQ_RATE: f64 = 96_000.0;
const OFFSET_HZ: f64 = 12_000.0;
const BANDWIDTH_HZ: f64 = 5_000.0;
const AUDIO_RATE: f64 = 48_000.0;
/// Carrier amplitude of the study (any: the ideal diode is homogeneous).
const CARRIER: f64 = 0.3;

/// What one time constant does to a clean tone-modulated carrier.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RcMeasurement {
    /// RC in seconds.
    pub rc_s: f64,
    /// RC over the IF carrier period.
    pub rc_over_carrier_period: f64,
    /// RC over the diagonal-clipping limit √(1−μ²)/(μω_m).
    pub rc_over_clipping_limit: f64,
    /// Peak-to-peak ripple of the capacitor on an unmodulated carrier, as a fraction of the
    /// carrier amplitude.
    pub ripple: f64,
    /// The same from the exponential discharge over one carrier period, 1 − e^(−T_c/RC)
    /// (valid for RC ≫ T_c; Haykin, Communication Systems, ch. 2).
    pub ripple_theory: f64,
    /// Audio tone amplitude over A_c·μ: the detection gain (1 for an ideal envelope).
    pub gain: f64,
    /// SINAD of the audio, dB (TIA-603 definition, [`sinad_db`]).
    pub sinad_db: f64,
    /// SINAD of the raw capacitor voltage (no low-pass, ripple included), dB.
    pub capacitor_sinad_db: f64,
}

/// Measures `rc_s` on tone AM of index `mu` at `tone_hz`: ripple on the unmodulated IF carrier,
/// and gain and SINAD of 1 s of audio from the [`DiodeReceiver`](super::diode_receiver::DiodeReceiver) after 0.25 s of settling.
pub fn measure_rc(rc_s: f64, mu: f64, tone_hz: f64) -> Result<RcMeasurement> {
    let mut receiver_config = ReceiverConfig::new(IQ_RATE, OFFSET_HZ);
    receiver_config.options.bandwidth_hz = Some(BANDWIDTH_HZ);
    receiver_config.options.audio_rate = AUDIO_RATE;
    let mut rx = diode_receiver(&receiver_config, rc_s)?;
    let config = *rx.detector().diode();
    let mut tx = AmToneTransmitter::new(CARRIER, mu, tone_hz, OFFSET_HZ, IQ_RATE)?;
    let mut iq = vec![Complex32::default(); (1.25 * IQ_RATE) as usize];
    tx.fill(&mut iq);
    let audio = process_to_vec(&mut rx, &iq);
    let audio = &audio[(0.25 * AUDIO_RATE) as usize..];
    let unmeasurable = || Error::parameter("RC", rc_s, "the audio tone could not be measured");
    let fit = fit_tone(audio, AUDIO_RATE, tone_hz).ok_or_else(unmeasurable)?;
    let period = 1.0 / config.if_hz();
    Ok(RcMeasurement {
        rc_s,
        rc_over_carrier_period: rc_s / period,
        rc_over_clipping_limit: rc_s / diagonal_clipping_limit_s(mu, tone_hz),
        ripple: carrier_ripple(&config, rc_s),
        ripple_theory: 1.0 - (-period / rc_s).exp(),
        gain: fit.amplitude / (CARRIER * mu),
        sinad_db: sinad_db(audio, AUDIO_RATE, tone_hz).ok_or_else(unmeasurable)?,
        capacitor_sinad_db: capacitor_sinad(&config, rc_s, mu, tone_hz).ok_or_else(unmeasurable)?,
    })
}

/// SINAD of the capacitor voltage over 20 ms (after 5 ms of charging) of the modulated IF.
fn capacitor_sinad(config: &DiodeConfig, rc_s: f64, mu: f64, tone_hz: f64) -> Option<f64> {
    let rate = config.passband_rate();
    let x = if_carrier(config, mu, tone_hz, 1.0, 0.025);
    let v = capacitor_voltage(&x, rc_s, rate);
    sinad_db(&v[(0.005 * rate) as usize..], rate, tone_hz)
}

/// Peak-to-peak ripple over the last carrier cycles of 2 ms of unmodulated IF, per unit
/// carrier amplitude.
fn carrier_ripple(config: &DiodeConfig, rc_s: f64) -> f64 {
    let x = if_carrier(config, 0.0, 1000.0, 1.0, 0.002);
    let v = capacitor_voltage(&x, rc_s, config.passband_rate());
    let tail = &v[v.len() - 4 * config.samples_per_cycle..];
    let (lo, hi) = tail
        .iter()
        .fold((f32::MAX, f32::MIN), |(a, b), &x| (a.min(x), b.max(x)));
    f64::from(hi - lo)
}

/// `seconds` of the real IF of the diode detector, amplitude A(1 + μ cos ω_m t) cos ω_IF t:
/// the signal the capacitor sees (the detector itself builds it from the channel by
/// interpolation).
pub fn if_carrier(
    config: &DiodeConfig,
    mu: f64,
    tone_hz: f64,
    amplitude: f64,
    seconds: f64,
) -> Vec<f32> {
    let rate = config.passband_rate();
    let f_if = config.if_hz();
    (0..(seconds * rate) as usize)
        .map(|n| {
            let t = n as f64 / rate;
            (amplitude * (1.0 + mu * (TAU * tone_hz * t).cos()) * (TAU * f_if * t).cos()) as f32
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ripple_follows_the_discharge_law() {
        // RC ≫ T_c = 10.4 µs: the capacitor loses at most 1 − e^(−T_c/RC) of the peak per
        // cycle (Haykin ch. 2); it is recharged before a full period has passed, so a little
        // less (within 15 % of the bound from 50 µs up).
        for rc in [50e-6, 100e-6, 400e-6] {
            let m = measure_rc(rc, 0.5, 1000.0).unwrap();
            assert!(m.ripple <= m.ripple_theory, "{m:?}");
            assert!(m.ripple > 0.85 * m.ripple_theory, "{m:?}");
        }
        // RC far below the period: the capacitor empties between peaks (half-wave rectifier).
        let short = measure_rc(0.5e-6, 0.5, 1000.0).unwrap();
        assert!(short.ripple > 0.99, "{short:?}");
    }
}

//! A speech-like test message with no recorded voice: the generator's band-limited programme
//! noise ([`NoiseMessage`]) shaped by a syllabic envelope.
//!
//! Model (common practice for artificial speech-like signals, no source; the rates are
//! typical figures of running speech, from memory): "syllables" of 120 to 280 ms, each a
//! Hann-shaped burst of level 0.5 to 1 (the stress), separated by pauses of 40 to 250 ms of
//! silence, about four syllables a second; the carrier noise occupies 150 Hz to the message
//! bandwidth with a crest factor of 3. All lengths and levels are drawn from one seeded
//! generator, so the same seed gives the same message.

use crate::synth::{MessageSource, NoiseMessage};
use crate::{Error, Result};
use rand::{rngs::StdRng, RngExt, SeedableRng};

/// `seconds` of speech-like message at `rate` occupying 150 Hz .. `bandwidth_hz`, from
/// `seed`; peak about 1.
///
/// ```
/// let m = amrx::lab::speech::speech_like(10_000.0, 4000.0, 2.0, 1).unwrap();
/// assert_eq!(m.len(), 20_000);
/// ```
pub fn speech_like(rate: f64, bandwidth_hz: f64, seconds: f64, seed: u64) -> Result<Vec<f64>> {
    if !(seconds.is_finite() && seconds > 0.0 && seconds * rate <= 1e8) {
        return Err(Error::parameter(
            "seconds",
            seconds,
            "must be positive (and below 1e8 samples)",
        ));
    }
    let len = (seconds * rate).round() as usize;
    let mut noise = NoiseMessage::new(150.0, bandwidth_hz, 3.0, rate, seed)?;
    let mut out = vec![0.0; len];
    noise.fill(&mut out);
    let mut rng = StdRng::seed_from_u64(seed ^ 0x5_1ab1e);
    let mut n = 0usize;
    let mut envelope = vec![0.0; len];
    while n < len {
        let pause = (rng.random_range(0.04..0.25) * rate) as usize;
        n += pause;
        let syllable = ((rng.random_range(0.12..0.28) * rate) as usize).max(2);
        let level: f64 = rng.random_range(0.5..1.0);
        for k in 0..syllable {
            if n + k >= len {
                break;
            }
            let phase = std::f64::consts::TAU * k as f64 / (syllable - 1) as f64;
            envelope[n + k] = level * 0.5 * (1.0 - phase.cos());
        }
        n += syllable;
    }
    for (o, e) in out.iter_mut().zip(&envelope) {
        *o *= e;
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn has_syllables_and_pauses() {
        // About four syllables a second: over 10 s the envelope, read as 10 ms frame powers,
        // has between 25 and 60 bursts and spends 15–50 % of the time silent.
        let m = speech_like(10_000.0, 4000.0, 10.0, 3).unwrap();
        let frames: Vec<f64> = m
            .chunks(100)
            .map(|c| c.iter().map(|v| v * v).sum())
            .collect();
        let silent = frames.iter().filter(|&&p| p == 0.0).count() as f64 / frames.len() as f64;
        let bursts = frames
            .windows(2)
            .filter(|w| w[0] == 0.0 && w[1] > 0.0)
            .count();
        assert!((25..=60).contains(&bursts), "{bursts}");
        assert!((0.15..0.5).contains(&silent), "{silent}");
        assert_eq!(m, speech_like(10_000.0, 4000.0, 10.0, 3).unwrap());
        assert!(m.iter().all(|v| v.abs() <= 1.5));
    }
}

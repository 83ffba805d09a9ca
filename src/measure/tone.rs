//! Tone frequency estimation and SINAD of a demodulated test tone.

/// A least-squares sine fit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ToneFit {
    /// Frequency in Hz.
    pub frequency_hz: f64,
    /// Amplitude (peak).
    pub amplitude: f64,
    /// Phase in radians.
    pub phase: f64,
}

/// Estimates the dominant tone's frequency in Hz.
pub fn estimate_tone_hz(audio: &[f32], sample_rate: f64) -> Option<f64> {
    let _ = (audio, sample_rate);
    todo!()
}

/// SINAD in dB: total power over the power left after removing the fitted tone (and DC).
pub fn sinad_db(audio: &[f32], sample_rate: f64, tone_hz: f64) -> Option<f64> {
    let _ = (audio, sample_rate, tone_hz);
    todo!()
}

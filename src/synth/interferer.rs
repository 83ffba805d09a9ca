//! An adjacent-channel interferer: another emission added at its own offset and level.

use crate::block::Block;
use crate::synth::{Emission, EmissionSpec};
use crate::{Complex32, Result};
use std::path::Path;

/// Adds an [`Emission`] (any mode and message of the scene schema) to the signal.
pub struct Interferer {
    emission: Emission,
    spec: EmissionSpec,
    sample_rate: f64,
    seed: u64,
}

impl std::fmt::Debug for Interferer {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Interferer")
            .field("emission", &self.emission)
            .finish_non_exhaustive()
    }
}

impl Interferer {
    /// The interferer described by `spec` (its offset and level set where it sits), running
    /// for as long as the input lasts (start/stop times still apply).
    ///
    /// ```
    /// use amrx::synth::Interferer;
    /// use amrx::synth::EmissionSpec;
    /// let spec: EmissionSpec = serde_json::from_str(r#"{"label":"adj","mode":"am","offset_hz":9000,
    ///   "level_db":-20,"mu":0.6,"message":{"type":"tone","frequency_hz":800}}"#).unwrap();
    /// let adj = Interferer::new(&spec, 48e3, 1).unwrap();
    /// ```
    pub fn new(spec: &EmissionSpec, sample_rate: f64, seed: u64) -> Result<Self> {
        Ok(Interferer {
            emission: Emission::new(spec, sample_rate, u64::MAX, seed, Path::new("."))?,
            spec: spec.clone(),
            sample_rate,
            seed,
        })
    }

    /// The interfering emission.
    pub fn emission(&self) -> &Emission {
        &self.emission
    }
}

impl Block for Interferer {
    type Input = Complex32;
    type Output = Complex32;

    fn process(&mut self, input: &[Complex32], output: &mut [Complex32]) -> (usize, usize) {
        let n = input.len().min(output.len());
        output[..n].copy_from_slice(&input[..n]);
        self.emission.add_to(&mut output[..n]);
        (n, n)
    }

    fn max_output_len(&self, input_len: usize) -> usize {
        input_len
    }

    fn rate_ratio(&self) -> f64 {
        1.0
    }

    fn delay(&self) -> f64 {
        0.0
    }

    fn reset(&mut self) {
        if let Ok(e) = Emission::new(
            &self.spec,
            self.sample_rate,
            u64::MAX,
            self.seed,
            Path::new("."),
        ) {
            self.emission = e;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::check::{check_block, BlockCheck, DelayProbe};

    #[test]
    fn adds_an_am_interferer_at_its_offset_and_level() {
        // Level −20 dB: carrier amplitude 0.1, so carrier power 0.01 at +9 kHz, measured by
        // projection over whole cycles (the interpolator's ripple ≈ 1e-4 of the amplitude).
        let spec: EmissionSpec = serde_json::from_str(
            r#"{"label":"adj","mode":"am","offset_hz":9000,
            "level_db":-20,"mu":0.6,"message":{"type":"tone","frequency_hz":800}}"#,
        )
        .unwrap();
        let fs = 48e3;
        let x = vec![Complex32::new(0.2, 0.0); 96_000];
        let y = crate::block::process_in_chunks(
            &mut Interferer::new(&spec, fs, 1).unwrap(),
            &x,
            &[4096],
        );
        let (_, _, carrier) =
            crate::dsp::test_util::line_amplitudes(&y[48_000..], 9000.0, 800.0, fs);
        assert!((carrier - 0.1).abs() < 1e-3, "{carrier}");
        let (_, _, dc) = crate::dsp::test_util::line_amplitudes(&y[48_000..], 0.0, 800.0, fs);
        assert!((dc - 0.2).abs() < 1e-3, "{dc}");
    }

    /// Additive: the input passes with no delay, so a probe tone at 480–960 Hz (well away
    /// from the interferer's lines at 8.2–9.8 kHz) must read 0.
    #[test]
    fn meets_the_block_contract() {
        let spec: EmissionSpec = serde_json::from_str(
            r#"{"label":"adj","mode":"am","offset_hz":9000,
            "level_db":-20,"mu":0.6,"message":{"type":"tone","frequency_hz":800}}"#,
        )
        .unwrap();
        let x: Vec<Complex32> = (0..6000)
            .map(|n| Complex32::new((n as f32 * 0.1).sin(), 0.3))
            .collect();
        let make = || Interferer::new(&spec, 48e3, 1).unwrap();
        let signal = |f: f64| crate::dsp::test_util::complex_tone(20_000, f);
        check_block(&BlockCheck {
            delay_probe: Some(DelayProbe {
                signal: &signal,
                tones: [0.01, 0.02],
            }),
            ..BlockCheck::new(&make, &x)
        });
    }
}

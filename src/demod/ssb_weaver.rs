//! Single-sideband detection by the Weaver method (D. K. Weaver, "A third method of
//! generation and detection of single-sideband signals", Proc. IRE, 1956).
//!
//! The wanted sideband's audio band [f_low, W] is moved to ±(W − f_low)/2 around 0 Hz by
//! multiplying with e^(∓jω0t), f0 = (f_low + W)/2; a real low-pass (the same FIR on I and Q)
//! keeps |f| ≤ (W − f_low)/2, which removes the other sideband (now beyond f0 + f_low); the
//! product with e^(±jω0t) moves the band back and the real part is the audio. The opposite
//! sideband's rejection is the low-pass stopband attenuation.

use crate::block::Block;
use crate::demod::Sideband;
use crate::dsp::{design_lowpass, Fir, LowpassSpec, Nco};
use crate::{Complex32, Error, Result};

/// Samples handled per internal step (sizes the scratch buffers).
const PIECE: usize = 2048;
/// Stopband attenuation of the Weaver low-pass (at least 60 dB asked; 5 dB margin for the
/// empirical Kaiser formulas; common practice, no source).
pub const WEAVER_ATTENUATION_DB: f64 = 65.0;

/// Weaver-method SSB detector: complex channel in, real audio out at the same rate.
#[derive(Debug, Clone)]
pub struct WeaverDetector {
    nco: Nco,
    lowpass: Fir<Complex32>,
    oscillator: Vec<Complex32>,
    shifted: Vec<Complex32>,
    filtered: Vec<Complex32>,
}

impl WeaverDetector {
    /// A detector for `sideband` passing audio in [`low_edge_hz`, `bandwidth_hz`] at
    /// `sample_rate`.
    ///
    /// ```
    /// use amrx::demod::{Sideband, WeaverDetector};
    /// let det = WeaverDetector::new(Sideband::Upper, 100.0, 2700.0, 48_000.0).unwrap();
    /// assert_eq!(det.centre_hz(), 1400.0);
    /// ```
    pub fn new(
        sideband: Sideband,
        low_edge_hz: f64,
        bandwidth_hz: f64,
        sample_rate: f64,
    ) -> Result<Self> {
        if !(low_edge_hz.is_finite()
            && low_edge_hz > 0.0
            && bandwidth_hz.is_finite()
            && bandwidth_hz > low_edge_hz)
        {
            return Err(Error::parameter(
                "bandwidth_hz",
                bandwidth_hz,
                format!("the SSB audio band must lie above its low edge ({low_edge_hz} Hz)"),
            ));
        }
        let centre = 0.5 * (low_edge_hz + bandwidth_hz);
        let half = 0.5 * (bandwidth_hz - low_edge_hz);
        let taps = design_lowpass(&LowpassSpec {
            passband_hz: half,
            // The other sideband's nearest edge, −f_low, lands at −(f0 + f_low).
            stopband_hz: (centre + low_edge_hz).min(0.5 * sample_rate),
            attenuation_db: WEAVER_ATTENUATION_DB,
            sample_rate,
        })?;
        let down = match sideband {
            Sideband::Upper => -centre,
            Sideband::Lower => centre,
        };
        Ok(WeaverDetector {
            nco: Nco::new(down, sample_rate)?,
            lowpass: Fir::new(&taps)?,
            oscillator: vec![Complex32::default(); PIECE],
            shifted: vec![Complex32::default(); PIECE],
            filtered: vec![Complex32::default(); PIECE],
        })
    }

    /// The shift f0 = (f_low + W)/2 in Hz.
    pub fn centre_hz(&self) -> f64 {
        self.nco.frequency().abs()
    }

    /// Number of low-pass taps.
    pub fn num_taps(&self) -> usize {
        self.lowpass.num_taps()
    }

    fn process_piece(&mut self, input: &[Complex32], output: &mut [f32]) {
        let n = input.len();
        for ((x, lo), shifted) in input
            .iter()
            .zip(&mut self.oscillator[..n])
            .zip(&mut self.shifted[..n])
        {
            *lo = self.nco.next_sample();
            *shifted = x * *lo;
        }
        self.lowpass
            .process(&self.shifted[..n], &mut self.filtered[..n]);
        // Re{y·conj(lo)} with the same oscillator sample: the shift back is time-aligned, so
        // the whole is a time-invariant band-pass.
        for ((out, y), lo) in output
            .iter_mut()
            .zip(&self.filtered[..n])
            .zip(&self.oscillator[..n])
        {
            *out = y.re * lo.re + y.im * lo.im;
        }
    }
}

impl Block for WeaverDetector {
    type Input = Complex32;
    type Output = f32;

    fn process(&mut self, input: &[Complex32], output: &mut [f32]) -> (usize, usize) {
        let n = input.len().min(output.len());
        let mut done = 0;
        while done < n {
            let take = PIECE.min(n - done);
            self.process_piece(&input[done..done + take], &mut output[done..done + take]);
            done += take;
        }
        (n, n)
    }

    fn max_output_len(&self, input_len: usize) -> usize {
        input_len
    }

    fn rate_ratio(&self) -> f64 {
        1.0
    }

    fn delay(&self) -> f64 {
        self.lowpass.delay()
    }

    fn reset(&mut self) {
        let (f, fs) = (self.nco.frequency(), self.nco.sample_rate());
        if let Ok(nco) = Nco::new(f, fs) {
            self.nco = nco;
        }
        self.lowpass.reset();
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::process_to_vec;
    use rand::{rngs::StdRng, RngExt, SeedableRng};
    use std::f64::consts::TAU;

    const FS: f64 = 48_000.0;

    fn tone(freq: f64, len: usize) -> Vec<Complex32> {
        (0..len)
            .map(|n| Complex32::from_polar(1.0, (TAU * freq * n as f64 / FS) as f32))
            .collect()
    }

    fn amplitude(y: &[f32], skip: usize) -> f64 {
        let y = &y[skip..];
        (2.0 * y.iter().map(|&v| f64::from(v).powi(2)).sum::<f64>() / y.len() as f64).sqrt()
    }

    /// A kept tone comes out at amplitude 1 (±3·10^(−65/20) passband ripple, rounded up);
    /// the opposite sideband from f_low to W is ≥ 60 dB down (the low-pass stopband).
    #[test]
    fn signs_and_rejection() {
        for sideband in [Sideband::Upper, Sideband::Lower] {
            let s = if sideband == Sideband::Upper {
                1.0
            } else {
                -1.0
            };
            for f in [100.0, 1000.0, 2700.0] {
                let make = || WeaverDetector::new(sideband, 100.0, 2700.0, FS).unwrap();
                let skip = 2 * make().num_taps();
                let wanted = amplitude(&process_to_vec(&mut make(), &tone(s * f, 24_000)), skip);
                let unwanted = amplitude(&process_to_vec(&mut make(), &tone(-s * f, 24_000)), skip);
                let rejection = 20.0 * (wanted / unwanted).log10();
                println!("{sideband:?} {f} Hz: gain {wanted:.4}, rejection {rejection:.1} dB");
                assert!(
                    (wanted - 1.0).abs() < 2e-3,
                    "{sideband:?} {f}: gain {wanted}"
                );
                assert!(rejection > 60.0, "{sideband:?} {f}: {rejection:.1} dB");
            }
        }
    }

    /// The contract on noise, and the delay probed on upper-sideband tones (the Weaver
    /// shifts add a constant phase, which the probe's phase difference cancels).
    #[test]
    fn meets_the_block_contract() {
        use crate::block::check::{check_block, BlockCheck, DelayProbe};
        let mut rng = StdRng::seed_from_u64(22);
        let x: Vec<Complex32> = (0..20_000)
            .map(|_| Complex32::new(rng.random_range(-1.0..1.0), rng.random_range(-1.0..1.0)))
            .collect();
        let upper = |f: f64| tone(f * FS, 40_000);
        let make = || WeaverDetector::new(Sideband::Upper, 300.0, 3000.0, 8000.0).unwrap();
        check_block(&BlockCheck {
            delay_probe: Some(DelayProbe {
                signal: &upper,
                tones: [1000.0 / 8000.0, 1010.0 / 8000.0],
            }),
            ..BlockCheck::new(&make, &x)
        });
    }

    #[test]
    fn bad_settings_are_errors() {
        assert!(WeaverDetector::new(Sideband::Upper, 100.0, 50.0, FS).is_err());
        assert!(WeaverDetector::new(Sideband::Upper, 0.0, 2700.0, FS).is_err());
        assert!(WeaverDetector::new(Sideband::Upper, 100.0, f64::NAN, FS).is_err());
    }
}

//! Short-Time Objective Intelligibility (STOI): C. H. Taal, R. C. Hendriks, R. Heusdens,
//! J. Jensen, "An algorithm for intelligibility prediction of time-frequency weighted noisy
//! speech", IEEE Trans. Audio, Speech, Lang. Process., 2011.
//!
//! Steps, as in the paper, with the frame bookkeeping of the widely used `pystoi` package
//! (which CI runs on the same signals, `tests/stoi_check.py`, and which must agree within
//! 0.01): signals at 10 kHz; frames of 256 samples (Hann, the symmetric window without its
//! zero end points), hop 128; frames of the clean signal more than 40 dB below its loudest
//! frame are dropped from both signals, which are rebuilt by overlap-add; a 512-point FFT of
//! each frame; 15 one-third-octave bands from 150 Hz (band edges rounded to the nearest FFT
//! bin); the band envelopes over segments of 30 frames (384 ms); in each segment and band the
//! processed envelope is scaled to the clean one's energy and clipped at the clean one times
//! 1 + 10^(15/20) (β = −15 dB), and the two are correlated; STOI is the mean correlation.

use crate::{Error, Result};
use num_complex::Complex64;

/// The sample rate STOI works at, Hz.
pub const STOI_RATE: f64 = 10_000.0;
const FRAME: usize = 256;
const HOP: usize = 128;
const NFFT: usize = 512;
const BANDS: usize = 15;
const LOWEST_CENTRE_HZ: f64 = 150.0;
const SEGMENT: usize = 30;
const BETA_DB: f64 = -15.0;
const DYNAMIC_RANGE_DB: f64 = 40.0;
/// Added to norms before dividing (the double-precision machine epsilon, as `pystoi`).
const EPS: f64 = f64::EPSILON;

/// The Hann window of `FRAME` points without its zero end points: 0.5·(1 − cos(2π(n+1)/(N+1))).
fn window() -> Vec<f64> {
    (0..FRAME)
        .map(|n| 0.5 * (1.0 - (std::f64::consts::TAU * (n + 1) as f64 / (FRAME + 1) as f64).cos()))
        .collect()
}

/// Frame starts 0, HOP, … strictly below `len − FRAME`.
fn starts(len: usize) -> impl Iterator<Item = usize> {
    (0..len.saturating_sub(FRAME)).step_by(HOP)
}

/// Drops the frames of `clean` more than 40 dB below its loudest (and the same frames of
/// `processed`), windowed, and rebuilds both by overlap-add.
fn remove_silent_frames(clean: &[f64], processed: &[f64]) -> (Vec<f64>, Vec<f64>) {
    let w = window();
    let energy: Vec<f64> = starts(clean.len())
        .map(|i| {
            let e: f64 = (0..FRAME).map(|n| (w[n] * clean[i + n]).powi(2)).sum();
            20.0 * (e.sqrt() + EPS).log10()
        })
        .collect();
    let loudest = energy.iter().copied().fold(f64::MIN, f64::max);
    let kept: Vec<usize> = starts(clean.len())
        .zip(&energy)
        .filter(|(_, &e)| loudest - DYNAMIC_RANGE_DB - e < 0.0)
        .map(|(i, _)| i)
        .collect();
    if kept.is_empty() {
        return (Vec::new(), Vec::new());
    }
    let len = (kept.len() - 1) * HOP + FRAME;
    let (mut x, mut y) = (vec![0.0; len], vec![0.0; len]);
    for (k, &i) in kept.iter().enumerate() {
        for n in 0..FRAME {
            x[k * HOP + n] += w[n] * clean[i + n];
            y[k * HOP + n] += w[n] * processed[i + n];
        }
    }
    (x, y)
}

/// The one-third-octave band of each FFT bin range: (first bin, one past the last).
fn band_bins() -> Vec<(usize, usize)> {
    let bin_hz = STOI_RATE / NFFT as f64;
    let nearest = |f: f64| {
        // The first bin of least squared distance (ties go to the lower bin).
        (0..=NFFT / 2)
            .min_by(|&a, &b| {
                let da = (a as f64 * bin_hz - f).powi(2);
                let db = (b as f64 * bin_hz - f).powi(2);
                da.total_cmp(&db).then(a.cmp(&b))
            })
            .unwrap_or(0)
    };
    (0..BANDS)
        .map(|k| {
            let k = k as f64;
            let low = LOWEST_CENTRE_HZ * 2f64.powf((2.0 * k - 1.0) / 6.0);
            let high = LOWEST_CENTRE_HZ * 2f64.powf((2.0 * k + 1.0) / 6.0);
            (nearest(low), nearest(high))
        })
        .collect()
}

/// Band envelopes: `[frame][band]` = √(Σ over the band's bins of |X|²).
fn band_envelopes(x: &[f64]) -> Vec<[f64; BANDS]> {
    let w = window();
    let bands = band_bins();
    let fft = crate::measure::spectrum::plan_forward(NFFT);
    let mut buf = vec![Complex64::default(); NFFT];
    starts(x.len())
        .map(|i| {
            buf.iter_mut().for_each(|z| *z = Complex64::default());
            for n in 0..FRAME {
                buf[n].re = w[n] * x[i + n];
            }
            fft.process(&mut buf);
            let mut out = [0.0; BANDS];
            for (o, &(lo, hi)) in out.iter_mut().zip(&bands) {
                *o = buf[lo..hi].iter().map(|z| z.norm_sqr()).sum::<f64>().sqrt();
            }
            out
        })
        .collect()
}

/// STOI of `processed` against `clean`, both at [`STOI_RATE`] and of equal length, aligned.
/// Errors: different lengths, another rate, non-finite samples, or fewer than 30 frames
/// (about 0.4 s) of speech left after the silent frames are dropped.
///
/// ```
/// use amrx::lab::stoi::{stoi, STOI_RATE};
/// let x: Vec<f64> = (0..20_000).map(|n| ((n as f64) * 0.3).sin() * ((n as f64) * 0.002).sin()).collect();
/// assert!((stoi(&x, &x, STOI_RATE).unwrap() - 1.0).abs() < 1e-9);
/// ```
pub fn stoi(clean: &[f64], processed: &[f64], rate: f64) -> Result<f64> {
    if rate != STOI_RATE {
        return Err(Error::parameter(
            "sample_rate",
            rate,
            "STOI works at 10 000 Hz",
        ));
    }
    if clean.len() != processed.len() {
        return Err(Error::parameter(
            "processed",
            processed.len(),
            format!("must be as long as the clean signal ({})", clean.len()),
        ));
    }
    if clean.iter().chain(processed).any(|v| !v.is_finite()) {
        return Err(Error::parameter(
            "samples",
            "non-finite",
            "must all be finite",
        ));
    }
    let (x, y) = remove_silent_frames(clean, processed);
    let (xe, ye) = (band_envelopes(&x), band_envelopes(&y));
    if xe.len() < SEGMENT {
        return Err(Error::parameter(
            "clean",
            format!("{} frames of speech", xe.len()),
            "needs at least 30 frames (0.4 s) above the silence threshold",
        ));
    }
    let clip = 1.0 + 10f64.powf(-BETA_DB / 20.0);
    let mut sum = 0.0;
    let mut count = 0usize;
    for m in SEGMENT..=xe.len() {
        for band in 0..BANDS {
            let xs: Vec<f64> = xe[m - SEGMENT..m].iter().map(|f| f[band]).collect();
            let ys: Vec<f64> = ye[m - SEGMENT..m].iter().map(|f| f[band]).collect();
            let norm = |v: &[f64]| v.iter().map(|a| a * a).sum::<f64>().sqrt();
            let alpha = norm(&xs) / (norm(&ys) + EPS);
            let yp: Vec<f64> = ys
                .iter()
                .zip(&xs)
                .map(|(y, x)| (alpha * y).min(x * clip))
                .collect();
            let mean = |v: &[f64]| v.iter().sum::<f64>() / v.len() as f64;
            let (mx, my) = (mean(&xs), mean(&yp));
            let xc: Vec<f64> = xs.iter().map(|v| v - mx).collect();
            let yc: Vec<f64> = yp.iter().map(|v| v - my).collect();
            let dot: f64 = xc.iter().zip(&yc).map(|(a, b)| a * b).sum();
            sum += dot / ((norm(&xc) + EPS) * (norm(&yc) + EPS));
            count += 1;
        }
    }
    Ok(sum / count as f64)
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{rngs::StdRng, SeedableRng};
    use rand_distr::{Distribution, StandardNormal};

    #[test]
    fn bands_follow_the_third_octave_formula() {
        // Centre 150·2^(k/3) Hz, edges at 2^(∓1/6) of it (Taal et al., 2011, sec. II): the
        // first band 133.6..168.4 Hz lands on bins 7..9 (19.53 Hz bins), the last (centre
        // 150·2^(14/3) = 3810 Hz) on bins 174..219.
        let b = band_bins();
        assert_eq!(b[0], (7, 9));
        assert_eq!(b[14], (174, 219));
    }

    #[test]
    fn identical_signals_score_one_and_noise_lowers_the_score() {
        let mut rng = StdRng::seed_from_u64(4);
        let x: Vec<f64> = (0..30_000)
            .map(|n| {
                let syllable = (std::f64::consts::TAU * 4.0 * n as f64 / STOI_RATE)
                    .sin()
                    .max(0.0);
                syllable * {
                    let z: f64 = StandardNormal.sample(&mut rng);
                    z
                }
            })
            .collect();
        assert!((stoi(&x, &x, STOI_RATE).unwrap() - 1.0).abs() < 1e-9);
        let noisy = |g: f64, seed| {
            let mut r = StdRng::seed_from_u64(seed);
            x.iter()
                .map(|v| {
                    let z: f64 = StandardNormal.sample(&mut r);
                    v + g * z
                })
                .collect::<Vec<f64>>()
        };
        let a = stoi(&x, &noisy(0.1, 1), STOI_RATE).unwrap();
        let b = stoi(&x, &noisy(1.0, 1), STOI_RATE).unwrap();
        assert!(1.0 > a && a > b, "{a} {b}");
        assert!(stoi(&x, &x[1..], STOI_RATE).is_err());
        assert!(stoi(&x, &x, 16_000.0).is_err());
        assert!(stoi(&x[..1000], &x[..1000], STOI_RATE).is_err());
    }
}

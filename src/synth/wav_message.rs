//! Audio from a WAV file as a message, resampled to the modulator's rate.

use super::message::MessageSource;
use super::real_fir::RealFir;
use crate::block::Block;
use crate::dsp::RationalResampler;
use crate::{Error, Result};
use std::fs::File;
use std::io::BufReader;
use std::path::{Path, PathBuf};

/// WAV frames read per refill.
const READ_FRAMES: usize = 1024;
/// Stopband attenuation of the resampler and the band-pass, dB (common practice, no source).
const ATTENUATION_DB: f64 = 70.0;

/// A WAV file (any channel count, mixed to mono; integer or float PCM), normalised to a peak
/// of 1 and played in a loop, resampled by [`RationalResampler`] (a polyphase interpolator, no
/// sample repetition) and band-passed to `low_hz..bandwidth_hz`.
pub struct WavMessage {
    path: PathBuf,
    reader: hound::WavReader<BufReader<File>>,
    channels: usize,
    int_scale: Option<f32>,
    normalise: f32,
    resampler: RationalResampler<f32>,
    band: RealFir,
    frames: Vec<f32>,
    resampled: Vec<f32>,
    at: usize,
    ready: usize,
    mean_square: f64,
    band_hz: (f64, f64),
    failed: bool,
}

impl std::fmt::Debug for WavMessage {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("WavMessage")
            .field("path", &self.path)
            .field("band_hz", &self.band_hz)
            .finish_non_exhaustive()
    }
}

impl WavMessage {
    /// Opens `path` for a message at `sample_rate`, occupying `low_hz`..`bandwidth_hz`
    /// (`bandwidth_hz` below half of both the file's and the target rate).
    ///
    /// The file is scanned once here for its peak and mean square. Errors name the file.
    pub fn open(path: &Path, low_hz: f64, bandwidth_hz: f64, sample_rate: f64) -> Result<Self> {
        let bad = |e: hound::Error| Error::file(path, format!("cannot read WAV audio: {e}"));
        let reader = hound::WavReader::open(path).map_err(bad)?;
        let spec = reader.spec();
        let channels = usize::from(spec.channels.max(1));
        let int_scale = match spec.sample_format {
            hound::SampleFormat::Int => Some(1.0 / 2f32.powi(i32::from(spec.bits_per_sample) - 1)),
            hound::SampleFormat::Float => None,
        };
        let (peak, mean_square) = scan(path, channels, int_scale)?;
        let rate = f64::from(spec.sample_rate);
        if !(bandwidth_hz.is_finite() && bandwidth_hz > low_hz && bandwidth_hz < 0.45 * rate) {
            return Err(Error::file(
                path,
                format!("message bandwidth {bandwidth_hz} Hz must lie above the low edge {low_hz} Hz and below 0.45 × the file's rate {rate} Hz"),
            ));
        }
        let resampler = RationalResampler::design(rate, sample_rate, bandwidth_hz, ATTENUATION_DB)
            .map_err(|e| Error::file(path, e.to_string()))?;
        let width = if low_hz > 0.0 {
            (0.15 * bandwidth_hz).min(low_hz / 2.0)
        } else {
            0.15 * bandwidth_hz
        };
        let band = RealFir::band_pass(low_hz, bandwidth_hz, width, ATTENUATION_DB, sample_rate)
            .map_err(|e| Error::file(path, e.to_string()))?;
        let resampled = vec![0.0; resampler.max_output_len(READ_FRAMES)];
        Ok(WavMessage {
            path: path.to_path_buf(),
            reader,
            channels,
            int_scale,
            normalise: 1.0 / peak,
            resampler,
            band,
            frames: Vec::with_capacity(READ_FRAMES),
            resampled,
            at: 0,
            ready: 0,
            mean_square: mean_square / f64::from(peak).powi(2),
            band_hz: (low_hz, bandwidth_hz),
            failed: false,
        })
    }

    /// Reads up to [`READ_FRAMES`] mono frames, rewinding at the end of the file.
    fn read_frames(&mut self) {
        self.frames.clear();
        let mut mix = 0.0f32;
        let mut in_frame = 0;
        let mut rewound = false;
        while self.frames.len() < READ_FRAMES {
            match next_sample(&mut self.reader, self.int_scale) {
                Some(v) => {
                    rewound = false;
                    mix += v;
                    in_frame += 1;
                    if in_frame == self.channels {
                        self.frames
                            .push(mix / self.channels as f32 * self.normalise);
                        mix = 0.0;
                        in_frame = 0;
                    }
                }
                None if !rewound => {
                    rewound = true;
                    if self.reader.seek(0).is_err() {
                        self.failed = true;
                        return;
                    }
                }
                None => {
                    self.failed = true;
                    return;
                }
            }
        }
    }

    fn refill(&mut self) {
        self.read_frames();
        let (_, produced) = self.resampler.process(&self.frames, &mut self.resampled);
        self.at = 0;
        self.ready = produced;
    }
}

fn next_sample(
    reader: &mut hound::WavReader<BufReader<File>>,
    int_scale: Option<f32>,
) -> Option<f32> {
    match int_scale {
        Some(scale) => reader
            .samples::<i32>()
            .next()?
            .ok()
            .map(|v| v as f32 * scale),
        None => reader
            .samples::<f32>()
            .next()?
            .ok()
            .filter(|v| v.is_finite()),
    }
}

/// (peak, mean square) of the mono mix of the whole file.
fn scan(path: &Path, channels: usize, int_scale: Option<f32>) -> Result<(f32, f64)> {
    let mut reader = hound::WavReader::open(path)
        .map_err(|e| Error::file(path, format!("cannot read WAV audio: {e}")))?;
    let (mut peak, mut sum, mut frames) = (0.0f32, 0.0f64, 0u64);
    let (mut mix, mut in_frame) = (0.0f32, 0);
    while let Some(v) = next_sample(&mut reader, int_scale) {
        mix += v;
        in_frame += 1;
        if in_frame == channels {
            let m = mix / channels as f32;
            peak = peak.max(m.abs());
            sum += f64::from(m) * f64::from(m);
            frames += 1;
            mix = 0.0;
            in_frame = 0;
        }
    }
    if frames == 0 || peak == 0.0 {
        return Err(Error::file(
            path,
            "WAV file holds no audio (empty or silent)",
        ));
    }
    Ok((peak, sum / frames as f64))
}

impl MessageSource for WavMessage {
    /// After a read error the message continues as silence.
    fn fill(&mut self, out: &mut [f64]) {
        for y in out.iter_mut() {
            while self.at == self.ready && !self.failed {
                self.refill();
            }
            let x = if self.at < self.ready {
                self.at += 1;
                f64::from(self.resampled[self.at - 1])
            } else {
                0.0
            };
            *y = self.band.next(x);
        }
    }

    fn mean_square(&self) -> f64 {
        self.mean_square
    }

    fn band_hz(&self) -> (f64, f64) {
        self.band_hz
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_wav_tone_arrives_resampled() {
        // A 16-bit 8 kHz stereo file with a 500 Hz tone (peak 0.5) at 20 kHz: the message is
        // that tone normalised to peak 1, at the new rate (phase fitted over whole cycles).
        let dir = std::env::temp_dir().join(format!("amrx-wavmsg-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let path = dir.join("tone.wav");
        let spec = hound::WavSpec {
            channels: 2,
            sample_rate: 8000,
            bits_per_sample: 16,
            sample_format: hound::SampleFormat::Int,
        };
        let mut w = hound::WavWriter::create(&path, spec).unwrap();
        for n in 0..8000 {
            let v =
                (0.5 * (std::f64::consts::TAU * 500.0 * n as f64 / 8000.0).sin() * 32767.0) as i16;
            w.write_sample(v).unwrap();
            w.write_sample(v).unwrap();
        }
        w.finalize().unwrap();
        let mut m = WavMessage::open(&path, 100.0, 3000.0, 20e3).unwrap();
        assert!((m.mean_square() - 0.5).abs() < 1e-3);
        let mut x = vec![0.0; 40_000];
        m.fill(&mut x);
        let settled = &x[10_000..30_000];
        let (mut c, mut s) = (0.0, 0.0);
        for (n, v) in settled.iter().enumerate() {
            let p = std::f64::consts::TAU * 500.0 * n as f64 / 20e3;
            c += v * p.cos();
            s += v * p.sin();
        }
        let amp = 2.0 * (c * c + s * s).sqrt() / settled.len() as f64;
        let ms = settled.iter().map(|v| v * v).sum::<f64>() / settled.len() as f64;
        eprintln!(
            "wav tone amplitude {amp:.5}, residual {:.2e}",
            ms - amp * amp / 2.0
        );
        assert!((amp - 1.0).abs() < 2e-3, "amplitude {amp}");
        assert!((ms - amp * amp / 2.0).abs() < 1e-4);
        assert!(WavMessage::open(&dir.join("missing.wav"), 100.0, 3000.0, 20e3).is_err());
        let _ = std::fs::remove_dir_all(&dir);
    }
}

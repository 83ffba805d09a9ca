//! A full-carrier AM receiver whose detector is the physical diode-and-RC model: the shared
//! front end, the [`DiodeDetector`], and the shared audio stage.

use crate::block::Block;
use crate::demod::audio_stage::validate_audio;
use crate::demod::front_end::CHUNK;
use crate::demod::pieces::Pieces;
use crate::demod::{
    AudioStage, ChannelFrontEnd, DiodeConfig, DiodeDetector, FrontEndConfig, Measurements, Receiver,
};
use crate::{Complex32, Result};

/// Front end (channel filter ±W) → diode and RC on a real IF → DC removal and audio low-pass.
pub struct DiodeReceiver {
    bandwidth_hz: f64,
    audio_rate: f64,
    input_rate: f64,
    front: ChannelFrontEnd,
    diode: DiodeDetector,
    audio: AudioStage,
    channel: Vec<Complex32>,
    detected: Vec<f32>,
}

impl DiodeReceiver {
    /// A receiver for a carrier at `offset_hz` in IQ at `input_rate`, message bandwidth
    /// `bandwidth_hz`, RC time constant `rc_s`, audio at `audio_rate`.
    ///
    /// ```
    /// use amrx::lab::DiodeReceiver;
    /// use amrx::demod::Receiver;
    /// let rx = DiodeReceiver::new(96_000.0, 12_000.0, 5_000.0, 50e-6, 48_000.0).unwrap();
    /// assert_eq!(rx.audio_rate(), 48_000.0);
    /// ```
    pub fn new(
        input_rate: f64,
        offset_hz: f64,
        bandwidth_hz: f64,
        rc_s: f64,
        audio_rate: f64,
    ) -> Result<Self> {
        validate_audio(audio_rate, bandwidth_hz)?;
        let front = ChannelFrontEnd::new(FrontEndConfig {
            input_rate,
            offset_hz,
            channel_hz: bandwidth_hz,
            min_detection_rate: audio_rate,
        })?;
        let rate = front.detection_rate();
        let diode = DiodeDetector::new(DiodeConfig::new(rate, bandwidth_hz, rc_s))?;
        let mid = diode.max_output_len(front.max_output_len(CHUNK));
        Ok(DiodeReceiver {
            audio: AudioStage::new(rate, audio_rate, bandwidth_hz, mid)?,
            channel: vec![Complex32::default(); front.max_output_len(CHUNK)],
            detected: vec![0.0; mid],
            bandwidth_hz,
            audio_rate,
            input_rate,
            front,
            diode,
        })
    }

    /// The detector's settings (rates, IF, RC).
    pub fn diode(&self) -> &DiodeConfig {
        self.diode.config()
    }
}

impl Pieces for DiodeReceiver {
    fn piece_bound(&self, n: usize) -> usize {
        let channel = self.front.max_output_len(n);
        self.audio
            .max_output_len(self.diode.max_output_len(channel))
    }

    fn process_piece(&mut self, input: &[Complex32], output: &mut [f32]) -> usize {
        let (_, n) = self.front.process(input, &mut self.channel);
        let (_, m) = self.diode.process(&self.channel[..n], &mut self.detected);
        self.audio.process(&self.detected[..m], output).1
    }
}

impl Block for DiodeReceiver {
    type Input = Complex32;
    type Output = f32;

    fn process(&mut self, input: &[Complex32], output: &mut [f32]) -> (usize, usize) {
        self.process_pieces(input, output)
    }

    fn max_output_len(&self, input_len: usize) -> usize {
        self.pieces_output_len(input_len)
    }

    fn rate_ratio(&self) -> f64 {
        self.audio_rate / self.input_rate
    }

    fn delay(&self) -> f64 {
        let factor = self.input_rate / self.front.detection_rate();
        self.front.delay() + (self.diode.delay() + self.audio.delay()) * factor
    }

    fn reset(&mut self) {
        self.front.reset();
        self.diode.reset();
        self.audio.reset();
    }
}

impl Receiver for DiodeReceiver {
    fn audio_channels(&self) -> usize {
        1
    }

    fn audio_rate(&self) -> f64 {
        self.audio_rate
    }

    fn bandwidth_hz(&self) -> f64 {
        self.bandwidth_hz
    }

    fn measurements(&self) -> Measurements {
        let mut m = Measurements::default();
        if let Some(peak) = self.front.find_carrier(0.5 * self.bandwidth_hz) {
            m.carrier_offset_hz = Some(self.front.config().offset_hz + peak.frequency_hz);
            m.cnr_db = self.front.cnr_db(&peak, self.bandwidth_hz);
        }
        m
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::{process_in_chunks, process_to_vec};
    use crate::synth::AmToneTransmitter;
    use rand::{rngs::StdRng, RngExt, SeedableRng};

    fn input() -> Vec<Complex32> {
        let mut tx = AmToneTransmitter::new(0.3, 0.5, 1000.0, 12_000.0, 96_000.0).unwrap();
        let mut x = vec![Complex32::default(); 40_000];
        tx.fill(&mut x);
        x
    }

    fn receiver() -> DiodeReceiver {
        DiodeReceiver::new(96_000.0, 12_000.0, 5000.0, 50e-6, 48_000.0).unwrap()
    }

    #[test]
    fn recovers_the_tone() {
        // The detector holds the envelope A_c(1 + μ cos) to within its ripple and the carrier
        // DC is removed: the 1 kHz tone of amplitude A_c·μ = 0.15 remains (ripple at RC = 50 µs
        // lowers the gain by about T_c/(2RC) = 10 %).
        let out = process_to_vec(&mut receiver(), &input());
        let fit = crate::measure::fit_tone(&out[10_000..], 48_000.0, 1000.0).unwrap();
        assert!((fit.frequency_hz - 1000.0).abs() < 0.01);
        assert!(
            (fit.amplitude / 0.15 - 0.9).abs() < 0.05,
            "{}",
            fit.amplitude
        );
    }

    #[test]
    fn chunk_invariant() {
        let x = input();
        let whole = process_to_vec(&mut receiver(), &x);
        let mut rng = StdRng::seed_from_u64(5);
        let random: Vec<usize> = (0..64).map(|_| rng.random_range(1..20_000usize)).collect();
        for sizes in [vec![1usize, 7, 1024], random] {
            assert_eq!(process_in_chunks(&mut receiver(), &x, &sizes), whole);
        }
    }
}

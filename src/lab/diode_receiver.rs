//! A full-carrier AM receiver whose detector is the physical diode-and-RC model: the shared
//! assembly with the [`DiodeDetector`] in the detector's place.

use crate::block::Block;
use crate::demod::{
    Assembly, ChannelFrontEnd, Detector, DiodeConfig, DiodeDetector, FrontEnd, FrontEndConfig,
    Measurements, Mode, ReceiverConfig,
};
use crate::{Complex32, Result};

/// The diode-and-RC envelope detector as a receiver's detector, with carrier metering.
pub struct DiodeEnvelope {
    diode: DiodeDetector,
    bandwidth_hz: f64,
}

/// A full-carrier AM receiver with the diode detector.
pub type DiodeReceiver = Assembly<DiodeEnvelope>;

/// The diode receiver for `config` (the `am` mode's defaults) with time constant `rc_s`.
pub fn diode_receiver(config: &ReceiverConfig, rc_s: f64) -> Result<DiodeReceiver> {
    let settings = Mode::Am.spec().resolve(config)?;
    let front = ChannelFrontEnd::new(FrontEndConfig::for_mode(&settings))?;
    Assembly::with_front_end(settings, Vec::new(), Box::new(front), |s, c| {
        Ok(DiodeEnvelope {
            diode: DiodeDetector::new(DiodeConfig::new(c.detection_rate, s.bandwidth_hz, rc_s))?,
            bandwidth_hz: s.bandwidth_hz,
        })
    })
}

impl DiodeEnvelope {
    /// The diode circuit's settings.
    pub fn diode(&self) -> &DiodeConfig {
        self.diode.config()
    }
}

impl Detector for DiodeEnvelope {
    fn detect(&mut self, channel: &mut [Complex32], audio: &mut [Vec<f32>]) {
        let n = channel.len();
        let (_, produced) = self.diode.process(channel, &mut audio[0][..n]);
        debug_assert_eq!(produced, n, "the diode model gives one output per input");
    }

    fn delay(&self) -> f64 {
        self.diode.delay()
    }

    fn reset(&mut self) {
        self.diode.reset();
    }

    fn measure(&self, front: &dyn FrontEnd, m: &mut Measurements) {
        if let Some(peak) = front.find_carrier_near(0.0, 0.5 * self.bandwidth_hz) {
            m.carrier_offset_hz = Some(front.offset_hz() + peak.frequency_hz);
            m.cnr_db = front.cnr_db(&peak, self.bandwidth_hz);
        }
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
        let mut config = ReceiverConfig::new(96_000.0, 12_000.0);
        config.options.bandwidth_hz = Some(5000.0);
        diode_receiver(&config, 50e-6).unwrap()
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

//! Embedding amrx in a radio project: build a receiver in code, push IQ as it arrives (here in
//! small irregular bursts, as a USB front end delivers it), and pull audio out as it is ready.
//!
//! ```text
//! cargo run --release --example embed
//! ```

use amrx::block::Block;
use amrx::demod::{AmReceiver, Mode, Receiver, ReceiverConfig};
use amrx::dsp::ComplexNoise;
use amrx::measure::{estimate_tone_hz, sinad_db};
use amrx::synth::AmToneTransmitter;
use amrx::Complex32;

const RATE: f64 = 1_920_000.0;
const OFFSET: f64 = 120_000.0;

fn main() -> Result<(), amrx::Error> {
    // Stands in for the front end: an invented station, 60 % modulated by a 800 Hz tone.
    let mut station = AmToneTransmitter::new(0.3, 0.6, 800.0, OFFSET, RATE)?;
    let mut noise = ComplexNoise::new(1e-6, 1);

    let mut receiver = AmReceiver::new(Mode::Am, &ReceiverConfig::new(RATE, OFFSET))?;
    // Buffers are allocated once, sized for the largest burst; the loop allocates nothing.
    let largest_burst = 20_000;
    let mut burst = vec![Complex32::default(); largest_burst];
    let mut audio_piece = vec![0.0f32; receiver.max_output_len(largest_burst)];
    let mut audio = Vec::with_capacity(48_000 * 2);

    let mut sent = 0usize;
    let mut burst_len = 3_000;
    while sent < (RATE * 1.5) as usize {
        let iq = &mut burst[..burst_len];
        station.fill(iq);
        noise.add_to(iq);
        let (consumed, produced) = receiver.process(iq, &mut audio_piece);
        assert_eq!(
            consumed, burst_len,
            "output buffer sized by max_output_len takes a whole burst"
        );
        audio.extend_from_slice(&audio_piece[..produced]);
        sent += burst_len;
        burst_len = 1_000 + (burst_len * 7919) % (largest_burst - 1_000);
    }

    let settled = &audio[9_600..];
    let tone = estimate_tone_hz(settled, 48_000.0).unwrap_or(f64::NAN);
    let sinad = sinad_db(settled, 48_000.0, tone).unwrap_or(f64::NAN);
    let m = receiver.measurements();
    println!(
        "pushed {sent} IQ samples in bursts, pulled {} audio samples",
        audio.len()
    );
    println!(
        "tone {tone:.2} Hz, SINAD {sinad:.1} dB, CNR {:.1} dB",
        m.cnr_db.unwrap_or(f64::NAN)
    );
    Ok(())
}

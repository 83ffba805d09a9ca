//! The example receiver: a recorded IQ file in, audio out, using only the public library API.
//!
//! ```text
//! cargo run --release --example receiver -- INPUT OFFSET_HZ OUT.wav [MODE]
//! cargo run --release -- demo /tmp/amrx-demo
//! cargo run --release --example receiver -- /tmp/amrx-demo/demo-scene.sigmf-meta 95000 /tmp/b.wav
//! cargo run --release --example receiver -- /tmp/amrx-demo/demo-scene.sigmf-meta -40000 /tmp/d.wav usb
//! ```

use amrx::demod::{build_receiver, Mode, ReceiverConfig};
use amrx::io::{open_input, AudioSink, InputOptions, WavAudioSink, WavEncoding};
use amrx::pipeline::{run_stream, RuntimeConfig};
use std::path::PathBuf;

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let (input, offset, out, mode) = match args.as_slice() {
        [input, offset, out] => (input, offset, out, Mode::Am),
        [input, offset, out, mode] => (input, offset, out, mode.parse::<Mode>()?),
        _ => {
            eprintln!("usage: receiver INPUT OFFSET_HZ OUT.wav [am|sam|dsb|usb|lsb|isb|vsb]");
            std::process::exit(2);
        }
    };
    let mut source = open_input(&PathBuf::from(input), &InputOptions::default())?;
    let config = ReceiverConfig::new(source.info().sample_rate, offset.parse()?);
    let mut receiver = build_receiver(mode, &config)?;
    let channels = receiver.audio_channels() as u16;
    let rate = receiver.audio_rate() as u32;
    let mut sink = WavAudioSink::create(&PathBuf::from(out), rate, channels, WavEncoding::Float32)?;

    let totals = run_stream(
        |buf| source.read(buf),
        receiver.as_mut(),
        |audio| sink.write(audio),
        RuntimeConfig::default(),
    )?;
    sink.finish()?;

    let m = receiver.measurements();
    println!(
        "{} IQ samples in, {} audio samples out",
        totals.samples_in, totals.samples_out
    );
    if let Some(f) = m.carrier_offset_hz {
        println!("carrier at {f:.1} Hz from the centre");
    }
    if let Some(cnr) = m.cnr_db {
        println!("CNR {cnr:.1} dB");
    }
    if let Some(d) = m.modulation_depth {
        println!(
            "modulation +{:.0} % / -{:.0} %",
            100.0 * d.positive,
            100.0 * d.negative
        );
    }
    for w in m.warnings {
        println!("warning: {w}");
    }
    Ok(())
}

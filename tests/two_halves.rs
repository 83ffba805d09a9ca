//! `amrx demod` from file to file runs the receiver in two halves on two threads; the audio
//! file and the report are byte for byte those of the one-thread run.

mod common;

use amrx::demod::Mode;
use amrx::io::SampleFormat;
use amrx::pipeline::{run_demod, AudioTarget, DemodRequest, Tuning};
use common::{scratch_dir, tone_am, write_sigmf};

#[test]
fn two_halves_write_the_one_thread_audio_and_report() {
    let dir = scratch_dir("two-halves");
    let rate = 480_000.0;
    // 1.3 s of 8-bit IQ: several input buffers of the runtime, and a partial last one.
    let iq = tone_am(rate, -60_000.0, 0.6, 800.0, 1.3, 1e-4);
    let meta = write_sigmf(&dir, "rec", SampleFormat::Cu8, rate, &iq);
    for mode in [
        Mode::Am,
        Mode::Sam,
        Mode::Dsb,
        Mode::Lsb,
        Mode::Isb,
        Mode::Vsb,
    ] {
        let run = |one_thread: bool| {
            let tag = if one_thread { "one" } else { "two" };
            let wav = dir.path(&format!("{mode:?}-{tag}.wav"));
            let json = dir.path(&format!("{mode:?}-{tag}.json"));
            let mut request = DemodRequest::new(
                &meta,
                mode,
                AudioTarget::Wav {
                    path: wav.clone(),
                    pcm16: false,
                },
            );
            request.tuning = Tuning::Offset(-60_000.0);
            request.options.iq_balance = true;
            request.report = Some(json.clone());
            request.one_thread = one_thread;
            run_demod(&request, &|_| {}).expect("demod runs");
            (std::fs::read(wav).unwrap(), std::fs::read(json).unwrap())
        };
        let (one_wav, one_json) = run(true);
        let (two_wav, two_json) = run(false);
        assert!(one_wav.len() > 100_000, "{mode:?}");
        assert!(one_wav == two_wav, "{mode:?}: the audio differs");
        assert_eq!(
            String::from_utf8_lossy(&one_json),
            String::from_utf8_lossy(&two_json),
            "{mode:?}"
        );
    }
}

//! The command line's options: any argument list (NUL-separated) through the real parser, and
//! for `demod` and `sweep` lists that parse, the receivers and sweep the options describe
//! built at three input rates. Nothing may panic, and every invalid-parameter error an option
//! can cause must name a flag the user can type (`flag_for`), never a library-internal name.
#![no_main]
use libfuzzer_sys::fuzz_target;

#[allow(dead_code, unused_imports, unused_macros)]
mod cli {
    include!(concat!(env!("OUT_DIR"), "/cli.rs"));

    /// Parses `args` as the command line would and builds what a parsed `demod` or `sweep`
    /// asks for.
    pub fn check(args: &[String]) {
        let argv = std::iter::once("amrx".to_string()).chain(args.iter().cloned());
        let Ok(cli) = Cli::try_parse_from(argv) else {
            return;
        };
        match cli.command {
            Command::Demod(args) => {
                let options = receiver_options(&args);
                for input_rate in [8_000.0, 48_000.0, 2_400_000.0] {
                    let config = amrx::demod::ReceiverConfig {
                        input_rate,
                        offset_hz: args.offset.unwrap_or(0.0),
                        options,
                    };
                    if let Err(e) = amrx::demod::build_receiver(args.mode, &config) {
                        assert_named(&e);
                    }
                }
            }
            Command::Sweep(args) => {
                if let Err(e) = lab::parse_detectors(&args.detectors) {
                    assert_named(&e);
                }
                if let Err(e) = SweepSpec::range_db(args.from, args.to, args.step) {
                    assert_named(&e);
                }
            }
            _ => {}
        }
    }

    fn assert_named(error: &Error) {
        if let Error::InvalidParameter { name, .. } = error {
            assert!(
                flag_for(name).is_some(),
                "'{name}' reaches the user with no flag: {error}"
            );
        }
    }
}

fuzz_target!(|data: &[u8]| {
    if data.len() > 4096 {
        return;
    }
    let args: Vec<String> = data
        .split(|&b| b == 0)
        .map(|a| String::from_utf8_lossy(a).into_owned())
        .collect();
    cli::check(&args);
});

//! Builds the receiver for a mode from the shared settings, refusing options the mode lacks.

use super::config::ReceiverConfig;
use super::{AmConfig, AmReceiver, Mode, Receiver};
use super::{DsbConfig, DsbReceiver, SamConfig, SamReceiver};
use crate::{Error, Result};

/// The receiver for `mode`.
///
/// ```
/// use amrx::demod::{build_receiver, Mode, ReceiverConfig};
/// let rx = build_receiver(Mode::Am, &ReceiverConfig::new(2_400_000.0, 50_000.0)).unwrap();
/// assert_eq!(rx.audio_channels(), 1);
/// ```
pub fn build_receiver(mode: Mode, config: &ReceiverConfig) -> Result<Box<dyn Receiver>> {
    check_options(mode, config)?;
    match mode {
        Mode::Am => {
            let am = AmConfig {
                input_rate: config.input_rate,
                offset_hz: config.offset_hz,
                bandwidth_hz: config
                    .options
                    .bandwidth_hz
                    .unwrap_or(AmConfig::DEFAULT_BANDWIDTH_HZ),
                audio_rate: config.options.audio_rate,
            };
            Ok(Box::new(AmReceiver::new(am)?))
        }
        Mode::Sam => Ok(Box::new(SamReceiver::new(SamConfig::from_options(config))?)),
        Mode::Dsb => Ok(Box::new(DsbReceiver::new(DsbConfig::from_options(config))?)),
        other => Err(Error::NotYetAvailable {
            what: format!("mode '{other}'"),
        }),
    }
}

/// Options that only some modes have are refused elsewhere, naming the option.
fn check_options(mode: Mode, config: &ReceiverConfig) -> Result<()> {
    let config = &config.options;
    if let Some(sideband) = config.sideband {
        if mode != Mode::Sam {
            return Err(Error::parameter(
                "--sideband",
                format!("{sideband:?}").to_lowercase(),
                format!("applies to --mode sam only, not {mode}"),
            ));
        }
    }
    let has_loop = matches!(mode, Mode::Sam | Mode::Dsb | Mode::Vsb)
        || (matches!(mode, Mode::Usb | Mode::Lsb) && config.carrier_lock);
    if config.loop_settings.is_set() && !has_loop {
        return Err(Error::parameter(
            "--loop-bandwidth",
            mode,
            "loop settings apply to modes with a carrier loop (sam, dsb, vsb, and usb/lsb with --carrier-lock)",
        ));
    }
    if config.carrier_lock && !matches!(mode, Mode::Usb | Mode::Lsb) {
        return Err(Error::parameter(
            "--carrier-lock",
            mode,
            "applies to usb and lsb only",
        ));
    }
    Ok(())
}

//! Builds the receiver for a mode from the shared settings, refusing options the mode lacks.

use super::config::ReceiverConfig;
use super::{AmConfig, AmReceiver, IqCorrected, Mode, Receiver};
use super::{DsbConfig, DsbReceiver, SamConfig, SamReceiver};
use super::{IsbConfig, IsbReceiver, Sideband, SsbConfig, SsbReceiver, VsbConfig, VsbReceiver};
use crate::dsp::AgcSettings;
use crate::{Error, Result};

/// The receiver for `mode`.
///
/// ```
/// use amrx::demod::{build_receiver, Mode, ReceiverConfig};
/// let rx = build_receiver(Mode::Am, &ReceiverConfig::new(2_400_000.0, 50_000.0)).unwrap();
/// assert_eq!(rx.audio_channels(), 1);
/// ```
pub fn build_receiver(mode: Mode, config: &ReceiverConfig) -> Result<Box<dyn Receiver>> {
    let receiver = build_mode(mode, config)?;
    if config.options.iq_balance {
        Ok(Box::new(IqCorrected::new(receiver, config.input_rate)?))
    } else {
        Ok(receiver)
    }
}

fn build_mode(mode: Mode, config: &ReceiverConfig) -> Result<Box<dyn Receiver>> {
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
                agc: config.options.agc.unwrap_or(AgcSettings::OFF),
            };
            Ok(Box::new(AmReceiver::new(am)?))
        }
        Mode::Sam => Ok(Box::new(SamReceiver::new(SamConfig::from_options(config))?)),
        Mode::Dsb => Ok(Box::new(DsbReceiver::new(DsbConfig::from_options(config))?)),
        Mode::Usb | Mode::Lsb => {
            let sideband = if mode == Mode::Usb {
                Sideband::Upper
            } else {
                Sideband::Lower
            };
            let o = &config.options;
            let ssb = SsbConfig {
                bandwidth_hz: o.bandwidth_hz.unwrap_or(SsbConfig::DEFAULT_BANDWIDTH_HZ),
                audio_rate: o.audio_rate,
                method: o.ssb_method,
                agc: o.agc.unwrap_or(AgcSettings::SPEECH),
                carrier_lock: o.carrier_lock,
                loop_settings: o.loop_settings,
                ..SsbConfig::new(config.input_rate, config.offset_hz, sideband)
            };
            Ok(Box::new(SsbReceiver::new(ssb)?))
        }
        Mode::Isb => {
            let o = &config.options;
            let isb = IsbConfig {
                bandwidth_hz: o.bandwidth_hz.unwrap_or(IsbConfig::DEFAULT_BANDWIDTH_HZ),
                audio_rate: o.audio_rate,
                method: o.ssb_method,
                agc: o.agc.unwrap_or(AgcSettings::SPEECH),
                ..IsbConfig::new(config.input_rate, config.offset_hz)
            };
            Ok(Box::new(IsbReceiver::new(isb)?))
        }
        Mode::Vsb => {
            let o = &config.options;
            let vsb = VsbConfig {
                bandwidth_hz: o.bandwidth_hz.unwrap_or(VsbConfig::DEFAULT_BANDWIDTH_HZ),
                audio_rate: o.audio_rate,
                agc: o.agc.unwrap_or(AgcSettings::SLOW),
                loop_settings: o.loop_settings,
                ..VsbConfig::new(config.input_rate, config.offset_hz)
            };
            Ok(Box::new(VsbReceiver::new(vsb)?))
        }
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

//! Finding sound devices through `cpal` and listing them.

use crate::{Error, Result};
use cpal::traits::{DeviceTrait, HostTrait};
use cpal::{Device, SampleFormat, SupportedStreamConfigRange};

/// One device as `amrx devices` shows it.
#[derive(Debug, Clone, PartialEq)]
pub struct DeviceSummary {
    /// The name to give after `sound:` or to `--device` (the device's id on its host).
    pub name: String,
    /// What the sound system says the device is.
    pub description: String,
    /// Whether it is the default input / output.
    pub default_input: bool,
    /// Whether it is the default output.
    pub default_output: bool,
    /// What it can capture, `None` when it has no input.
    pub inputs: Option<Capability>,
    /// What it can play, `None` when it has no output.
    pub outputs: Option<Capability>,
}

/// The union of a device's configurations in one direction.
#[derive(Debug, Clone, PartialEq)]
pub struct Capability {
    /// Fewest and most channels.
    pub channels: (u16, u16),
    /// Lowest and highest sample rate in Hz.
    pub rates: (u32, u32),
    /// Sample formats (`f32`, `i16`, ...), in the sound system's notation.
    pub formats: Vec<String>,
}

/// Keeps the ALSA library's own error printing off standard error on this thread while alive
/// (device probing makes it print a screenful about plugins that are not there).
pub(crate) struct QuietAlsa {
    #[cfg(target_os = "linux")]
    _handler: Option<std::rc::Rc<std::cell::RefCell<alsa::Output>>>,
}

impl QuietAlsa {
    pub(crate) fn new() -> Self {
        QuietAlsa {
            #[cfg(target_os = "linux")]
            _handler: alsa::Output::local_error_handler().ok(),
        }
    }
}

/// The default device's name as `cpal` reports it.
pub(crate) const DEFAULT: &str = "default";

/// The device's id without the host's prefix (`default`, `pulse`, `hw:CARD=...`).
fn device_name(device: &Device) -> String {
    match device.id() {
        Ok(id) => {
            let id = id.to_string();
            match id.split_once(':') {
                Some((_, rest)) => rest.to_string(),
                None => id,
            }
        }
        Err(_) => device.to_string(),
    }
}

fn device_description(device: &Device) -> String {
    device
        .description()
        .map(|d| d.name().to_string())
        .unwrap_or_default()
}

/// Which way a device is opened.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Direction {
    Input,
    Output,
}

/// Finds a device by name (`default` for the system's default) for `direction`; `label`
/// names it in messages.
pub(crate) fn find(name: &str, direction: Direction, label: &str) -> Result<Device> {
    let _quiet = QuietAlsa::new();
    let host = cpal::default_host();
    let (default, what) = match direction {
        Direction::Input => (host.default_input_device(), "input"),
        Direction::Output => (host.default_output_device(), "output"),
    };
    if name.is_empty() || name == DEFAULT {
        return default.ok_or_else(|| Error::file(label, format!("no sound {what} device")));
    }
    let devices = match direction {
        Direction::Input => host.input_devices().map(|d| d.collect::<Vec<_>>()),
        Direction::Output => host.output_devices().map(|d| d.collect::<Vec<_>>()),
    }
    .map_err(|e| Error::file(label, format!("cannot list sound {what} devices: {e}")))?;
    let mut names = Vec::new();
    for device in devices {
        let found = device_name(&device);
        let id = device.id().map(|i| i.to_string()).unwrap_or_default();
        if found == name || id == name || id.split_once(':').is_some_and(|(_, rest)| rest == name) {
            return Ok(device);
        }
        names.push(found);
    }
    names.sort();
    names.dedup();
    Err(Error::file(
        label,
        format!(
            "no sound {what} device named '{name}' (amrx devices lists them: {})",
            names.join(", ")
        ),
    ))
}

/// The sound system's error as one line for `label`, with the advice a user needs when the
/// machine has no sound card.
pub(crate) fn device_error(label: &str, doing: &str, e: &dyn std::fmt::Display) -> Error {
    let text = e.to_string();
    let hint = if text.contains("not available") || text.contains("DeviceNotAvailable") {
        " (no usable sound device: check `amrx devices`; write a WAV with --out instead)"
    } else {
        ""
    };
    Error::file(label, format!("cannot {doing}: {text}{hint}"))
}

/// Picks the channel count and sample format for a stream at `rate` on `configs`: the
/// configuration that accepts the rate with at least `min_channels` channels, preferring
/// f32, then i16, then fewer channels.
pub(crate) fn pick_config(
    configs: impl Iterator<Item = SupportedStreamConfigRange>,
    rate: u32,
    min_channels: u16,
) -> Option<(u16, SampleFormat)> {
    let rank = |f: SampleFormat| match f {
        SampleFormat::F32 => 0,
        SampleFormat::I16 => 1,
        _ => 9,
    };
    configs
        .filter(|c| c.min_sample_rate() <= rate && rate <= c.max_sample_rate())
        .filter(|c| c.channels() >= min_channels && rank(c.sample_format()) < 9)
        .map(|c| (c.channels(), c.sample_format()))
        .min_by_key(|&(ch, f)| (rank(f), ch))
}

fn capability(
    configs: std::result::Result<impl Iterator<Item = SupportedStreamConfigRange>, cpal::Error>,
) -> Option<Capability> {
    let mut cap: Option<Capability> = None;
    for r in configs.ok()? {
        let c = cap.get_or_insert(Capability {
            channels: (r.channels(), r.channels()),
            rates: (r.min_sample_rate(), r.max_sample_rate()),
            formats: Vec::new(),
        });
        c.channels = (
            c.channels.0.min(r.channels()),
            c.channels.1.max(r.channels()),
        );
        c.rates = (
            c.rates.0.min(r.min_sample_rate()),
            c.rates.1.max(r.max_sample_rate()),
        );
        let f = r.sample_format().to_string();
        if !c.formats.contains(&f) {
            c.formats.push(f);
        }
    }
    cap
}

/// Lists the sound devices of the default host with their channel counts, rates and sample
/// formats, the defaults first.
pub fn list_devices() -> Result<Vec<DeviceSummary>> {
    let _quiet = QuietAlsa::new();
    let host = cpal::default_host();
    let default_in = host.default_input_device().map(|d| device_name(&d));
    let default_out = host.default_output_device().map(|d| device_name(&d));
    let devices = host
        .devices()
        .map_err(|e| Error::file("sound devices", format!("cannot list: {e}")))?;
    let mut list: Vec<DeviceSummary> = devices
        .map(|d| {
            let name = device_name(&d);
            DeviceSummary {
                default_input: default_in.as_deref() == Some(name.as_str()),
                default_output: default_out.as_deref() == Some(name.as_str()),
                inputs: capability(d.supported_input_configs()),
                outputs: capability(d.supported_output_configs()),
                description: device_description(&d),
                name,
            }
        })
        .filter(|d| d.inputs.is_some() || d.outputs.is_some())
        .collect();
    list.sort_by_key(|d| (!(d.default_input || d.default_output), d.name.clone()));
    list.dedup_by(|a, b| a.name == b.name);
    Ok(list)
}

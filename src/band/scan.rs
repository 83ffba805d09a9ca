//! The scan job: one pass over a recording, then what is on the band, as JSON, a table and
//! SigMF annotations.

use super::detect::{detect, Detection, Found};
use super::recorder::{BandRecord, BandRecorder};
use crate::io::sigmf::sigmf_base;
use crate::io::{open_input, InputOptions, SigmfAnnotation, SourceInfo};
use crate::{Complex32, Error, Result};
use serde::Serialize;
use std::path::{Path, PathBuf};

/// Samples read per step.
const READ_LEN: usize = 1 << 16;
/// Default least CNR reported, dB (common practice, no source).
pub const DEFAULT_MIN_CNR_DB: f64 = 10.0;

/// Everything a scan needs.
#[derive(Debug, Clone, PartialEq)]
pub struct ScanRequest {
    /// The IQ input (`-` for standard input).
    pub input: PathBuf,
    /// Format, rate and channel options for the input.
    pub input_options: InputOptions,
    /// Emissions below this CNR (dB, in their CNR bandwidth) are not reported.
    pub min_cnr_db: f64,
}

impl ScanRequest {
    /// A request with the default least CNR.
    pub fn new(input: impl Into<PathBuf>) -> Self {
        ScanRequest {
            input: input.into(),
            input_options: InputOptions::default(),
            min_cnr_db: DEFAULT_MIN_CNR_DB,
        }
    }
}

/// One emission as written in the scan's JSON (keys fixed by the command's contract).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ScanEmission {
    /// Carrier, suppressed carrier or SSB dial, Hz from the centre.
    pub offset_hz: f64,
    /// Absolute frequency, Hz (null without a centre frequency).
    pub frequency_hz: Option<f64>,
    /// `am`, `carrier`, `dsb`, `usb`, `lsb` or `unknown`.
    pub class: String,
    /// Mean power while on, dBFS.
    pub level_dbfs: f64,
    /// Carrier (or signal) to noise ratio, dB.
    pub cnr_db: f64,
    /// Noise bandwidth of the CNR, Hz.
    pub cnr_bandwidth_hz: f64,
    /// Lower edge of the 99 % occupied band, Hz from the centre.
    pub lower_edge_hz: f64,
    /// Upper edge, Hz from the centre.
    pub upper_edge_hz: f64,
    /// 99 % occupied bandwidth (ITU-R SM.328), Hz.
    pub occupied_bandwidth_hz: f64,
    /// Start, s from the start of the recording.
    pub start_s: f64,
    /// End, s.
    pub end_s: f64,
}

/// The scan's JSON (keys fixed by the command's contract).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ScanReport {
    /// Centre frequency of the recording, Hz (null if unknown).
    pub centre_hz: Option<f64>,
    /// Sample rate, Hz.
    pub sample_rate: f64,
    /// Median noise floor, dBFS/Hz.
    pub noise_floor_dbfs_hz: f64,
    /// What was found.
    pub emissions: Vec<ScanEmission>,
}

/// What a scan found, with what the pictures need.
#[derive(Debug, Clone)]
pub struct ScanOutcome {
    /// The JSON report.
    pub report: ScanReport,
    /// The detection (floor, threshold, emissions with their samples, rejected lines).
    pub detection: Detection,
    /// The pass's spectra and waterfall.
    pub record: BandRecord,
    /// The input.
    pub info: SourceInfo,
    /// Things the user should know.
    pub warnings: Vec<String>,
}

/// Rounds to `decimals` places, keeping the JSON readable (0.1 Hz, 0.01 dB, 1 ms).
fn round_to(x: f64, decimals: i32) -> f64 {
    let scale = 10f64.powi(decimals);
    let r = (x * scale).round() / scale;
    if r.is_finite() {
        r
    } else {
        0.0
    }
}

fn entry(found: &Found, centre: Option<f64>) -> ScanEmission {
    ScanEmission {
        offset_hz: round_to(found.offset_hz, 1),
        frequency_hz: centre.map(|c| round_to(c + found.offset_hz, 1)),
        class: found.class.name().to_string(),
        level_dbfs: round_to(found.level_dbfs, 2),
        cnr_db: round_to(found.cnr_db, 2),
        cnr_bandwidth_hz: round_to(found.cnr_bandwidth_hz, 1),
        lower_edge_hz: round_to(found.lower_edge_hz, 1),
        upper_edge_hz: round_to(found.upper_edge_hz, 1),
        occupied_bandwidth_hz: round_to(found.occupied_bandwidth_hz(), 1),
        start_s: round_to(found.start_s, 3),
        end_s: round_to(found.end_s, 3),
    }
}

/// Runs the scan; `progress` gets the samples read so far.
pub fn run_scan(request: &ScanRequest, progress: &dyn Fn(u64)) -> Result<ScanOutcome> {
    if !request.min_cnr_db.is_finite() {
        return Err(Error::parameter(
            "min_cnr_db",
            request.min_cnr_db,
            "must be a finite number of dB",
        ));
    }
    let mut source = open_input(&request.input, &request.input_options)?;
    let info = source.info().clone();
    let mut recorder = BandRecorder::new(info.sample_rate)?;
    let mut buf = vec![Complex32::default(); READ_LEN];
    let mut read = 0u64;
    loop {
        let n = source.read(&mut buf)?;
        if n == 0 {
            break;
        }
        recorder.push(&buf[..n]);
        read += n as u64;
        progress(read);
    }
    let record = recorder.finish();
    let warnings = source.warnings();
    if record.frames == 0 {
        return Err(Error::file(
            &request.input,
            format!(
                "{} samples are too few to scan: one analysis frame is {} samples ({:.1} ms at this rate)",
                record.samples,
                record.fft_len,
                1e3 * record.fft_len as f64 / info.sample_rate
            ),
        ));
    }
    let detection = detect(&record, request.min_cnr_db);
    Ok(ScanOutcome {
        report: report_of(&detection, &info),
        detection,
        record,
        info,
        warnings,
    })
}

/// The JSON report of a detection.
pub fn report_of(detection: &Detection, info: &SourceInfo) -> ScanReport {
    ScanReport {
        centre_hz: info.centre_frequency,
        sample_rate: info.sample_rate,
        noise_floor_dbfs_hz: round_to(detection.noise_floor_dbfs_hz, 2),
        emissions: detection
            .emissions
            .iter()
            .map(|e| entry(e, info.centre_frequency))
            .collect(),
    }
}

impl ScanOutcome {
    /// The report as pretty JSON with a final newline.
    pub fn json(&self) -> Result<Vec<u8>> {
        let mut text = serde_json::to_vec_pretty(&self.report)
            .map_err(|e| Error::parameter("scan report", "json", e.to_string()))?;
        text.push(b'\n');
        Ok(text)
    }

    /// A table for the terminal: one line per emission, then what was set aside.
    pub fn table_lines(&self) -> Vec<String> {
        let r = &self.report;
        let bin = self.record.bin_hz();
        let mut out = vec![format!(
            "{} emission(s); noise floor {:.1} dBFS/Hz; {:.1} Hz bins, {} frames, threshold {:.2} dB over the floor (false alarms 1e-6 per bin)",
            r.emissions.len(),
            r.noise_floor_dbfs_hz,
            bin,
            self.record.frames,
            10.0 * self.detection.threshold_factor.log10()
        )];
        if r.emissions.is_empty() {
            return out;
        }
        out.push(format!(
            "{:>12} {:>14} {:<8} {:>8} {:>8} {:>10} {:>10} {:>17}",
            "offset Hz", "frequency Hz", "class", "dBFS", "CNR dB", "in Hz", "99% BW Hz", "on s"
        ));
        for e in &r.emissions {
            let freq = e
                .frequency_hz
                .map_or_else(|| "-".to_string(), |f| format!("{f:.0}"));
            out.push(format!(
                "{:>+12.0} {:>14} {:<8} {:>8.1} {:>8.1} {:>10.0} {:>10.0} {:>8.2}–{:<8.2}",
                e.offset_hz,
                freq,
                e.class,
                e.level_dbfs,
                e.cnr_db,
                e.cnr_bandwidth_hz,
                e.occupied_bandwidth_hz,
                e.start_s,
                e.end_s
            ));
        }
        for x in &self.detection.rejected {
            out.push(format!(
                "not reported: {:+.0} Hz ({:.1} dBFS): {}",
                x.offset_hz, x.level_dbfs, x.reason
            ));
        }
        out
    }

    /// One SigMF annotation per emission: samples, absolute edges when the centre is known,
    /// the class as label and the figures as a comment.
    pub fn annotations(&self) -> Vec<SigmfAnnotation> {
        let centre = self.info.centre_frequency;
        self.detection
            .emissions
            .iter()
            .map(|e| SigmfAnnotation {
                sample_start: e.samples.0,
                sample_count: Some(e.samples.1),
                freq_lower_edge: centre.map(|c| c + e.lower_edge_hz),
                freq_upper_edge: centre.map(|c| c + e.upper_edge_hz),
                label: Some(e.class.name().to_string()),
                comment: Some(format!(
                    "amrx scan: {} at {:+.1} Hz from the centre, {:.1} dBFS, CNR {:.1} dB in {:.0} Hz, 99 % bandwidth {:.0} Hz ({:+.0} to {:+.0} Hz)",
                    e.class.name(),
                    e.offset_hz,
                    e.level_dbfs,
                    e.cnr_db,
                    e.cnr_bandwidth_hz,
                    e.occupied_bandwidth_hz(),
                    e.lower_edge_hz,
                    e.upper_edge_hz
                )),
            })
            .collect()
    }

    /// Writes a copy of the input's SigMF metadata (or, for another kind of input, new metadata
    /// describing it) with the scan's annotations added, sorted by first sample as SigMF asks.
    pub fn write_annotated(&self, input: &Path, out: &Path) -> Result<()> {
        let mut meta = match sigmf_base(input) {
            Some(base) if input != Path::new("-") => {
                let meta_path = PathBuf::from(format!("{}.sigmf-meta", base.display()));
                let text =
                    std::fs::read_to_string(&meta_path).map_err(|e| Error::io(&meta_path, e))?;
                serde_json::from_str::<serde_json::Value>(&text)
                    .map_err(|e| Error::file(&meta_path, format!("not JSON: {e}")))?
            }
            _ => self.fresh_meta(),
        };
        let new: Vec<serde_json::Value> = self
            .annotations()
            .into_iter()
            .map(annotation_json)
            .collect::<Result<_>>()?;
        let Some(object) = meta.as_object_mut() else {
            return Err(Error::file(input, "SigMF metadata is not a JSON object"));
        };
        let list = object
            .entry("annotations")
            .or_insert_with(|| serde_json::Value::Array(Vec::new()));
        let Some(list) = list.as_array_mut() else {
            return Err(Error::file(input, "SigMF annotations is not a list"));
        };
        list.extend(new);
        list.sort_by_key(|a| {
            a.get("core:sample_start")
                .and_then(serde_json::Value::as_u64)
                .unwrap_or(0)
        });
        let mut text = serde_json::to_vec_pretty(&meta)
            .map_err(|e| Error::file(out, format!("cannot encode metadata: {e}")))?;
        text.push(b'\n');
        let inputs = crate::pipeline::job::input_files(input, input);
        let inputs: Vec<&Path> = inputs.iter().map(PathBuf::as_path).collect();
        crate::io::output::write_file(out, &inputs, &text)
    }

    fn fresh_meta(&self) -> serde_json::Value {
        let mut capture = serde_json::json!({ "core:sample_start": 0 });
        if let Some(c) = self.info.centre_frequency {
            capture["core:frequency"] = serde_json::json!(c);
        }
        serde_json::json!({
            "global": {
                "core:datatype": self.info.datatype,
                "core:sample_rate": self.info.sample_rate,
                "core:version": crate::io::sigmf::SIGMF_VERSION,
                "core:num_channels": 1,
                "core:description": format!("scan of {}", self.info.path.display()),
                "core:recorder": "amrx",
            },
            "captures": [capture],
            "annotations": [],
        })
    }
}

fn annotation_json(a: SigmfAnnotation) -> Result<serde_json::Value> {
    let mut v = serde_json::json!({
        "core:sample_start": a.sample_start,
        "core:generator": "amrx scan",
    });
    if let Some(c) = a.sample_count {
        v["core:sample_count"] = serde_json::json!(c);
    }
    if let (Some(lo), Some(hi)) = (a.freq_lower_edge, a.freq_upper_edge) {
        if !(lo.is_finite() && hi.is_finite() && lo <= hi && lo.abs() <= 1e12 && hi.abs() <= 1e12) {
            return Err(Error::parameter(
                "annotation frequency edges",
                format!("{lo}..{hi}"),
                "must be finite, ordered and within ±1e12 Hz",
            ));
        }
        v["core:freq_lower_edge"] = serde_json::json!(lo);
        v["core:freq_upper_edge"] = serde_json::json!(hi);
    }
    if let Some(l) = a.label {
        v["core:label"] = serde_json::json!(l);
    }
    if let Some(c) = a.comment {
        v["core:comment"] = serde_json::json!(c);
    }
    Ok(v)
}

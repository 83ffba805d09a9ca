//! Finding emissions in a [`BandRecord`]: noise floor, CFAR detection, grouping, timing,
//! classification, level, CNR and occupied bandwidth.
//!
//! - **Noise floor**: an ordered-statistic estimate (OS-CFAR: H. Rohling, "Radar CFAR
//!   thresholding in clutter and multiple target situations", IEEE Trans. AES-19 (1983)). The
//!   band is cut into [`FLOOR_BLOCKS`] blocks; in each the 25th percentile of the averaged density
//!   is divided by the same percentile of the noise-only distribution (a χ² of the Welch
//!   average's equivalent degrees of freedom, scaled to mean 1); each block then pools its own
//!   and its 16 neighbours' estimates: anchored on their 25th percentile, it takes the median
//!   of those within a factor 1.3 of the anchor (twice), so blocks filled by one wide emission
//!   do not lift the floor there and the pooled value is not biased low.
//! - **Threshold**: a bin is occupied when its density exceeds the local floor times the
//!   (1 − Pfa) quantile of χ²(ν)/ν, Pfa = [`BIN_FALSE_ALARM`] per bin (Wilson–Hilferty
//!   approximation to the χ² quantile: E. B. Wilson and M. M. Hilferty, "The distribution of
//!   chi-square", PNAS 17 (1931); normal quantile from Abramowitz and Stegun 26.2.23).
//! - **Classes** (the squaring test for suppressed carriers is the classic one: a DSB signal
//!   squared has a line at twice its carrier, see e.g. Proakis and Salehi, Communication Systems
//!   Engineering, squaring loops): see [`Class`].
//! - **Occupied bandwidth**: ITU-R SM.328 (and SM.443), the 99 % power bandwidth with 0.5 % of
//!   the emission's power below the lower edge and 0.5 % above the upper edge, on the
//!   noise-subtracted spectrum.

use super::recorder::BandRecord;
use serde::Serialize;

/// False-alarm probability per bin of the detection threshold. Over the 16384 bins of a 960 kS/s
/// scan it gives on average 0.016 noise bins over the threshold per scan (common practice for a
/// scan of this size, no source).
pub const BIN_FALSE_ALARM: f64 = 1e-6;
/// Blocks the floor is estimated in.
pub const FLOOR_BLOCKS: usize = 64;
/// Blocks on each side whose estimates are pooled (an emission may fill 12 of the 17 without
/// lifting the floor).
const FLOOR_NEIGHBOURS: usize = 8;
/// Percentile used for the floor (robust to three quarters of a block being occupied).
const FLOOR_PERCENTILE: f64 = 0.25;
/// Occupied runs closer than this are one emission (an AM tone's sidebands 1 kHz from its
/// carrier, speech pauses in the spectrum; common practice, no source).
pub const MERGE_GAP_HZ: f64 = 1500.0;
/// A line stands this far (linear ratio, 10 dB) over the median of its emission's bins.
const LINE_RATIO: f64 = 10.0;
/// Activity spans of one emission closer than this are one transmission, s (common practice,
/// no source).
pub const SPAN_MERGE_S: f64 = 1.0;
/// Sideband powers within this ratio (10 dB) of each other are "symmetric" (am); beyond it
/// the emission is one-sided (common practice, no source).
const SIDE_RATIO: f64 = 10.0;
/// An emission mirrored about the centre on a stronger one and at least this much weaker is
/// taken for the receiver's IQ image (cheap direct-conversion receivers reject images by
/// 25 to 40 dB; from memory).
pub const IMAGE_MARGIN_DB: f64 = 10.0;
/// Speech power falls with audio frequency (the long-term speech spectrum drops by roughly
/// 6 to 10 dB per octave above 500 Hz, from memory), so an SSB channel without a carrier is
/// stronger next to its suppressed carrier: a lower-half to upper-half power ratio beyond
/// 3 dB decides the side (common practice, no source).
const TILT_RATIO: f64 = 2.0;
/// Widest single-sideband speech channel accepted, Hz (ITU-R SM.1138: 3 kHz necessary
/// bandwidth for J3E telephony; a margin for the 99 % edges, common practice, no source).
const SSB_MAX_WIDTH_HZ: f64 = 4000.0;
/// Narrowest single-sideband speech channel accepted, Hz (common practice, no source).
const SSB_MIN_WIDTH_HZ: f64 = 1000.0;
/// Power correlation of neighbouring Hann bins, summed over both sides: the variance of a
/// sum of n bins is about (1 + 2·(4/9 + 1/36)) ≈ 2 times that of n independent bins (the Hann
/// transform's neighbouring-bin amplitude correlations 2/3 and 1/6, squared).
const HANN_SUM_VARIANCE: f64 = 1.944;
/// Equivalent noise bandwidth of the Hann window, bins (F. J. Harris, "On the use of windows
/// for harmonic analysis with the discrete Fourier transform", Proc. IEEE 66 (1978), table 1).
const HANN_ENBW_BINS: f64 = 1.5;
/// Widest occupied band of a line at 0 Hz taken for the receiver's DC spike, bins (the Hann
/// main lobe is 4 bins wide; slow drift of a DC offset widens it a little; common practice,
/// no source).
pub const DC_SPIKE_MAX_WIDTH_BINS: f64 = 6.0;
/// Activity threshold of a waterfall row, standard deviations of the noise sum (one false
/// row in about 10⁹; Gaussian tail).
const ROW_SIGMAS: f64 = 6.0;

/// What an emission is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Class {
    /// A carrier with two symmetric sidebands (A3E).
    Am,
    /// An unmodulated carrier (or one whose modulation is below the noise).
    Carrier,
    /// Two symmetric sidebands around a suppressed carrier: the squared signal has a line at
    /// twice the carrier and the spectrum none at it.
    Dsb,
    /// Upper sideband: one-sided, above a (suppressed or reduced) carrier.
    Usb,
    /// Lower sideband.
    Lsb,
    /// Something else (data, wide or flat channels whose side cannot be told).
    Unknown,
}

impl Class {
    /// The class's name as written in reports and SigMF labels.
    pub fn name(self) -> &'static str {
        match self {
            Class::Am => "am",
            Class::Carrier => "carrier",
            Class::Dsb => "dsb",
            Class::Usb => "usb",
            Class::Lsb => "lsb",
            Class::Unknown => "unknown",
        }
    }
}

/// One emission found, frequencies relative to the recording centre.
#[derive(Debug, Clone, PartialEq)]
pub struct Found {
    /// Carrier, suppressed carrier or SSB dial, Hz.
    pub offset_hz: f64,
    /// Class.
    pub class: Class,
    /// Mean power while on, dBFS (0 dBFS: a complex tone of magnitude 1).
    pub level_dbfs: f64,
    /// Carrier (or, without one, signal) to noise ratio, dB, in `cnr_bandwidth_hz`.
    pub cnr_db: f64,
    /// Noise bandwidth of the CNR, Hz.
    pub cnr_bandwidth_hz: f64,
    /// Lower edge of the 99 % occupied band, Hz.
    pub lower_edge_hz: f64,
    /// Upper edge, Hz.
    pub upper_edge_hz: f64,
    /// Start of the transmission, s from the start of the recording.
    pub start_s: f64,
    /// End, s.
    pub end_s: f64,
    /// First sample and sample count of the transmission (for SigMF).
    pub samples: (u64, u64),
    /// The spectral line (carrier) in it, Hz, if there is one.
    pub line_hz: Option<f64>,
}

impl Found {
    /// 99 % occupied bandwidth, Hz.
    pub fn occupied_bandwidth_hz(&self) -> f64 {
        self.upper_edge_hz - self.lower_edge_hz
    }
}

/// Something over the threshold that is not reported as a station, and why.
#[derive(Debug, Clone, PartialEq)]
pub struct Rejected {
    /// Where, Hz from the centre.
    pub offset_hz: f64,
    /// Its level, dBFS.
    pub level_dbfs: f64,
    /// Why it is not a station.
    pub reason: String,
}

/// Everything the detection found.
#[derive(Debug, Clone, PartialEq)]
pub struct Detection {
    /// Median noise floor over the band, power density in dBFS/Hz.
    pub noise_floor_dbfs_hz: f64,
    /// Local floor per bin (ascending frequency), full scale²/Hz.
    pub floor: Vec<f64>,
    /// Threshold factor over the floor.
    pub threshold_factor: f64,
    /// Stations, sorted by offset then start.
    pub emissions: Vec<Found>,
    /// Not stations (DC spike, IQ images, below the CNR asked for).
    pub rejected: Vec<Rejected>,
}

/// Upper-tail standard normal quantile z with P(Z > z) = p, 0 < p ≤ 0.5 (Abramowitz and
/// Stegun 26.2.23, |error| < 4.5·10⁻⁴); symmetric for p > 0.5.
pub fn normal_upper_quantile(p: f64) -> f64 {
    let p = p.clamp(1e-300, 1.0 - 1e-16);
    if p > 0.5 {
        return -normal_upper_quantile(1.0 - p);
    }
    let t = (-2.0 * p.ln()).sqrt();
    let (c0, c1, c2) = (2.515517, 0.802853, 0.010328);
    let (d1, d2, d3) = (1.432788, 0.189269, 0.001308);
    t - (c0 + c1 * t + c2 * t * t) / (1.0 + d1 * t + d2 * t * t + d3 * t * t * t)
}

/// The value q with P(χ²(ν)/ν > q) = p (Wilson–Hilferty): the factor over a mean noise density
/// exceeded by noise alone with probability `p`, for an average of ν degrees of freedom.
pub fn chi2_factor(p: f64, dof: f64) -> f64 {
    let z = normal_upper_quantile(p);
    let a = 2.0 / (9.0 * dof.max(1.0));
    (1.0 - a + z * a.sqrt()).max(0.0).powi(3)
}

/// Local noise floor per bin (see the module docs).
pub fn noise_floor(density: &[f64], dof: f64) -> Vec<f64> {
    let n = density.len();
    let blocks = FLOOR_BLOCKS.min(n / 4).max(1);
    let per = n / blocks;
    let correction = chi2_factor(1.0 - FLOOR_PERCENTILE, dof).max(1e-6);
    let mut scratch = Vec::with_capacity(per + n % blocks);
    let raw: Vec<f64> = (0..blocks)
        .map(|b| {
            let end = if b + 1 == blocks { n } else { (b + 1) * per };
            scratch.clear();
            scratch.extend_from_slice(&density[b * per..end]);
            scratch.sort_by(f64::total_cmp);
            let at = ((scratch.len() as f64 - 1.0) * FLOOR_PERCENTILE).round() as usize;
            scratch[at] / correction
        })
        .collect();
    let smoothed: Vec<f64> = (0..blocks)
        .map(|b| {
            let lo = b.saturating_sub(FLOOR_NEIGHBOURS);
            let hi = (b + FLOOR_NEIGHBOURS + 1).min(blocks);
            let mut near: Vec<f64> = raw[lo..hi].to_vec();
            near.sort_by(f64::total_cmp);
            // Anchor on the 25th percentile (robust to occupied blocks), then twice take the
            // median of the estimates within a factor 1.3 of the anchor: blocks holding
            // emissions fall outside, and the median of the rest is not biased low as the
            // percentile is.
            let mut anchor = near[((near.len() - 1) as f64 * FLOOR_PERCENTILE).round() as usize];
            for _ in 0..2 {
                let mut kept: Vec<f64> = near
                    .iter()
                    .copied()
                    .filter(|&v| v <= 1.3 * anchor && v >= anchor / 1.3)
                    .collect();
                if kept.is_empty() {
                    break;
                }
                anchor = median(&mut kept);
            }
            anchor
        })
        .collect();
    // Linear interpolation between block centres.
    (0..n)
        .map(|i| {
            let x = (i as f64 + 0.5) / per as f64 - 0.5;
            let b = (x.floor().max(0.0) as usize).min(blocks - 1);
            let next = (b + 1).min(blocks - 1);
            let t = (x - b as f64).clamp(0.0, 1.0);
            let v = smoothed[b] * (1.0 - t) + smoothed[next] * t;
            v.max(f64::MIN_POSITIVE)
        })
        .collect()
}

/// Runs of occupied bins (`[first, last]`, inclusive) merged across gaps of fewer than
/// `merge_bins` bins.
pub fn occupied_runs(over: &[bool], merge_bins: usize) -> Vec<(usize, usize)> {
    let mut runs: Vec<(usize, usize)> = Vec::new();
    for (i, &o) in over.iter().enumerate() {
        if !o {
            continue;
        }
        match runs.last_mut() {
            Some(last) if i - last.1 <= merge_bins + 1 => last.1 = i,
            _ => runs.push((i, i)),
        }
    }
    runs
}

/// Magnitude of the Hann window's transform at `x` bins from a tone, relative to its peak
/// (Harris 1978: |W(x)| ∝ |sinc x / (1 − x²)|).
pub fn hann_response(x: f64) -> f64 {
    let x = x.abs();
    if x < 1e-9 {
        return 1.0;
    }
    if (x - 1.0).abs() < 1e-9 {
        return 0.5;
    }
    let s = (std::f64::consts::PI * x).sin() / (std::f64::consts::PI * x);
    (s / (1.0 - x * x)).abs()
}

fn db(x: f64) -> f64 {
    10.0 * x.max(1e-30).log10()
}

fn median(v: &mut [f64]) -> f64 {
    if v.is_empty() {
        return 0.0;
    }
    v.sort_by(f64::total_cmp);
    v[v.len() / 2]
}

/// Vertex of the parabola through three log powers, bins (J. O. Smith, Spectral Audio Signal
/// Processing, "Quadratic Interpolation of Spectral Peaks").
fn interpolate(spectrum: &[f64], k: usize) -> f64 {
    if k == 0 || k + 1 >= spectrum.len() {
        return k as f64;
    }
    crate::measure::carrier::parabolic_offset(spectrum[k - 1], spectrum[k], spectrum[k + 1])
        + k as f64
}

/// A line at bin `k` of `spectrum`: over the threshold and [`LINE_RATIO`] over the median of
/// `range` widened by 16 bins on each side (so that a run holding only a line's main lobe is
/// compared with the noise beside it), and narrow.
fn is_line(spectrum: &[f64], floor: &[f64], factor: f64, k: usize, range: (usize, usize)) -> bool {
    let widen = 16;
    let lo = range.0.saturating_sub(widen);
    let hi = (range.1 + widen).min(spectrum.len() - 1);
    let mut around: Vec<f64> = spectrum[lo..=hi].to_vec();
    let m = median(&mut around).max(floor[k]);
    spectrum[k] > factor * floor[k] && spectrum[k] > LINE_RATIO * m && narrow(spectrum, k)
}

/// Bin `k` stands [`LINE_RATIO`] over the bins 3 and 4 away on both sides: a line, not the
/// top of a continuum (a Hann line's leakage there is under −40 dB).
fn narrow(spectrum: &[f64], k: usize) -> bool {
    [k.checked_sub(3), k.checked_sub(4), Some(k + 3), Some(k + 4)]
        .into_iter()
        .flatten()
        .filter(|&i| i < spectrum.len())
        .all(|i| spectrum[k] > LINE_RATIO * spectrum[i])
}

/// The analysis of one emission's spectrum.
struct Shape {
    class: Class,
    offset_hz: f64,
    carrier_power: Option<f64>,
    line_hz: Option<f64>,
}

/// Everything shared by the analysis of each run.
struct Context<'a> {
    record: &'a BandRecord,
    floor: &'a [f64],
    factor: f64,
    /// Lines (Hz, power) whose products show in the squared signal: the carriers.
    lines: Vec<(f64, f64)>,
    squared_floor_dof: f64,
}

/// Detects and describes every emission in `record`; those whose CNR is below `min_cnr_db`
/// are listed as rejected.
pub fn detect(record: &BandRecord, min_cnr_db: f64) -> Detection {
    let n = record.fft_len;
    let bin = record.bin_hz();
    let dof = record.degrees_of_freedom(record.frames);
    let floor = noise_floor(&record.average, dof);
    let factor = chi2_factor(BIN_FALSE_ALARM, dof);
    let mut sorted = floor.clone();
    let noise_floor_dbfs_hz = db(median(&mut sorted));
    let over: Vec<bool> = (0..n)
        .map(|i| record.frames > 0 && record.average[i] > factor * floor[i])
        .collect();
    let merge_bins = (MERGE_GAP_HZ / bin).round() as usize;
    let runs = occupied_runs(&over, merge_bins);
    // Every line in the band but the DC spike (removed before squaring), with its power, for
    // the squaring test's explained products.
    let mut lines = Vec::new();
    for &(a, b) in &runs {
        let k = (a..=b)
            .max_by(|&x, &y| record.average[x].total_cmp(&record.average[y]))
            .unwrap_or(a);
        let f = record.frequency(0) + interpolate(&record.average, k) * bin;
        if f.abs() > 1.5 * bin && is_line(&record.average, &floor, factor, k, (a, b)) {
            let power: f64 = (k.saturating_sub(2)..=(k + 2).min(n - 1))
                .map(|i| (record.average[i] - floor[i]).max(0.0))
                .sum::<f64>()
                * bin;
            lines.push((f, power));
        }
    }
    let ctx = Context {
        record,
        floor: &floor,
        factor,
        lines,
        squared_floor_dof: dof,
    };
    let mut emissions = Vec::new();
    let mut rejected = Vec::new();
    for (index, &run) in runs.iter().enumerate() {
        let lower_limit = if index == 0 { 0 } else { runs[index - 1].1 + 1 };
        let upper_limit = runs.get(index + 1).map_or(n - 1, |r| r.0 - 1);
        let margin = ((run.1 - run.0) / 4).max(5);
        let span = (
            run.0.saturating_sub(margin).max(lower_limit),
            (run.1 + margin).min(upper_limit),
        );
        for (rows, samples, start_s, end_s) in activity(record, &floor, run) {
            let spectrum = mean_spectrum(record, &rows);
            emissions.push(describe(
                &ctx, &spectrum, run, span, samples, start_s, end_s,
            ));
        }
    }
    // Artefacts first (so an image is named as one even when it is also weak), then the CNR.
    reject_artefacts(&mut emissions, &mut rejected, bin);
    emissions.retain(|found| {
        let keep = found.cnr_db >= min_cnr_db;
        if !keep {
            rejected.push(Rejected {
                offset_hz: found.offset_hz,
                level_dbfs: found.level_dbfs,
                reason: format!(
                    "CNR {:.1} dB in {:.0} Hz is below the {:.1} dB asked for",
                    found.cnr_db, found.cnr_bandwidth_hz, min_cnr_db
                ),
            });
        }
        keep
    });
    rejected.sort_by(|a, b| a.offset_hz.total_cmp(&b.offset_hz));
    emissions.sort_by(|a, b| {
        a.offset_hz
            .total_cmp(&b.offset_hz)
            .then(a.start_s.total_cmp(&b.start_s))
    });
    Detection {
        noise_floor_dbfs_hz,
        floor,
        threshold_factor: factor,
        emissions,
        rejected,
    }
}

/// The DC spike (a line within 1.5 bins of 0 Hz with no more than [`DC_SPIKE_MAX_WIDTH_BINS`]
/// of occupied band: a station at the centre has sidebands wider than that) and IQ images (an emission mirrored about
/// the centre on one at least [`IMAGE_MARGIN_DB`] stronger, overlapping in time) are moved
/// to the rejected list.
fn reject_artefacts(emissions: &mut Vec<Found>, rejected: &mut Vec<Rejected>, bin: f64) {
    let mut keep = vec![true; emissions.len()];
    for (i, e) in emissions.iter().enumerate() {
        let at_dc = e.line_hz.is_some_and(|f| f.abs() <= 1.5 * bin);
        if at_dc && e.occupied_bandwidth_hz() <= DC_SPIKE_MAX_WIDTH_BINS * bin {
            keep[i] = false;
            rejected.push(Rejected {
                offset_hz: e.offset_hz,
                level_dbfs: e.level_dbfs,
                reason: "the receiver's DC spike (a bare line at the centre)".into(),
            });
            continue;
        }
        let mirror = emissions.iter().find(|s| {
            let (lo, hi) = (-s.upper_edge_hz, -s.lower_edge_hz);
            let overlap = (hi.min(e.upper_edge_hz) - lo.max(e.lower_edge_hz)).max(0.0);
            let width = e.occupied_bandwidth_hz().max(bin);
            let same_place =
                overlap >= 0.5 * width || (e.offset_hz + s.offset_hz).abs() <= 2.0 * bin;
            let same_time = s.start_s < e.end_s && e.start_s < s.end_s;
            s.offset_hz.abs() > 1.5 * bin
                && same_place
                && same_time
                && s.level_dbfs - e.level_dbfs >= IMAGE_MARGIN_DB
        });
        if let Some(s) = mirror {
            keep[i] = false;
            rejected.push(Rejected {
                offset_hz: e.offset_hz,
                level_dbfs: e.level_dbfs,
                reason: format!(
                    "likely the receiver's IQ image of the emission at {:+.0} Hz ({:.1} dB weaker)",
                    s.offset_hz,
                    s.level_dbfs - e.level_dbfs
                ),
            });
        }
    }
    let mut i = 0;
    emissions.retain(|_| {
        i += 1;
        keep[i - 1]
    });
}

/// The rows a run is active in, grouped into transmissions: (rows, samples, start_s, end_s).
/// A run too weak to show in single rows is one transmission over the whole recording.
#[allow(clippy::type_complexity)]
fn activity(
    record: &BandRecord,
    floor: &[f64],
    run: (usize, usize),
) -> Vec<(Vec<usize>, (u64, u64), f64, f64)> {
    let rows = record.row_count();
    let noise: f64 = floor[run.0..=run.1].iter().sum();
    let noise_sq: f64 = floor[run.0..=run.1].iter().map(|f| f * f).sum();
    let active: Vec<bool> = (0..rows)
        .map(|r| {
            let row = record.row(r);
            let sum: f64 = row[run.0..=run.1].iter().map(|&v| f64::from(v)).sum();
            let dof = record.degrees_of_freedom(record.row_frames[r]);
            let sigma = (HANN_SUM_VARIANCE * 2.0 / dof * noise_sq).sqrt();
            sum - noise > ROW_SIGMAS * sigma
        })
        .collect();
    let mut spans: Vec<(usize, usize)> = Vec::new();
    for r in (0..rows).filter(|&r| active[r]) {
        match spans.last_mut() {
            Some(last)
                if record.row_boundary_s(r) - record.row_boundary_s(last.1 + 1) < SPAN_MERGE_S =>
            {
                last.1 = r
            }
            _ => spans.push((r, r)),
        }
    }
    if spans.is_empty() {
        let all: Vec<usize> = (0..rows).collect();
        let duration = record.samples as f64 / record.sample_rate;
        return vec![(all, (0, record.samples), 0.0, duration)];
    }
    spans
        .into_iter()
        .map(|(a, b)| {
            let list: Vec<usize> = (a..=b).filter(|&r| active[r]).collect();
            let start = record.row_samples(a).0;
            let end = record.row_samples(b).1;
            (
                list,
                (start, end - start),
                record.row_boundary_s(a),
                record.row_boundary_s(b + 1),
            )
        })
        .collect()
}

/// Frame-weighted mean of some rows (ascending frequency).
fn mean_spectrum(record: &BandRecord, rows: &[usize]) -> Vec<f64> {
    let frames: usize = rows.iter().map(|&r| record.row_frames[r]).sum();
    if rows.is_empty() || frames == 0 {
        return record.average.clone();
    }
    let mut out = vec![0.0; record.fft_len];
    for &r in rows {
        let w = record.row_frames[r] as f64 / frames as f64;
        for (o, &v) in out.iter_mut().zip(record.row(r)) {
            *o += w * f64::from(v);
        }
    }
    out
}

/// Describes one run from its spectrum while on.
fn describe(
    ctx: &Context,
    spectrum: &[f64],
    run: (usize, usize),
    span: (usize, usize),
    samples: (u64, u64),
    start_s: f64,
    end_s: f64,
) -> Found {
    let record = ctx.record;
    let bin = record.bin_hz();
    let f0 = record.frequency(0);
    let excess: Vec<f64> = (span.0..=span.1)
        .map(|i| (spectrum[i] - ctx.floor[i]).max(0.0))
        .collect();
    let total: f64 = excess.iter().sum::<f64>() * bin;
    let shape = classify(ctx, spectrum, run);
    // 99 % occupied bandwidth (ITU-R SM.328): 0.5 % of the power below and above, with the
    // cumulative power interpolated linearly across each bin's width.
    let sum: f64 = excess.iter().sum();
    let edge = |fraction: f64| -> f64 {
        let target = fraction * sum;
        let mut acc = 0.0;
        for (j, &p) in excess.iter().enumerate() {
            if acc + p >= target && p > 0.0 {
                let within = (target - acc) / p;
                return f0 + ((span.0 + j) as f64 - 0.5 + within) * bin;
            }
            acc += p;
        }
        f0 + (span.1 as f64 + 0.5) * bin
    };
    let (lower, upper) = if sum > 0.0 {
        (edge(0.005), edge(0.995))
    } else {
        let c = f0 + (run.0 + run.1) as f64 * 0.5 * bin;
        (c, c)
    };
    let offset_hz = match shape.class {
        Class::Usb => shape.offset_hz.min(lower),
        Class::Lsb => shape.offset_hz.max(upper),
        Class::Unknown => 0.5 * (lower + upper),
        _ => shape.offset_hz,
    };
    let cnr_bandwidth_hz = (upper - lower).max(HANN_ENBW_BINS * bin);
    let centre_bin = record.bin_of(offset_hz.clamp(lower, upper));
    let noise_density = ctx.floor[centre_bin];
    let carrier = shape.carrier_power.unwrap_or(total);
    Found {
        offset_hz,
        class: shape.class,
        level_dbfs: db(total),
        cnr_db: db(carrier / (noise_density * cnr_bandwidth_hz)),
        cnr_bandwidth_hz,
        lower_edge_hz: lower,
        upper_edge_hz: upper,
        start_s,
        end_s,
        samples,
        line_hz: shape.line_hz,
    }
}

/// Class and carrier of a run (see [`Class`]): the squaring test first (a line in x² at twice
/// the power centroid marks a carrier or a suppressed one), then a line in the spectrum, then
/// the one-sided shapes.
fn classify(ctx: &Context, spectrum: &[f64], run: (usize, usize)) -> Shape {
    let record = ctx.record;
    let bin = record.bin_hz();
    let f0 = record.frequency(0);
    let excess = |i: usize| (spectrum[i] - ctx.floor[i]).max(0.0);
    let weight: f64 = (run.0..=run.1).map(excess).sum();
    let centroid = if weight > 0.0 {
        (run.0..=run.1).map(|i| i as f64 * excess(i)).sum::<f64>() / weight
    } else {
        0.5 * (run.0 + run.1) as f64
    };
    let width_bins = (run.1 - run.0) as f64;
    let peak = (run.0..=run.1)
        .max_by(|&a, &b| spectrum[a].total_cmp(&spectrum[b]))
        .unwrap_or(run.0);
    let line_at = |k: usize| is_line(spectrum, ctx.floor, ctx.factor, k, run);
    // 1. The squaring test.
    let centroid_hz = f0 + centroid * bin;
    let squared = squared_line(ctx, centroid_hz, (width_bins / 8.0).max(3.0));
    let carrier_bin = match squared {
        Some(fc) => {
            let k = record.bin_of(fc);
            let near = (k.saturating_sub(1)..=(k + 1).min(record.fft_len - 1))
                .max_by(|&a, &b| spectrum[a].total_cmp(&spectrum[b]))
                .unwrap_or(k);
            if line_at(near) {
                Some(near)
            } else {
                return Shape {
                    class: Class::Dsb,
                    offset_hz: fc,
                    carrier_power: None,
                    line_hz: None,
                };
            }
        }
        None => line_at(peak).then_some(peak),
    };
    let Some(k) = carrier_bin else {
        return one_sided(ctx, spectrum, run);
    };
    // 2. A carrier: what is beside it, after the window's leakage of the line is removed.
    let exact = interpolate(spectrum, k);
    let line_excess = excess(k);
    let at_peak = hann_response(k as f64 - exact).powi(2);
    let residual = |i: usize| {
        let leak = line_excess * hann_response(i as f64 - exact).powi(2) / at_peak;
        spectrum[i] - ctx.floor[i] - leak
    };
    let lobe = 2;
    let carrier_power: f64 = (k.saturating_sub(lobe)..=(k + lobe).min(record.fft_len - 1))
        .map(excess)
        .sum::<f64>()
        * bin;
    let side = |range: std::ops::Range<usize>| -> (f64, f64) {
        let sum: f64 = range.clone().map(residual).sum();
        let noise_sq: f64 = range.map(|i| ctx.floor[i].powi(2)).sum();
        let dof = record.degrees_of_freedom(record.frames);
        let sigma = (HANN_SUM_VARIANCE * 2.0 / dof * noise_sq).sqrt();
        (sum, sigma)
    };
    let (below, below_sigma) = side(run.0..k.saturating_sub(lobe).max(run.0));
    let (above, above_sigma) = side((k + lobe + 1).min(run.1 + 1)..run.1 + 1);
    // A sideband must stand out of the noise (5σ) and be more than 30 dB under the carrier's
    // peak bin, a margin over the leakage model's error (common practice, no source).
    let significant = |p: f64, sigma: f64| p > 5.0 * sigma && p > 1e-3 * line_excess;
    let (lo, hi) = (
        significant(below, below_sigma),
        significant(above, above_sigma),
    );
    let offset_hz = f0 + exact * bin;
    let class = match (lo, hi) {
        (false, false) => Class::Carrier,
        (true, true) if below.max(above) <= SIDE_RATIO * below.min(above) => Class::Am,
        _ if above > below => Class::Usb,
        _ => Class::Lsb,
    };
    Shape {
        class,
        offset_hz,
        carrier_power: Some(carrier_power),
        line_hz: Some(offset_hz),
    }
}

/// A line in the squared signal's spectrum within `search_bins` of twice `centre_hz`, not
/// explained as the product of two known lines; returns half its frequency (the carrier).
fn squared_line(ctx: &Context, centre_hz: f64, search_bins: f64) -> Option<f64> {
    let record = ctx.record;
    let n = record.fft_len;
    let fs = record.sample_rate;
    let bin = record.bin_hz();
    let wrap = |f: f64| f - fs * (f / fs).round();
    let target = wrap(2.0 * centre_hz);
    let k = record.bin_of(target);
    let reach = search_bins.ceil() as usize;
    let lo = k.saturating_sub(reach);
    let hi = (k + reach).min(n - 1);
    let peak = (lo..=hi).max_by(|&a, &b| record.squared[a].total_cmp(&record.squared[b]))?;
    let ref_lo = peak.saturating_sub(64);
    let ref_hi = (peak + 64).min(n - 1);
    let mut reference: Vec<f64> = (ref_lo..=ref_hi)
        .filter(|&i| i + 3 < peak || i > peak + 3)
        .map(|i| record.squared[i])
        .collect();
    let local = median(&mut reference);
    if local.is_nan() || local <= 0.0 {
        return None;
    }
    let factor = chi2_factor(BIN_FALSE_ALARM, ctx.squared_floor_dof);
    let value = record.squared[peak];
    if !(value > factor * local && value > LINE_RATIO * local && narrow(&record.squared, peak)) {
        return None;
    }
    let f2 = record.frequency(0) + interpolate(&record.squared, peak) * bin;
    let line_power: f64 = (peak.saturating_sub(2)..=(peak + 2).min(n - 1))
        .map(|i| (record.squared[i] - local).max(0.0))
        .sum::<f64>()
        * bin;
    // Two different carriers a and b put a line of power 4·Pa·Pb at a + b in the squared
    // signal; a line not 10 dB over every such product landing on it is not evidence.
    let lines = &ctx.lines;
    for (i, (fa, pa)) in lines.iter().enumerate() {
        for (fb, pb) in &lines[i + 1..] {
            if (wrap(fa + fb - f2)).abs() <= 2.0 * bin && line_power < 40.0 * pa * pb {
                return None;
            }
        }
    }
    // Half of f2, on the branch nearest the centroid.
    let half = 0.5 * f2;
    let other = half + if half < 0.0 { 0.5 * fs } else { -0.5 * fs };
    Some(if (half - centre_hz).abs() <= (other - centre_hz).abs() {
        half
    } else {
        other
    })
}

/// A run with no carrier and no squared line: single sideband if narrow enough and tilted
/// (see [`TILT_RATIO`]), else unknown. The offset returned is the inner edge of the run
/// (refined to the occupied band's edge by the caller).
fn one_sided(ctx: &Context, spectrum: &[f64], run: (usize, usize)) -> Shape {
    let record = ctx.record;
    let bin = record.bin_hz();
    let f0 = record.frequency(0);
    let width = (run.1 - run.0 + 1) as f64 * bin;
    let mid = (run.0 + run.1) / 2;
    let excess = |i: usize| (spectrum[i] - ctx.floor[i]).max(0.0);
    let lower: f64 = (run.0..=mid).map(excess).sum();
    let upper: f64 = (mid + 1..=run.1).map(excess).sum();
    let lower_edge = f0 + (run.0 as f64 - 0.5) * bin;
    let upper_edge = f0 + (run.1 as f64 + 0.5) * bin;
    let (class, offset_hz) = if !(SSB_MIN_WIDTH_HZ..=SSB_MAX_WIDTH_HZ).contains(&width) {
        (Class::Unknown, 0.5 * (lower_edge + upper_edge))
    } else if lower > TILT_RATIO * upper {
        (Class::Usb, lower_edge)
    } else if upper > TILT_RATIO * lower {
        (Class::Lsb, upper_edge)
    } else {
        (Class::Unknown, 0.5 * (lower_edge + upper_edge))
    };
    Shape {
        class,
        offset_hz,
        carrier_power: None,
        line_hz: None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::band::BandRecorder;
    use crate::dsp::ComplexNoise;
    use crate::Complex32;

    #[test]
    fn normal_quantile_matches_tables() {
        // Abramowitz and Stegun table 26.1: z(0.025) = 1.95996, z(1e-3) = 3.09023,
        // z(1e-6) = 4.75342; the approximation is good to 4.5e-4.
        assert!((normal_upper_quantile(0.025) - 1.959964).abs() < 5e-4);
        assert!((normal_upper_quantile(1e-3) - 3.090232).abs() < 5e-4);
        assert!((normal_upper_quantile(1e-6) - 4.753424).abs() < 5e-4);
        assert!((normal_upper_quantile(0.5)).abs() < 5e-4);
        assert!((normal_upper_quantile(0.975) + 1.959964).abs() < 5e-4);
    }

    #[test]
    fn chi2_factor_matches_scipy() {
        // scipy.stats.chi2.isf(p, nu) / nu: (1e-3, 20) → 2.2657; (1e-6, 200) → 1.5492;
        // (0.75, 100) → 0.9013 (values computed with scipy 1.17; Wilson–Hilferty is within
        // 1 % at these ν).
        for (p, nu, want) in [
            (1e-3, 20.0, 2.2657),
            (1e-6, 200.0, 1.5492),
            (0.75, 100.0, 0.9013),
        ] {
            let got = chi2_factor(p, nu);
            assert!((got / want - 1.0).abs() < 0.01, "{p} {nu}: {got} vs {want}");
        }
    }

    fn noise_record(seed: u64, len: usize, fft_len: usize) -> BandRecord {
        let mut noise = ComplexNoise::new(1.0, seed);
        let mut x = vec![Complex32::default(); len];
        noise.fill(&mut x);
        let mut r = BandRecorder::with_fft_len(48e3, fft_len).unwrap();
        r.push(&x);
        r.finish()
    }

    #[test]
    fn the_false_alarm_rate_is_the_one_stated() {
        // Bins over floor × chi2_factor(p) in white noise, 4 seeds of 16384 bins (a scan's
        // size: the floor is pooled from blocks of 256 bins) and 48 frames. Expected counts
        // 65536·p; the tolerance, 20 %, is the allowance for the floor estimate's own scatter
        // and bias (a floor 1 % low raises the rate at p = 1e-2 by about 7 %), well over the
        // binomial σ (4 % at p = 1e-2, 12 % at 1e-3).
        for p in [1e-2, 1e-3] {
            let mut over = 0usize;
            for seed in 0..4 {
                let rec = noise_record(seed, 16384 * 49 / 2, 16384);
                let dof = rec.degrees_of_freedom(rec.frames);
                let floor = noise_floor(&rec.average, dof);
                let f = chi2_factor(p, dof);
                over += (0..16384)
                    .filter(|&i| rec.average[i] > f * floor[i])
                    .count();
            }
            let want = 65536.0 * p;
            eprintln!("p {p}: {over} bins over the threshold, {want} expected");
            assert!(
                (over as f64 / want - 1.0).abs() <= 0.2,
                "p {p}: {over} bins over, {want} expected"
            );
        }
    }

    #[test]
    fn floor_is_the_noise_density() {
        // Complex noise of power 1 at 48 kS/s: density 1/48000 per Hz. The floor estimate
        // (a percentile of ~16 bins per block, median of 5 blocks) is within 5 %.
        let rec = noise_record(3, 100_000, 1024);
        let dof = rec.degrees_of_freedom(rec.frames);
        let floor = noise_floor(&rec.average, dof);
        let want = 1.0 / 48e3;
        for f in floor.iter().step_by(37) {
            assert!((f / want - 1.0).abs() < 0.05, "{f} vs {want}");
        }
        assert!(detect(&rec, 0.0).emissions.is_empty());
    }

    #[test]
    fn runs_merge_across_small_gaps() {
        let over = [
            false, true, true, false, false, true, false, false, false, false, true,
        ];
        assert_eq!(occupied_runs(&over, 2), vec![(1, 5), (10, 10)]);
        assert_eq!(occupied_runs(&over, 0), vec![(1, 2), (5, 5), (10, 10)]);
    }

    #[test]
    fn hann_response_known_values() {
        // Harris 1978: first sidelobe of the Hann window −31.5 dB at about 2.36 bins; zeros at
        // integers ≥ 2; half amplitude (−6 dB) at one bin.
        assert_eq!(hann_response(0.0), 1.0);
        assert_eq!(hann_response(1.0), 0.5);
        assert!(hann_response(3.0) < 1e-12);
        let side = 20.0 * hann_response(2.36).log10();
        assert!((side + 31.5).abs() < 0.2, "{side}");
    }
}

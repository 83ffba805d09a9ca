//! A run of measurement windows turned into what a monitoring engineer reads: events (limits
//! exceeded, overmodulation, carrier lost and back), a summary with the verdict, JSON and CSV.
//!
//! Fractions throughout, 1.0 = 100 %, like the demod report. Limits are the user's (take them
//! from the station's licence); none is built in.

use super::carrier_meter::{MeterSummary, WindowReading, OVERMODULATION};
use crate::{Error, Result};
use serde::Serialize;
use std::io::Write;
use std::path::Path;

/// Peak modulation limits, as fractions (1.25 = 125 %).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Limits {
    /// Highest positive peak allowed.
    pub positive: Option<f64>,
    /// Highest negative peak allowed.
    pub negative: Option<f64>,
}

/// What happened.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum EventKind {
    /// Negative peaks reached 100 %: the envelope pinched off.
    Overmodulation,
    /// Positive peaks above the positive limit.
    PositiveLimit,
    /// Negative peaks above the negative limit.
    NegativeLimit,
    /// The carrier went (from `start_s` until it came back or the recording ended).
    CarrierLost,
    /// The carrier came (back) at `start_s`.
    CarrierBack,
}

/// One event: consecutive windows of the same kind.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Event {
    /// What happened.
    pub kind: EventKind,
    /// Start, in seconds from the start of the input.
    pub start_s: f64,
    /// End, in seconds.
    pub end_s: f64,
    /// The highest reading over the event (a fraction), `None` for carrier events.
    pub peak: Option<f64>,
}

/// The summary over the run.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct TimelineSummary {
    /// Seconds with a carrier present.
    pub carrier_present_s: f64,
    /// Highest positive peak over carrier-present windows.
    pub positive_peak: Option<f64>,
    /// Highest negative peak over carrier-present windows.
    pub negative_peak: Option<f64>,
    /// CNR over carrier-present time, dB.
    pub cnr_db: Option<f64>,
    /// Bandwidth the CNR's noise is measured in, Hz.
    pub cnr_bandwidth_hz: f64,
    /// Within the limits throughout: `None` without limits (or without a carrier to judge).
    pub compliant: Option<bool>,
}

/// Windows, events and summary: the JSON `amrx measure` writes.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Timeline {
    /// One reading per window.
    pub windows: Vec<WindowReading>,
    /// Events, in order of start.
    pub events: Vec<Event>,
    /// The summary.
    pub summary: TimelineSummary,
}

fn window_end(w: &WindowReading) -> f64 {
    w.start_s + w.duration_s
}

/// Runs of consecutive windows where `value` gives a reading, as events of `kind`.
fn runs(
    windows: &[WindowReading],
    kind: EventKind,
    value: impl Fn(&WindowReading) -> Option<f64>,
    out: &mut Vec<Event>,
) {
    let mut open: Option<Event> = None;
    for w in windows {
        match (value(w), open.as_mut()) {
            (Some(v), Some(e)) => {
                e.end_s = window_end(w);
                e.peak = e.peak.map(|p| p.max(v));
            }
            (Some(v), None) => {
                open = Some(Event {
                    kind,
                    start_s: w.start_s,
                    end_s: window_end(w),
                    peak: Some(v),
                })
            }
            (None, _) => out.extend(open.take()),
        }
    }
    out.extend(open);
}

/// Carrier lost (present → absent, lasting until it returns or the end) and back.
fn carrier_events(windows: &[WindowReading], out: &mut Vec<Event>) {
    let mut previous: Option<bool> = None;
    let mut lost: Option<Event> = None;
    for w in windows {
        match (previous, w.carrier_present) {
            (Some(true), false) => {
                lost = Some(Event {
                    kind: EventKind::CarrierLost,
                    start_s: w.start_s,
                    end_s: window_end(w),
                    peak: None,
                })
            }
            (Some(false), false) => {
                if let Some(e) = lost.as_mut() {
                    e.end_s = window_end(w);
                }
            }
            (Some(false), true) => {
                out.extend(lost.take());
                out.push(Event {
                    kind: EventKind::CarrierBack,
                    start_s: w.start_s,
                    end_s: w.start_s,
                    peak: None,
                });
            }
            _ => {}
        }
        previous = Some(w.carrier_present);
    }
    out.extend(lost);
}

impl Timeline {
    /// Events and verdict for `windows` and the meter's `summary`, against `limits`.
    pub fn new(windows: Vec<WindowReading>, summary: &MeterSummary, limits: Limits) -> Self {
        let mut events = Vec::new();
        runs(
            &windows,
            EventKind::Overmodulation,
            |w| w.negative.filter(|&n| n >= OVERMODULATION),
            &mut events,
        );
        if let Some(limit) = limits.positive {
            runs(
                &windows,
                EventKind::PositiveLimit,
                |w| w.positive.filter(|&p| p > limit),
                &mut events,
            );
        }
        if let Some(limit) = limits.negative {
            runs(
                &windows,
                EventKind::NegativeLimit,
                |w| w.negative.filter(|&n| n > limit),
                &mut events,
            );
        }
        carrier_events(&windows, &mut events);
        events.sort_by(|a, b| a.start_s.total_cmp(&b.start_s));
        let judged = limits.positive.is_some() || limits.negative.is_some();
        let over = events.iter().any(|e| {
            matches!(e.kind, EventKind::PositiveLimit | EventKind::NegativeLimit)
                || (e.kind == EventKind::Overmodulation
                    && limits.negative.is_some_and(|l| l < OVERMODULATION))
        });
        let compliant = (judged && summary.carrier_present_s > 0.0 && summary.depth_windows > 0)
            .then_some(!over);
        Timeline {
            windows,
            events,
            summary: TimelineSummary {
                carrier_present_s: summary.carrier_present_s,
                positive_peak: summary.positive_peak,
                negative_peak: summary.negative_peak,
                cnr_db: summary.cnr_db,
                cnr_bandwidth_hz: summary.cnr_bandwidth_hz,
                compliant,
            },
        }
    }

    /// Writes the JSON (`windows`, `events`, `summary`).
    pub fn write_json(&self, path: &Path) -> Result<()> {
        let text = serde_json::to_string_pretty(self)
            .map_err(|e| Error::file(path, format!("cannot encode: {e}")))?;
        std::fs::write(path, text + "\n").map_err(|e| Error::io(path, e))
    }

    /// Writes one CSV row per window; empty cells where a value is absent.
    pub fn write_csv(&self, path: &Path) -> Result<()> {
        let file = std::fs::File::create(path).map_err(|e| Error::io(path, e))?;
        let mut out = std::io::BufWriter::new(file);
        let cell =
            |v: Option<f64>, digits: usize| v.map_or(String::new(), |x| format!("{x:.digits$}"));
        let mut write = || -> std::io::Result<()> {
            writeln!(
                out,
                "start_s,duration_s,carrier_present,carrier_dbfs,cnr_db,positive,negative"
            )?;
            for w in &self.windows {
                writeln!(
                    out,
                    "{:.4},{:.4},{},{},{},{},{}",
                    w.start_s,
                    w.duration_s,
                    w.carrier_present,
                    cell(w.carrier_dbfs, 2),
                    cell(w.cnr_db, 2),
                    cell(w.positive, 4),
                    cell(w.negative, 4)
                )?;
            }
            out.flush()
        };
        write().map_err(|e| Error::io(path, e))
    }

    /// The verdict and figures in a few lines for the terminal.
    pub fn verdict_lines(&self, limits: Limits) -> Vec<String> {
        let s = &self.summary;
        let pct = |v: Option<f64>| v.map_or("-".to_string(), |x| format!("{:.1} %", 100.0 * x));
        let measured: f64 = self.windows.iter().map(|w| w.duration_s).sum();
        let mut lines = vec![format!(
            "carrier present {:.1} s of {:.1} s; CNR {} (noise in {:.0} Hz)",
            s.carrier_present_s,
            measured,
            s.cnr_db.map_or("-".to_string(), |c| format!("{c:.1} dB")),
            s.cnr_bandwidth_hz
        )];
        lines.push(format!(
            "peak modulation: positive {}, negative {}",
            pct(s.positive_peak),
            pct(s.negative_peak)
        ));
        for e in &self.events {
            let kind = match e.kind {
                EventKind::Overmodulation => "overmodulation (negative peaks reach 100 %)",
                EventKind::PositiveLimit => "positive peaks over the limit",
                EventKind::NegativeLimit => "negative peaks over the limit",
                EventKind::CarrierLost => "carrier lost",
                EventKind::CarrierBack => "carrier back",
            };
            let peak = e
                .peak
                .map_or(String::new(), |p| format!(", peak {:.1} %", 100.0 * p));
            lines.push(format!(
                "  {:>8.2} s – {:>8.2} s  {kind}{peak}",
                e.start_s, e.end_s
            ));
        }
        let limit_text = format!(
            "limits positive {}, negative {}",
            pct(limits.positive),
            pct(limits.negative)
        );
        lines.push(match s.compliant {
            Some(true) => format!("verdict: WITHIN the {limit_text}"),
            Some(false) => format!("verdict: OUTSIDE the {limit_text}"),
            None if limits.positive.is_none() && limits.negative.is_none() => {
                "verdict: none (give --limit-positive/--limit-negative from the station's licence)"
                    .to_string()
            }
            None => format!("verdict: none, no carrier to judge against the {limit_text}"),
        });
        lines
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn window(start: f64, present: bool, pos: f64, neg: f64) -> WindowReading {
        WindowReading {
            start_s: start,
            duration_s: 0.1,
            carrier_present: present,
            carrier_dbfs: present.then_some(-20.0),
            cnr_db: present.then_some(30.0),
            positive: present.then_some(pos),
            negative: present.then_some(neg),
            locked: None,
        }
    }

    #[test]
    fn events_follow_the_windows() {
        let w = vec![
            window(0.0, true, 0.5, 0.5),
            window(0.1, true, 1.3, 1.0),
            window(0.2, true, 1.4, 1.0),
            window(0.3, false, 0.0, 0.0),
            window(0.4, false, 0.0, 0.0),
            window(0.5, true, 0.5, 0.5),
        ];
        let summary = MeterSummary {
            carrier_present_s: 0.4,
            positive_peak: Some(1.4),
            negative_peak: Some(1.0),
            depth_windows: 4,
            cnr_bandwidth_hz: 10_000.0,
            ..MeterSummary::default()
        };
        let limits = Limits {
            positive: Some(1.25),
            negative: Some(1.0),
        };
        let t = Timeline::new(w, &summary, limits);
        let kinds: Vec<EventKind> = t.events.iter().map(|e| e.kind).collect();
        assert_eq!(
            kinds,
            [
                EventKind::Overmodulation,
                EventKind::PositiveLimit,
                EventKind::CarrierLost,
                EventKind::CarrierBack
            ]
        );
        let positive = t.events[1];
        assert!((positive.start_s - 0.1).abs() < 1e-9 && (positive.end_s - 0.3).abs() < 1e-9);
        assert_eq!(positive.peak, Some(1.4));
        assert!((t.events[2].end_s - 0.5).abs() < 1e-9);
        assert_eq!(t.summary.compliant, Some(false));
        let free = Timeline::new(t.windows.clone(), &summary, Limits::default());
        assert_eq!(free.summary.compliant, None);
        let json = serde_json::to_value(&t).unwrap();
        assert!(json["windows"][3]["positive"].is_null());
        assert_eq!(json["events"][0]["kind"], "overmodulation");
        assert!(json["summary"]["compliant"].is_boolean());
        assert!(json["windows"][0].get("locked").is_none());
    }
}

//! Sweeps split across machines: one slice of the trials ([`Shard`]) written as a trial file,
//! and the merge of every slice's file into the sweep's result, identical bit for bit to the
//! unsharded run (each trial's output is written with Rust's shortest round-trip formatting,
//! which parses back to the same `f64`, and the averaging runs in job order).
//!
//! A trial file:
//! ```text
//! # amrx sweep trials, shard 2/8, sweep fingerprint 0f3a…
//! job,detector,input_db,trial,output_snr_db
//! 1,am,-12,1,-17.52094833
//! ```

use super::sweep::{assemble, Shard, SweepResult, SweepSpec};
use crate::{Error, Result};
use std::fmt::Write as _;
use std::path::Path;

const MAGIC: &str = "# amrx sweep trials, shard ";
const COLUMNS: &str = "job,detector,input_db,trial,output_snr_db";

/// One slice's trials as text: a comment naming the shard and the sweep's
/// [fingerprint](SweepSpec::fingerprint), the column header, one row per job.
pub fn trials_to_text(spec: &SweepSpec, shard: Shard, outputs: &[(usize, f64)]) -> String {
    let mut out = format!(
        "{MAGIC}{shard}, sweep fingerprint {:016x}\n{COLUMNS}\n",
        spec.fingerprint()
    );
    for &(job, value) in outputs {
        let (d, p, t) = spec.job(job);
        // Writing to a String cannot fail.
        let _ = writeln!(
            out,
            "{job},{},{},{t},{value}",
            spec.detectors[d].name(),
            spec.input_db[p]
        );
    }
    out
}

/// Writes [`trials_to_text`] to `path` (through a temporary file renamed on success).
pub fn write_trials(
    spec: &SweepSpec,
    shard: Shard,
    outputs: &[(usize, f64)],
    path: &Path,
) -> Result<()> {
    let temp = super::temp_path(path);
    std::fs::write(&temp, trials_to_text(spec, shard, outputs)).map_err(|e| Error::io(&temp, e))?;
    crate::io::output::put_in_place(&temp, path)
}

/// Merges trial files' texts (`(name, text)` pairs, any order) made by shards of `spec`: each
/// must carry `spec`'s fingerprint, every job must appear exactly once and name its detector
/// and point as `spec` does. Errors name the file and what is wrong.
pub fn merge_trial_texts(spec: &SweepSpec, files: &[(String, String)]) -> Result<SweepResult> {
    spec.validate()?;
    let total = spec.total_trials();
    let mut outputs: Vec<Option<f64>> = vec![None; total];
    let want = format!("{:016x}", spec.fingerprint());
    for (name, text) in files {
        let bad = |problem: String| Error::file(Path::new(name), problem);
        let mut lines = text.lines();
        let head = lines.next().unwrap_or("");
        let rest = head
            .strip_prefix(MAGIC)
            .ok_or_else(|| bad("not a trial file of `amrx sweep --shard`".into()))?;
        let print = rest
            .rsplit_once("fingerprint ")
            .map(|(_, f)| f.trim())
            .unwrap_or("");
        if print != want {
            return Err(bad(format!(
                "made by a different sweep (fingerprint {print}, this sweep's is {want}): \
                 merge with the same options the shards were run with"
            )));
        }
        if lines.next() != Some(COLUMNS) {
            return Err(bad(format!("the second line must be `{COLUMNS}`")));
        }
        for (i, line) in lines.enumerate() {
            if line.trim().is_empty() {
                continue;
            }
            let at = |what: &str| bad(format!("line {}: {what}", i + 3));
            let fields: Vec<&str> = line.split(',').collect();
            if fields.len() != 5 {
                return Err(at("needs 5 fields"));
            }
            let job: usize = fields[0].parse().map_err(|_| at("bad job number"))?;
            if job >= total {
                return Err(at("job number beyond the sweep"));
            }
            let (d, p, t) = spec.job(job);
            let same_point = fields[2].parse::<f64>().ok() == Some(spec.input_db[p]);
            if fields[1] != spec.detectors[d].name() || !same_point || fields[3] != t.to_string() {
                return Err(at("detector, point or trial does not match its job number"));
            }
            let value: f64 = fields[4].parse().map_err(|_| at("bad output_snr_db"))?;
            if outputs[job].replace(value).is_some() {
                return Err(at(&format!("job {job} appears twice")));
            }
        }
    }
    let missing = outputs.iter().filter(|v| v.is_none()).count();
    if missing > 0 {
        let first = outputs.iter().position(Option::is_none).unwrap_or(0);
        return Err(Error::parameter(
            "shards",
            format!("{} files", files.len()),
            format!(
                "{missing} of {total} trials missing (first: job {first}); is a shard missing?"
            ),
        ));
    }
    Ok(assemble(spec, outputs.into_iter().flatten().collect()))
}

/// Reads trial files and merges them ([`merge_trial_texts`]).
pub fn merge_trial_files<P: AsRef<Path>>(spec: &SweepSpec, paths: &[P]) -> Result<SweepResult> {
    let files = paths
        .iter()
        .map(|p| {
            let p = p.as_ref();
            std::fs::read_to_string(p)
                .map(|text| (p.display().to_string(), text))
                .map_err(|e| Error::io(p, e))
        })
        .collect::<Result<Vec<_>>>()?;
    merge_trial_texts(spec, &files)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::lab::{Axis, Detector};

    fn spec() -> SweepSpec {
        let mut s = SweepSpec::new(vec![Detector::diode()], Axis::Snr, vec![0.0, 10.0]);
        s.trials = 3;
        s
    }

    #[test]
    fn merge_checks_every_job_once() {
        let s = spec();
        let all: Vec<(usize, f64)> = (0..6).map(|j| (j, j as f64 * 0.1 + 1e-13)).collect();
        let shards = [Shard { index: 1, count: 2 }, Shard { index: 2, count: 2 }];
        let files: Vec<(String, String)> = shards
            .iter()
            .map(|sh| {
                let part: Vec<(usize, f64)> = all
                    .iter()
                    .copied()
                    .filter(|(j, _)| sh.contains(*j))
                    .collect();
                (sh.to_string(), trials_to_text(&s, *sh, &part))
            })
            .collect();
        let merged = merge_trial_texts(&s, &files).unwrap();
        let want: Vec<f64> = all.iter().map(|p| p.1).collect();
        assert_eq!(merged.trial_db, want, "values come back exactly");
        // One shard alone, a shard twice, or another sweep's file are refused.
        assert!(merge_trial_texts(&s, &files[..1]).is_err());
        let twice = [files[0].clone(), files[0].clone(), files[1].clone()];
        assert!(merge_trial_texts(&s, &twice).is_err());
        let mut other = s.clone();
        other.seed = 2;
        assert!(merge_trial_texts(&other, &files).is_err());
        assert!(merge_trial_texts(&s, &[("x".into(), "hello".into())]).is_err());
        assert!("0/3".parse::<Shard>().is_err());
        assert!("4/3".parse::<Shard>().is_err());
        assert_eq!(
            "2/3".parse::<Shard>().unwrap(),
            Shard { index: 2, count: 3 }
        );
    }
}

//! The sweep runner: detectors × input points × trials, every trial an independent rayon job,
//! results averaged per point.

use super::detector::Detector;
use super::theory::channel_snr_over_cnr_db;
#[cfg(feature = "lab")]
use super::theory::{db, from_db};
use super::trial::TrialSettings;
#[cfg(feature = "lab")]
use super::trial::{run_trial, trial_seed};
use crate::{Error, Result};
#[cfg(feature = "lab")]
use rayon::prelude::*;
#[cfg(feature = "lab")]
use std::sync::atomic::{AtomicUsize, Ordering};

/// What the input values of a sweep mean.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Axis {
    /// Channel (baseband) SNR, mean|s|²/(N0·W), in dB.
    #[default]
    Snr,
    /// Carrier-to-noise ratio ρ = A_c²/(N0·2W), in dB (full-carrier detectors only).
    Cnr,
}

impl Axis {
    /// `snr` or `cnr`.
    pub fn name(self) -> &'static str {
        match self {
            Axis::Snr => "snr",
            Axis::Cnr => "cnr",
        }
    }
}

impl std::str::FromStr for Axis {
    type Err = Error;
    fn from_str(s: &str) -> Result<Self> {
        match s.to_ascii_lowercase().as_str() {
            "snr" => Ok(Axis::Snr),
            "cnr" => Ok(Axis::Cnr),
            _ => Err(Error::parameter("axis", s, "must be snr or cnr")),
        }
    }
}

/// Everything a sweep needs.
#[derive(Debug, Clone, PartialEq)]
pub struct SweepSpec {
    /// Detectors to measure.
    pub detectors: Vec<Detector>,
    /// What `input_db` means.
    pub axis: Axis,
    /// Input points in dB (channel SNR or CNR, per `axis`).
    pub input_db: Vec<f64>,
    /// Trials per point.
    pub trials: usize,
    /// Signal and timing of each trial.
    pub trial: TrialSettings,
    /// Seed of all the noise.
    pub seed: u64,
}

impl SweepSpec {
    /// A sweep of `detectors` over `input_db` with 8 trials per point and default settings.
    pub fn new(detectors: Vec<Detector>, axis: Axis, input_db: Vec<f64>) -> Self {
        SweepSpec {
            detectors,
            axis,
            input_db,
            trials: 8,
            trial: TrialSettings::default(),
            seed: 1,
        }
    }

    /// Points from `start` to `stop` (inclusive, within rounding) in steps of `step` dB.
    pub fn range_db(start: f64, stop: f64, step: f64) -> Result<Vec<f64>> {
        let ok = start.is_finite() && stop.is_finite() && step.is_finite() && step > 0.0;
        if !ok || stop < start || (stop - start) / step > 10_000.0 {
            return Err(Error::parameter(
                "range_db",
                format!("{start}:{stop}:{step}"),
                "needs start ≤ stop and a positive step, at most 10 000 points",
            ));
        }
        let n = ((stop - start) / step + 1e-9).floor() as usize + 1;
        Ok((0..n).map(|i| start + i as f64 * step).collect())
    }

    /// The channel SNR of an input value.
    pub fn channel_snr_db(&self, input_db: f64) -> f64 {
        match self.axis {
            Axis::Snr => input_db,
            Axis::Cnr => input_db + channel_snr_over_cnr_db(self.trial.mu),
        }
    }

    /// Checks the spec and that every detector's receiver can be built.
    pub fn validate(&self) -> Result<()> {
        self.trial.validate()?;
        if self.detectors.is_empty() {
            return Err(Error::parameter("detectors", "none", "name at least one"));
        }
        if self.input_db.is_empty() || self.input_db.iter().any(|x| !x.is_finite()) {
            return Err(Error::parameter(
                "input_db",
                format!("{:?}", self.input_db),
                "needs at least one finite point",
            ));
        }
        if !(1..=100_000).contains(&self.trials) {
            return Err(Error::parameter(
                "trials",
                self.trials,
                "must be in 1..=100000",
            ));
        }
        for d in &self.detectors {
            if self.axis == Axis::Cnr && !d.has_carrier() {
                return Err(Error::parameter(
                    "axis",
                    "cnr",
                    format!("{d} has no carrier; use --axis snr"),
                ));
            }
            d.build(&self.trial.receiver_config())?;
        }
        Ok(())
    }

    /// Trials in the whole sweep.
    pub fn total_trials(&self) -> usize {
        self.detectors.len() * self.input_db.len() * self.trials
    }
}

/// How far a sweep has got.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Progress {
    /// Trials finished.
    pub done: usize,
    /// Trials in the sweep.
    pub total: usize,
}

/// One detector at one input point, averaged over its trials.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SweepPoint {
    /// The input value (channel SNR or CNR per the sweep's axis), dB.
    pub input_db: f64,
    /// Channel SNR, dB.
    pub channel_snr_db: f64,
    /// CNR, dB; `None` for suppressed-carrier signals.
    pub cnr_db: Option<f64>,
    /// The output SNR in dB of the mean over the trials of the linear output SNR.
    pub output_snr_db: f64,
    /// Standard error of `output_snr_db`: (10/ln 10)·(sample standard deviation of the linear
    /// ratios)/(√trials · mean); NaN for one trial.
    pub stderr_db: f64,
    /// The above-threshold theory: channel SNR + 10·log10(figure of merit).
    pub theory_db: f64,
    /// Trials averaged.
    pub trials: usize,
}

impl SweepPoint {
    /// Theory minus measurement, dB (positive when the detector does worse than theory).
    pub fn loss_db(&self) -> f64 {
        self.theory_db - self.output_snr_db
    }
}

/// One detector's measured curve, ordered by input.
#[derive(Debug, Clone, PartialEq)]
pub struct Curve {
    /// The detector.
    pub detector: Detector,
    /// Its points in the order of the sweep's `input_db`.
    pub points: Vec<SweepPoint>,
}

/// Where a curve departs from theory by a given loss, interpolated between points.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Threshold {
    /// The loss in dB.
    pub loss_db: f64,
    /// Channel SNR there, dB.
    pub channel_snr_db: f64,
    /// CNR there, dB (`None` without a carrier).
    pub cnr_db: Option<f64>,
}

impl Curve {
    /// Coming down from the highest input, the first place where the loss against theory
    /// reaches `loss_db`, linearly interpolated between the two points around it; `None` if
    /// it never does, or already does at the highest point.
    pub fn threshold(&self, loss_db: f64) -> Option<Threshold> {
        let mut points: Vec<&SweepPoint> = self.points.iter().collect();
        points.sort_by(|a, b| b.channel_snr_db.total_cmp(&a.channel_snr_db));
        let first = points.first()?;
        if first.loss_db() >= loss_db {
            return None;
        }
        let pair = points.windows(2).find(|w| w[1].loss_db() >= loss_db)?;
        let (hi, lo) = (pair[0], pair[1]);
        let t = (loss_db - hi.loss_db()) / (lo.loss_db() - hi.loss_db());
        let lerp = |a: f64, b: f64| a + t * (b - a);
        Some(Threshold {
            loss_db,
            channel_snr_db: lerp(hi.channel_snr_db, lo.channel_snr_db),
            cnr_db: hi.cnr_db.zip(lo.cnr_db).map(|(a, b)| lerp(a, b)),
        })
    }

    /// Least-squares slope of output SNR against channel SNR (dB per dB) over the points with
    /// channel SNR in [`from_db`, `to_db`]; `None` with fewer than two points.
    pub fn slope(&self, from_db: f64, to_db: f64) -> Option<f64> {
        let xy: Vec<(f64, f64)> = self
            .points
            .iter()
            .filter(|p| (from_db..=to_db).contains(&p.channel_snr_db))
            .map(|p| (p.channel_snr_db, p.output_snr_db))
            .collect();
        if xy.len() < 2 {
            return None;
        }
        let n = xy.len() as f64;
        let mx = xy.iter().map(|p| p.0).sum::<f64>() / n;
        let my = xy.iter().map(|p| p.1).sum::<f64>() / n;
        let sxy: f64 = xy.iter().map(|p| (p.0 - mx) * (p.1 - my)).sum();
        let sxx: f64 = xy.iter().map(|p| (p.0 - mx).powi(2)).sum();
        (sxx > 0.0).then(|| sxy / sxx)
    }

    /// True when every point in [from_db, to_db] reads at least `margin_db` above `floor_db`.
    pub fn clear_of(&self, floor_db: f64, margin_db: f64, from_db: f64, to_db: f64) -> bool {
        self.points
            .iter()
            .filter(|p| (from_db..=to_db).contains(&p.channel_snr_db))
            .all(|p| p.output_snr_db >= floor_db + margin_db)
    }

    /// The point nearest to `channel_snr_db`.
    pub fn at(&self, channel_snr_db: f64) -> Option<&SweepPoint> {
        self.points.iter().min_by(|a, b| {
            (a.channel_snr_db - channel_snr_db)
                .abs()
                .total_cmp(&(b.channel_snr_db - channel_snr_db).abs())
        })
    }
}

/// A finished sweep.
#[derive(Debug, Clone, PartialEq)]
pub struct SweepResult {
    /// What was run.
    pub spec: SweepSpec,
    /// One curve per detector, in the spec's order.
    pub curves: Vec<Curve>,
}

impl SweepResult {
    /// The lowest output SNR the tone method can read: the fitted tone picks up the noise that
    /// falls on it, P_n/(W·T), so readings near −10·log10(W·T) dB are floor, not signal.
    pub fn measurement_floor_db(&self) -> f64 {
        -10.0 * (self.spec.trial.bandwidth_hz * self.spec.trial.seconds).log10()
    }

    /// The first curve of `detector`.
    pub fn curve(&self, detector: &Detector) -> Option<&Curve> {
        self.curves.iter().find(|c| &c.detector == detector)
    }
}

/// Runs every trial of `spec` in parallel on rayon's global pool, calling `progress` after
/// each (from worker threads, so it must be `Sync`), and averages per point.
///
/// Per point the output SNR is the mean of the trials' linear output SNRs (shown in dB), with
/// its standard error. Every trial's noise is seeded by [`trial_seed`] from (seed, detector name, point
/// index, trial index), so the result does not depend on the number of threads or their
/// scheduling. Errors: an invalid spec, or a trial whose output SNR cannot be
/// measured.
///
/// ```no_run
/// use amrx::lab::{run_sweep, Axis, Detector, SweepSpec};
/// let spec = SweepSpec::new(vec![Detector::diode()], Axis::Snr, SweepSpec::range_db(0.0, 30.0, 5.0)?);
/// let result = run_sweep(&spec, |p| eprintln!("{}/{}", p.done, p.total))?;
/// # Ok::<(), amrx::Error>(())
/// ```
#[cfg(feature = "lab")]
pub fn run_sweep<F>(spec: &SweepSpec, progress: F) -> Result<SweepResult>
where
    F: Fn(Progress) + Sync,
{
    spec.validate()?;
    let total = spec.total_trials();
    let done = AtomicUsize::new(0);
    let jobs: Vec<(usize, usize, usize)> = (0..spec.detectors.len())
        .flat_map(|d| {
            (0..spec.input_db.len()).flat_map(move |p| (0..spec.trials).map(move |t| (d, p, t)))
        })
        .collect();
    let outputs: Vec<Result<f64>> = jobs
        .par_iter()
        .map(|&(d, p, t)| {
            let detector = &spec.detectors[d];
            let seed = trial_seed(spec.seed, &detector.name(), p, t);
            let snr = spec.channel_snr_db(spec.input_db[p]);
            let out = run_trial(detector, &spec.trial, snr, seed);
            let done = done.fetch_add(1, Ordering::Relaxed) + 1;
            progress(Progress { done, total });
            out
        })
        .collect();
    let outputs: Vec<f64> = outputs.into_iter().collect::<Result<_>>()?;
    let curves = spec
        .detectors
        .iter()
        .enumerate()
        .map(|(d, detector)| Curve {
            detector: *detector,
            points: (0..spec.input_db.len())
                .map(|p| {
                    let at = (d * spec.input_db.len() + p) * spec.trials;
                    point(spec, detector, p, &outputs[at..at + spec.trials])
                })
                .collect(),
        })
        .collect();
    Ok(SweepResult {
        spec: spec.clone(),
        curves,
    })
}

/// Averages one point's trials.
#[cfg(feature = "lab")]
fn point(spec: &SweepSpec, detector: &Detector, p: usize, trials: &[f64]) -> SweepPoint {
    // Mean of the linear power ratios; its standard error carried to dB by the delta method,
    // d(10·log10 r) = (10/ln 10)·dr/r.
    let ratios: Vec<f64> = trials.iter().map(|&x| from_db(x)).collect();
    let n = ratios.len() as f64;
    let mean = ratios.iter().sum::<f64>() / n;
    let var = ratios.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1.0);
    let snr = spec.channel_snr_db(spec.input_db[p]);
    let mu = spec.trial.mu;
    SweepPoint {
        input_db: spec.input_db[p],
        channel_snr_db: snr,
        cnr_db: detector
            .has_carrier()
            .then(|| snr - channel_snr_over_cnr_db(mu)),
        output_snr_db: db(mean),
        stderr_db: 10.0 / std::f64::consts::LN_10 * (var / n).sqrt() / mean,
        theory_db: snr + db(detector.figure_of_merit(mu)),
        trials: trials.len(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::demod::Mode;

    fn curve(losses: &[(f64, f64)]) -> Curve {
        Curve {
            detector: Detector::Receiver(Mode::Am),
            points: losses
                .iter()
                .map(|&(snr, loss)| SweepPoint {
                    input_db: snr,
                    channel_snr_db: snr,
                    cnr_db: Some(snr - 3.0),
                    output_snr_db: snr - 7.0 - loss,
                    stderr_db: 0.0,
                    theory_db: snr - 7.0,
                    trials: 1,
                })
                .collect(),
        }
    }

    #[test]
    fn threshold_interpolates_between_points() {
        let c = curve(&[(0.0, 4.0), (5.0, 2.0), (10.0, 0.5), (15.0, 0.0)]);
        // 1 dB lies a third of the way from 10 dB (0.5) to 5 dB (2.0).
        let t = c.threshold(1.0).unwrap();
        assert!((t.channel_snr_db - (10.0 - 5.0 / 3.0)).abs() < 1e-12);
        assert!((t.cnr_db.unwrap() - (7.0 - 5.0 / 3.0)).abs() < 1e-12);
        assert!((c.threshold(3.0).unwrap().channel_snr_db - 2.5).abs() < 1e-12);
        assert!(c.threshold(5.0).is_none());
    }

    #[test]
    fn slope_of_a_line() {
        let mut c = curve(&[(0.0, 0.0), (1.0, 0.0), (2.0, 0.0), (9.0, 0.0)]);
        for p in &mut c.points {
            p.output_snr_db = 2.0 * p.channel_snr_db - 3.0;
        }
        assert!((c.slope(0.0, 2.0).unwrap() - 2.0).abs() < 1e-12);
        assert!(c.slope(3.0, 4.0).is_none());
    }

    #[test]
    fn ranges_and_axes() {
        assert_eq!(
            SweepSpec::range_db(-2.0, 2.0, 2.0).unwrap(),
            vec![-2.0, 0.0, 2.0]
        );
        assert_eq!(SweepSpec::range_db(0.0, 0.9, 0.3).unwrap().len(), 4);
        assert!(SweepSpec::range_db(3.0, 0.0, 1.0).is_err());
        let mut spec = SweepSpec::new(vec![Detector::Receiver(Mode::Dsb)], Axis::Cnr, vec![0.0]);
        assert!(spec.validate().is_err());
        spec.axis = Axis::Snr;
        spec.detectors = vec![Detector::Receiver(Mode::Am)];
        assert!(spec.validate().is_ok());
        assert_eq!("CNR".parse::<Axis>().unwrap(), Axis::Cnr);
    }

    #[test]
    #[cfg(feature = "lab")]
    fn results_do_not_depend_on_the_thread_count() {
        let mut spec = SweepSpec::new(
            vec![Detector::Receiver(Mode::Am)],
            Axis::Snr,
            vec![0.0, 20.0],
        );
        spec.trials = 3;
        spec.trial.seconds = 0.1;
        spec.trial.settle_s = 0.1;
        let one = rayon::ThreadPoolBuilder::new()
            .num_threads(1)
            .build()
            .unwrap()
            .install(|| run_sweep(&spec, |_| {}).unwrap());
        let calls = AtomicUsize::new(0);
        let many = rayon::ThreadPoolBuilder::new()
            .num_threads(3)
            .build()
            .unwrap()
            .install(|| {
                run_sweep(&spec, |_| {
                    calls.fetch_add(1, Ordering::Relaxed);
                })
                .unwrap()
            });
        assert_eq!(one, many);
        assert_eq!(calls.load(Ordering::Relaxed), 6);
    }

    #[test]
    fn clear_of_the_floor_only_when_every_point_in_the_span_is() {
        let point = |snr: f64, out: f64| SweepPoint {
            input_db: snr,
            channel_snr_db: snr,
            cnr_db: None,
            output_snr_db: out,
            stderr_db: 0.0,
            theory_db: out,
            trials: 1,
        };
        let curve = Curve {
            detector: Detector::Receiver(crate::demod::Mode::Am),
            points: vec![point(-12.0, -30.0), point(-6.0, -18.0), point(0.0, -9.0)],
        };
        assert!(!curve.clear_of(-34.0, 10.0, -12.0, -6.0));
        assert!(curve.clear_of(-34.0, 10.0, -6.0, 0.0));
    }
}

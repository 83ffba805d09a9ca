//! The sweep runner: detectors × input points × trials, every trial an independent rayon job,
//! results averaged per point.

use super::detector::Detector;
use super::theory::channel_snr_over_cnr_db;
use super::theory::{db, from_db};
use super::trial::TrialSettings;
use super::trial::{run_trial_in_channel, trial_seed};
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
                    format!("{d} is not measured with full-carrier AM; use --axis snr"),
                ));
            }
            if *d == Detector::Receiver(crate::demod::Mode::Vsb)
                && self.trial.tone_hz <= crate::demod::vsb::DEFAULT_VESTIGE_HZ
            {
                return Err(Error::parameter(
                    "tone_hz",
                    self.trial.tone_hz,
                    format!(
                        "vsb is measured with its tone above the vestige ({} Hz)",
                        crate::demod::vsb::DEFAULT_VESTIGE_HZ
                    ),
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
    /// Every trial's output SNR in dB, in job order (detector, then point, then trial: see
    /// [`SweepSpec::job`]).
    pub trial_db: Vec<f64>,
}

/// The paired difference of two detectors at one point: the mean over the trials of
/// (b − a) in dB, trial by trial, with its 95 % confidence interval.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PairedDifference {
    /// The input value, dB.
    pub input_db: f64,
    /// Mean of the per-trial differences, dB.
    pub mean_db: f64,
    /// Half-width of the 95 % confidence interval of the mean (Student's t with n − 1 degrees
    /// of freedom times the standard error), dB; NaN for one trial.
    pub half_width_db: f64,
    /// Trials paired.
    pub trials: usize,
}

/// The 97.5 % quantile of Student's t with `dof` degrees of freedom (the two-sided 95 %
/// factor). Values from the standard table (any statistics text, e.g. Fisher and Yates'
/// tables; quoted from memory), the normal 1.960 beyond 120.
pub fn student_t_975(dof: usize) -> f64 {
    const TABLE: [f64; 30] = [
        12.706, 4.303, 3.182, 2.776, 2.571, 2.447, 2.365, 2.306, 2.262, 2.228, 2.201, 2.179, 2.160,
        2.145, 2.131, 2.120, 2.110, 2.101, 2.093, 2.086, 2.080, 2.074, 2.069, 2.064, 2.060, 2.056,
        2.052, 2.048, 2.045, 2.042,
    ];
    match dof {
        0 => f64::NAN,
        1..=30 => TABLE[dof - 1],
        31..=40 => 2.021,
        41..=60 => 2.000,
        61..=120 => 1.980,
        _ => 1.960,
    }
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

    /// The output SNRs (dB) of the trials of detector number `d` at point `p`.
    pub fn trials_at(&self, d: usize, p: usize) -> &[f64] {
        let n = self.spec.trials;
        let at = (d * self.spec.input_db.len() + p) * n;
        self.trial_db.get(at..at + n).unwrap_or(&[])
    }

    /// Per point, detector `b` minus detector `a` trial by trial (dB). Trial t of both had the
    /// same fading and impulses when both are fed the same test signal (the channel is seeded
    /// per point and trial, not per detector), so the difference is paired and the channel's
    /// own spread cancels. `None` if either detector is not in the sweep.
    pub fn paired_difference(&self, a: &Detector, b: &Detector) -> Option<Vec<PairedDifference>> {
        let ia = self.spec.detectors.iter().position(|d| d == a)?;
        let ib = self.spec.detectors.iter().position(|d| d == b)?;
        Some(
            (0..self.spec.input_db.len())
                .map(|p| {
                    let diffs: Vec<f64> = self
                        .trials_at(ib, p)
                        .iter()
                        .zip(self.trials_at(ia, p))
                        .map(|(y, x)| y - x)
                        .collect();
                    let n = diffs.len();
                    let mean = diffs.iter().sum::<f64>() / n as f64;
                    let var =
                        diffs.iter().map(|d| (d - mean).powi(2)).sum::<f64>() / (n as f64 - 1.0);
                    PairedDifference {
                        input_db: self.spec.input_db[p],
                        mean_db: mean,
                        half_width_db: student_t_975(n.saturating_sub(1)) * (var / n as f64).sqrt(),
                        trials: n,
                    }
                })
                .collect(),
        )
    }
}

/// Which slice of a sweep's trials to run: the `index`-th (1-based) of `count` disjoint
/// slices. Job j (see [`SweepSpec::job`]) belongs to slice (j mod count) + 1, so every
/// slice holds a share of every detector and point.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Shard {
    /// Which slice, 1 ..= `count`.
    pub index: usize,
    /// How many slices.
    pub count: usize,
}

impl Shard {
    /// The whole sweep: slice 1 of 1.
    pub const WHOLE: Shard = Shard { index: 1, count: 1 };

    /// True if job `job` is in this slice.
    pub fn contains(&self, job: usize) -> bool {
        job % self.count == self.index - 1
    }
}

impl std::str::FromStr for Shard {
    type Err = Error;

    /// `K/N` with 1 ≤ K ≤ N ≤ 1 000 000.
    fn from_str(s: &str) -> Result<Self> {
        let bad = || Error::parameter("shard", s, "must be K/N with 1 ≤ K ≤ N, e.g. 3/16");
        let (k, n) = s.trim().split_once('/').ok_or_else(bad)?;
        let index: usize = k.trim().parse().map_err(|_| bad())?;
        let count: usize = n.trim().parse().map_err(|_| bad())?;
        if index == 0 || index > count || count > 1_000_000 {
            return Err(bad());
        }
        Ok(Shard { index, count })
    }
}

impl std::fmt::Display for Shard {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}/{}", self.index, self.count)
    }
}

impl SweepSpec {
    /// (detector index, point index, trial index) of job `job`, the order of
    /// [`SweepResult::trial_db`].
    pub fn job(&self, job: usize) -> (usize, usize, usize) {
        let per_detector = self.input_db.len() * self.trials;
        (
            job / per_detector,
            (job / self.trials) % self.input_db.len(),
            job % self.trials,
        )
    }

    /// A fingerprint of everything that decides the trials' results (FNV-1a of the spec's
    /// debug text, which prints every number exactly): two runs with the same fingerprint ran
    /// the same trials.
    pub fn fingerprint(&self) -> u64 {
        format!("{self:?}")
            .bytes()
            .fold(0xcbf2_9ce4_8422_2325u64, |h, b| {
                (h ^ u64::from(b)).wrapping_mul(0x0100_0000_01b3)
            })
    }

    /// Runs job `job`: its noise from [`trial_seed`] over (seed, detector name, point,
    /// trial), its fading and impulses from (seed, `"channel"`, point, trial).
    pub fn run_job(&self, job: usize) -> Result<f64> {
        let (d, p, t) = self.job(job);
        let detector = &self.detectors[d];
        let noise_seed = trial_seed(self.seed, &detector.name(), p, t);
        let channel_seed = trial_seed(self.seed, "channel", p, t);
        let snr = self.channel_snr_db(self.input_db[p]);
        run_trial_in_channel(detector, &self.trial, snr, noise_seed, channel_seed)
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
    let outputs = run_shard(spec, Shard::WHOLE, progress)?;
    Ok(assemble(
        spec,
        outputs.into_iter().map(|(_, v)| v).collect(),
    ))
}

/// Runs the jobs of one slice of `spec` in parallel, returning (job, output SNR in dB) in
/// job order; `progress` counts the slice's trials. The same job gives the same number
/// whichever slice, thread or machine runs it.
#[cfg(feature = "lab")]
pub fn run_shard<F>(spec: &SweepSpec, shard: Shard, progress: F) -> Result<Vec<(usize, f64)>>
where
    F: Fn(Progress) + Sync,
{
    spec.validate()?;
    let jobs: Vec<usize> = (0..spec.total_trials())
        .filter(|&j| shard.contains(j))
        .collect();
    let total = jobs.len();
    let done = AtomicUsize::new(0);
    let outputs: Vec<Result<f64>> = jobs
        .par_iter()
        .map(|&job| {
            let out = spec.run_job(job);
            let done = done.fetch_add(1, Ordering::Relaxed) + 1;
            progress(Progress { done, total });
            out
        })
        .collect();
    jobs.into_iter()
        .zip(outputs)
        .map(|(j, out)| out.map(|v| (j, v)))
        .collect()
}

/// Averages every job's output (`outputs[j]` for job j, all of them) into the sweep's
/// curves: the same numbers in the same order give the same result bit for bit.
pub fn assemble(spec: &SweepSpec, outputs: Vec<f64>) -> SweepResult {
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
    SweepResult {
        spec: spec.clone(),
        curves,
        trial_db: outputs,
    }
}

/// Averages one point's trials.
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
        theory_db: snr + db(detector.figure_of_merit(mu, spec.trial.bandwidth_hz)),
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

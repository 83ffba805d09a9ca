//! Impulse blanking on complex baseband: the blanking nonlinearity (a sample whose magnitude
//! exceeds a threshold is set to zero) analysed by S. V. Zhidkov, "Analysis and comparison of
//! several simple impulsive noise mitigation schemes for OFDM receivers", IEEE Trans. Commun.
//! 56(1), 2008, §II-B, with the threshold set against a running estimate of the envelope level
//! and widened by a guard before and after each detection, as an IF noise blanker gates the
//! whole impulse (common practice, no source).
//!
//! A blanked sample is zero, or, when the blanker knows the frequency the receiver is tuned
//! to ([`ImpulseBlanker::holding_at`]), the last good sample carried on at that frequency: the
//! tuned station's carrier goes on through the hole instead of dropping out, which is what
//! zeroing costs an envelope detector (our choice, no source: a sample-and-hold after the
//! tuning mixer, done before it).
//!
//! The level is the running mean of log |x| (a geometric-mean magnitude) with each sample's
//! step clamped to ± the threshold (a Huber-type M-estimate: one sample of any size moves it
//! by at most α·ln K), so the impulses being blanked cannot raise the threshold that finds
//! them, and a lasting change of level is still followed. Exact zeros (digital silence) and
//! non-finite samples leave the level alone; non-finite samples are always blanked. The first
//! [`WARM_UP`] non-zero samples set the level by their plain mean (weights 1/n, no clamp, no
//! detection), so neither a quiet nor a huge first sample decides it; the weight then falls
//! to the time constant's.
//!
//! Block-wise (our arrangement, no source): after the warm-up the level moves once per block
//! of at most 256 samples (at most 1/16 of the level's time constant), by the one-pole
//! recurrence's exact response to the block's mean clamped step, and every sample of the block
//! is tested against the level at the block's start. The test is then a comparison of |x|²
//! with two powers fixed for the block, which vectorises; the block's sum of log2 |x|² is an
//! integer sum of the powers' exponent fields plus one logarithm of the product of their
//! mantissas. Samples outside the clamp (an impulse, a sample more than the threshold under
//! the level, a zero, a non-finite value) take a scalar path; they are rare for the overload
//! guard. Block boundaries are counted from the first input sample, so the output does not
//! depend on how the input is chunked.

use crate::block::Block;
use crate::{Complex32, Error, Result};

/// Non-zero finite samples averaged into the first level before detection starts (common
/// practice, no source: 32 Rayleigh log-powers give a mean within ±1 dB).
pub const WARM_UP: u64 = 32;

/// Lanes of the block sums: sample k of a block adds into lane k mod 8, whichever path
/// (vector or scalar) takes it, so both paths give the same sums bit for bit.
const LANES: usize = 8;

/// Longest block over which the level is held.
const MAX_BLOCK: usize = 256;

/// f32 exponent field of a positive value, and the bits that turn its mantissa into [1, 2).
const MANTISSA_MASK: u32 = 0x007F_FFFF;
const ONE_F32_BITS: u32 = 0x3F80_0000;
const F32_EXPONENT_BIAS: i64 = 127;

/// How an [`ImpulseBlanker`] detects and gates impulses.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BlankerSettings {
    /// A sample is an impulse when its magnitude exceeds the running level by this many dB.
    pub threshold_db: f64,
    /// Samples blanked ahead of the first detection (the output is delayed by as much), in s.
    pub pre_s: f64,
    /// Samples blanked after the last detection, in s.
    pub post_s: f64,
    /// Time constant of the running level, in s.
    pub level_s: f64,
    /// Magnitude at or below which a sample is never an impulse, however far it stands over
    /// the running level (0 for none).
    pub floor: f64,
}

impl BlankerSettings {
    /// The noise blanker: 12 dB over the level, nothing ahead, 5 µs behind (an impulse's
    /// ringing tail), 5 ms level (common practice, no source: an AM envelope peaks 4 dB over
    /// its mean at full modulation, Gaussian noise crosses 12 dB over its geometric-mean
    /// magnitude once in ~10⁴ samples). Every blanked µs costs the wanted carrier: 20 holes
    /// a second of d seconds leave an envelope error of 20·d²·2W against the carrier's power
    /// (a pulse much shorter than 1/W in a band W), so the guards are kept short.
    pub const NOISE_BLANKER: BlankerSettings = BlankerSettings {
        threshold_db: 12.0,
        pre_s: 0.0,
        post_s: 5e-6,
        level_s: 5e-3,
        floor: 0.0,
    };

    /// The overload guard: 60 dB over the level, no guard, 2 ms level (common practice, no
    /// source): nothing a receiver should hear stands 60 dB over the recording's level for one
    /// sample, and a single sample that does would hold the loops and AGC for seconds. Samples
    /// within full scale (|x| ≤ 1) are never an overload: a station that comes on after
    /// digital silence stands far above the level, legitimately.
    pub const OVERLOAD: BlankerSettings = BlankerSettings {
        threshold_db: 60.0,
        pre_s: 0.0,
        post_s: 0.0,
        level_s: 2e-3,
        floor: 1.0,
    };
}

/// What a blanker has done so far.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct BlankerCount {
    /// Input samples found over the threshold (or non-finite).
    pub detected: u64,
    /// Output samples set to zero (detections widened by the guards).
    pub blanked: u64,
    /// Largest detected magnitude over the running level, as a ratio (∞ for a non-finite
    /// sample).
    pub largest_ratio: f64,
}

/// The running sums of one block (see the module docs).
#[derive(Debug, Clone, Copy)]
struct BlockSums {
    /// Sums of the f32 exponent fields (biased) of the in-clamp powers, per lane.
    exponents: [i32; LANES],
    /// Products of their mantissas (each in [1, 2); at most 32 per lane, so below 2³²).
    mantissas: [f32; LANES],
    /// In-clamp samples.
    normal: u32,
    /// Clamped steps (log2 |x|² − level, clamped) of the other non-zero finite samples.
    special_sum: f64,
    special: u32,
}

impl BlockSums {
    const EMPTY: BlockSums = BlockSums {
        exponents: [0; LANES],
        mantissas: [1.0; LANES],
        normal: 0,
        special_sum: 0.0,
        special: 0,
    };

    /// Adds an in-clamp power (a positive normal f32) to `lane`.
    #[inline(always)]
    fn add(&mut self, lane: usize, p: f32) {
        let bits = p.to_bits();
        self.exponents[lane] += (bits >> 23) as i32;
        self.mantissas[lane] *= f32::from_bits((bits & MANTISSA_MASK) | ONE_F32_BITS);
        self.normal += 1;
    }
}

/// The bounds a block's samples are tested against, from the level at its start.
#[derive(Debug, Clone, Copy)]
struct Bounds {
    /// In-clamp powers are in [low, high] (f32; `low` at least the smallest normal f32).
    low: f32,
    high: f32,
    /// 2^(level + threshold): a sample over it (and over the floor) is an impulse.
    impulse_power: f64,
    /// 2^level, for the reported ratio.
    level_power: f64,
}

impl Bounds {
    /// Bounds that send every sample to the scalar path (before the warm-up ends).
    const NONE: Bounds = Bounds {
        low: f32::INFINITY,
        high: 0.0,
        impulse_power: 0.0,
        level_power: 1.0,
    };
}

/// Sets impulses to zero: complex samples in, the same samples out, delayed by the guard
/// ahead of a detection.
///
/// ```
/// use amrx::dsp::{BlankerSettings, ImpulseBlanker};
/// let nb = ImpulseBlanker::new(BlankerSettings::NOISE_BLANKER, 240_000.0).unwrap();
/// ```
#[derive(Debug, Clone)]
pub struct ImpulseBlanker {
    threshold_log2: f64,
    /// 2^−threshold and 2^threshold (power ratios), so a block's bounds need one `exp2`.
    threshold_ratios: (f64, f64),
    /// `floor` squared: powers at or below it are never impulses.
    floor_power: f64,
    alpha: f64,
    pre: usize,
    post: u64,
    /// Samples per block, a multiple of [`LANES`], and 1 − (1 − α)^block.
    block: u64,
    full_block_gain: f64,
    /// Delay line of `pre` samples (ring) and its write position.
    line: Vec<Complex32>,
    at: usize,
    /// Running mean of log2 |x|², `None` until the first non-zero finite sample.
    level: Option<f64>,
    /// Non-zero finite samples seen (for the warm-up and the weights after it).
    seen: u64,
    /// Whether the warm-up is over (the level then moves once per block).
    warm: bool,
    sums: BlockSums,
    bounds: Bounds,
    /// Input index of the next sample, and of the latest detection.
    position: u64,
    last_detection: Option<u64>,
    count: BlankerCount,
    /// Per-sample rotation at the tuned frequency, and the value a hole is filled with.
    hold_step: Option<(f64, f64)>,
    hold: (f64, f64),
}

impl ImpulseBlanker {
    /// A blanker for IQ at `sample_rate`; the guards round to whole samples.
    pub fn new(settings: BlankerSettings, sample_rate: f64) -> Result<Self> {
        if !(sample_rate.is_finite() && sample_rate > 0.0) {
            return Err(Error::parameter(
                "sample_rate",
                sample_rate,
                "must be positive and finite",
            ));
        }
        let t = settings.threshold_db;
        if !(t.is_finite() && t > 0.0 && t <= 200.0) {
            return Err(Error::parameter(
                "threshold_db",
                t,
                "must lie in (0, 200] dB",
            ));
        }
        for (name, v) in [("pre_s", settings.pre_s), ("post_s", settings.post_s)] {
            if !(v.is_finite() && (0.0..=0.1).contains(&v)) {
                return Err(Error::parameter(name, v, "must lie in [0, 0.1] s"));
            }
        }
        let level_samples = settings.level_s * sample_rate;
        if !(level_samples.is_finite() && level_samples >= 1.0) {
            return Err(Error::parameter(
                "level_s",
                settings.level_s,
                "must be at least one sample",
            ));
        }
        let pre = (settings.pre_s * sample_rate).round() as usize;
        let alpha = 1.0 / level_samples;
        let block = ((level_samples / 16.0).min(MAX_BLOCK as f64) as usize / LANES * LANES)
            .max(LANES) as u64;
        // |x|² over level² in log2: dB/10·log2(10).
        let threshold_log2 = t / 10.0 * std::f64::consts::LOG2_10;
        Ok(ImpulseBlanker {
            threshold_log2,
            threshold_ratios: ((-threshold_log2).exp2(), threshold_log2.exp2()),
            floor_power: settings.floor.max(0.0).powi(2),
            alpha,
            pre,
            post: (settings.post_s * sample_rate).round() as u64,
            block,
            full_block_gain: 1.0 - (1.0 - alpha).powi(block as i32),
            line: vec![Complex32::default(); pre],
            at: 0,
            level: None,
            seen: 0,
            warm: false,
            sums: BlockSums::EMPTY,
            bounds: Bounds::NONE,
            position: 0,
            last_detection: None,
            count: BlankerCount::default(),
            hold_step: None,
            hold: (0.0, 0.0),
        })
    }

    /// Fills holes with the last good sample rotating at `offset_hz` (the tuned frequency
    /// relative to the recording centre) instead of zeros.
    ///
    /// ```
    /// use amrx::dsp::{BlankerSettings, ImpulseBlanker};
    /// let nb = ImpulseBlanker::new(BlankerSettings::NOISE_BLANKER, 240_000.0)
    ///     .unwrap()
    ///     .holding_at(20_000.0, 240_000.0)
    ///     .unwrap();
    /// ```
    pub fn holding_at(mut self, offset_hz: f64, sample_rate: f64) -> Result<Self> {
        if !(offset_hz.is_finite() && sample_rate.is_finite() && sample_rate > 0.0) {
            return Err(Error::parameter(
                "offset_hz",
                offset_hz,
                "must be finite, at a positive finite rate",
            ));
        }
        let w = std::f64::consts::TAU * offset_hz / sample_rate;
        self.hold_step = Some((w.cos(), w.sin()));
        Ok(self)
    }

    /// What has been detected and blanked since construction or reset.
    pub fn count(&self) -> BlankerCount {
        self.count
    }

    /// The running level as an RMS-like magnitude (geometric mean of |x|), if any yet.
    pub fn level(&self) -> Option<f64> {
        self.level.map(|l| (l / 2.0).exp2())
    }

    /// The bounds for the block starting now, from the level.
    fn set_bounds(&mut self) {
        let Some(level) = self.level else {
            self.bounds = Bounds::NONE;
            return;
        };
        // 2^(level ± t) as 2^level·2^±t: one `exp2` per block instead of three (callgrind on
        // the am command: 56 k calls, 2.3 M instructions in 2 s); within an ulp or two of f64.
        let level_power = level.exp2();
        let (below, above) = self.threshold_ratios;
        let impulse_power = level_power * above;
        self.bounds = Bounds {
            low: ((level_power * below) as f32).max(f32::MIN_POSITIVE),
            high: impulse_power.min(f32::MAX as f64) as f32,
            impulse_power,
            level_power,
        };
    }

    /// Ends a block: moves the level by the block's mean clamped step, weighted as the
    /// one-pole recurrence would weigh that many equal steps (1/seen during the plain mean
    /// after the warm-up, then 1 − (1 − α)^n), and sets the next block's bounds.
    fn end_block(&mut self) {
        let s = self.sums;
        let n = s.normal + s.special;
        if let (Some(level), true) = (self.level, n > 0) {
            let exponents: i64 = s.exponents.iter().map(|&e| e as i64).sum();
            let mantissas: f64 = s.mantissas.iter().map(|&m| m as f64).product();
            let logs = (exponents - F32_EXPONENT_BIAS * s.normal as i64) as f64 + mantissas.log2();
            let steps = logs - s.normal as f64 * level + s.special_sum;
            let seen = self.seen + n as u64;
            let gain = if (seen as f64) * self.alpha < 1.0 {
                1.0 / seen as f64
            } else if n as u64 == self.block {
                self.full_block_gain / n as f64
            } else {
                (1.0 - (1.0 - self.alpha).powi(n as i32)) / n as f64
            };
            self.level = Some(level + gain * steps);
            self.seen = seen;
        }
        self.sums = BlockSums::EMPTY;
        self.set_bounds();
    }

    /// The power of `x`, or the verdict where no level reading applies: a non-finite sample
    /// is an impulse (its ratio to the level is unbounded), a zero one is not.
    fn screen(&mut self, x: Complex32) -> std::result::Result<f64, bool> {
        let power = power(x);
        if !power.is_finite() {
            self.count.largest_ratio = f64::INFINITY;
            return Err(true);
        }
        if power == 0.0 {
            return Err(false);
        }
        Ok(power)
    }

    /// A warm-up sample: whether it is an impulse (only a non-finite one is); moves the level.
    fn warm_up(&mut self, x: Complex32) -> bool {
        let power = match self.screen(x) {
            Ok(power) => power,
            Err(impulse) => return impulse,
        };
        self.seen += 1;
        let log = power.log2();
        let level = self.level.unwrap_or(log);
        self.level = Some(level + (log - level) / self.seen as f64);
        if self.seen >= WARM_UP {
            self.warm = true;
            self.set_bounds();
        }
        false
    }

    /// A sample after the warm-up, in `lane`: whether it is an impulse; adds it to the sums.
    #[inline(always)]
    fn classify(&mut self, x: Complex32, lane: usize) -> bool {
        let p = power_f32(x);
        if p >= self.bounds.low && p <= self.bounds.high {
            self.sums.add(lane, p);
            return false;
        }
        self.outside(x)
    }

    /// A sample outside the block's clamp (rare): zero, non-finite, far under the level, or
    /// over it.
    #[cold]
    fn outside(&mut self, x: Complex32) -> bool {
        let power = match self.screen(x) {
            Ok(power) => power,
            Err(impulse) => return impulse,
        };
        let level = self.level.unwrap_or(0.0);
        let t = self.threshold_log2;
        self.sums.special_sum += (power.log2() - level).clamp(-t, t);
        self.sums.special += 1;
        if power > self.bounds.impulse_power && power > self.floor_power {
            let ratio = (power / self.bounds.level_power).sqrt();
            if ratio > self.count.largest_ratio {
                self.count.largest_ratio = ratio;
            }
            return true;
        }
        false
    }
}

/// |x|² in f64: finite for every finite `f32` pair (at most 2·(3.4·10³⁸)² ≈ 2.3·10⁷⁷), and
/// for a non-zero pair always a normal number (at least (1.4·10⁻⁴⁵)² ≈ 2·10⁻⁹⁰).
#[inline(always)]
fn power(x: Complex32) -> f64 {
    let re = x.re as f64;
    let im = x.im as f64;
    re * re + im * im
}

/// |x|² in f32, as the vector path computes it (the in-clamp test screens overflow and
/// underflow: those go to the f64 path).
#[inline(always)]
fn power_f32(x: Complex32) -> f32 {
    x.re * x.re + x.im * x.im
}

/// Adds whole groups of [`LANES`] samples to `sums` (sample j of a group to lane j) while every
/// power of the group is within `[low, high]`, copying them to `ys`; returns the samples
/// taken. AVX2 intrinsics where the CPU has it ([`add_groups_avx2`]), the portable twin
/// otherwise; both do the same operations per lane, so the same sums.
fn add_groups(
    xs: &[Complex32],
    ys: &mut [Complex32],
    low: f32,
    high: f32,
    sums: &mut BlockSums,
) -> usize {
    #[cfg(target_arch = "x86_64")]
    if std::arch::is_x86_feature_detected!("avx2") {
        // SAFETY: the CPU has AVX2 (checked just above).
        return unsafe { add_groups_avx2(xs, ys, low, high, sums) };
    }
    add_groups_portable(xs, ys, low, high, sums)
}

/// The portable twin of [`add_groups_avx2`].
fn add_groups_portable(
    xs: &[Complex32],
    ys: &mut [Complex32],
    low: f32,
    high: f32,
    sums: &mut BlockSums,
) -> usize {
    let mut taken = 0;
    for (g, out) in xs.chunks_exact(LANES).zip(ys.chunks_exact_mut(LANES)) {
        let mut p = [0.0f32; LANES];
        for (p, &x) in p.iter_mut().zip(g) {
            *p = power_f32(x);
        }
        let mut inside = true;
        for &p in &p {
            inside &= (p >= low) & (p <= high);
        }
        if !inside {
            break;
        }
        out.copy_from_slice(g);
        for (j, &p) in p.iter().enumerate() {
            let bits = p.to_bits();
            sums.exponents[j] += (bits >> 23) as i32;
            sums.mantissas[j] *= f32::from_bits((bits & MANTISSA_MASK) | ONE_F32_BITS);
        }
        taken += LANES;
    }
    sums.normal += taken as u32;
    taken
}

/// Eight samples (two registers) per group: the squares of both, a horizontal add giving the
/// powers re² + im² (the portable sum, in lanes 0 1 4 5 2 3 6 7, put back in order by one
/// permute), two comparisons, and the exponent and mantissa sums kept in registers across
/// groups. Callgrind on the am command: the compiler-vectorised portable loop cost 4.3
/// instructions per sample (its powers needed shuffles per pair).
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
unsafe fn add_groups_avx2(
    xs: &[Complex32],
    ys: &mut [Complex32],
    low: f32,
    high: f32,
    sums: &mut BlockSums,
) -> usize {
    use std::arch::x86_64::*;
    let groups = xs.len().min(ys.len()) / LANES;
    let (x, y) = (xs.as_ptr().cast::<f32>(), ys.as_mut_ptr().cast::<f32>());
    let (low, high) = (_mm256_set1_ps(low), _mm256_set1_ps(high));
    let mantissa_mask = _mm256_set1_epi32(MANTISSA_MASK as i32);
    let one = _mm256_set1_epi32(ONE_F32_BITS as i32);
    // SAFETY: `sums` holds LANES i32s and LANES f32s.
    let (mut exponents, mut mantissas) = unsafe {
        (
            _mm256_loadu_si256(sums.exponents.as_ptr().cast()),
            _mm256_loadu_ps(sums.mantissas.as_ptr()),
        )
    };
    let mut g = 0;
    while g < groups {
        // SAFETY: g < groups, so the group's 16 f32s (at 16g) are inside both slices.
        let (a, b) = unsafe {
            (
                _mm256_loadu_ps(x.add(16 * g)),
                _mm256_loadu_ps(x.add(16 * g + 8)),
            )
        };
        let pairs = _mm256_hadd_ps(_mm256_mul_ps(a, a), _mm256_mul_ps(b, b));
        let p = _mm256_castpd_ps(_mm256_permute4x64_pd(
            _mm256_castps_pd(pairs),
            0b11_01_10_00,
        ));
        let inside = _mm256_and_ps(
            _mm256_cmp_ps(p, low, _CMP_GE_OQ),
            _mm256_cmp_ps(p, high, _CMP_LE_OQ),
        );
        if _mm256_movemask_ps(inside) != 0xFF {
            break;
        }
        // SAFETY: as for the loads.
        unsafe {
            _mm256_storeu_ps(y.add(16 * g), a);
            _mm256_storeu_ps(y.add(16 * g + 8), b);
        }
        let bits = _mm256_castps_si256(p);
        exponents = _mm256_add_epi32(exponents, _mm256_srli_epi32(bits, 23));
        let mantissa = _mm256_or_si256(_mm256_and_si256(bits, mantissa_mask), one);
        mantissas = _mm256_mul_ps(mantissas, _mm256_castsi256_ps(mantissa));
        g += 1;
    }
    // SAFETY: as for the loads of `sums`.
    unsafe {
        _mm256_storeu_si256(sums.exponents.as_mut_ptr().cast(), exponents);
        _mm256_storeu_ps(sums.mantissas.as_mut_ptr(), mantissas);
    }
    sums.normal += (g * LANES) as u32;
    g * LANES
}

impl ImpulseBlanker {
    /// Whether [`Self::steady_run`] may take the next samples: no delay line, warm-up over,
    /// and no hole open.
    #[inline(always)]
    fn steady(&self) -> bool {
        self.pre == 0
            && self.warm
            && self
                .last_detection
                .is_none_or(|j| j + self.post < self.position)
    }

    /// The common case of [`Self::next`]: in-clamp samples pass unchanged and are added to
    /// the block's sums, exactly as `next` would add them, up to the end of the block. Stops
    /// before the first other sample (or the group of [`LANES`] holding it) and returns how
    /// many it took; `next` takes the one after. Only called when [`Self::steady`].
    fn steady_run(&mut self, xs: &[Complex32], ys: &mut [Complex32]) -> usize {
        let to_end = (self.block - self.position % self.block) as usize;
        let m = xs.len().min(to_end);
        let (low, high) = (self.bounds.low, self.bounds.high);
        let lane0 = (self.position % LANES as u64) as usize;
        let mut k = 0;
        // Up to a lane-0 sample, one at a time.
        while k < m && (lane0 + k) % LANES != 0 {
            let p = power_f32(xs[k]);
            if !(p >= low && p <= high) {
                return self.took(xs, k);
            }
            self.sums.add(lane0 + k, p);
            ys[k] = xs[k];
            k += 1;
        }
        k += add_groups(&xs[k..m], &mut ys[k..m], low, high, &mut self.sums);
        while k < m {
            let p = power_f32(xs[k]);
            if !(p >= low && p <= high) {
                break;
            }
            self.sums.add((lane0 + k) % LANES, p);
            ys[k] = xs[k];
            k += 1;
        }
        self.took(xs, k)
    }

    /// Counts the `k` samples a steady run passed, and ends the block if they reach its end.
    #[inline(always)]
    fn took(&mut self, xs: &[Complex32], k: usize) -> usize {
        if k > 0 {
            self.position += k as u64;
            let last = xs[k - 1];
            self.hold = (last.re as f64, last.im as f64);
            if self.position % self.block == 0 {
                self.end_block();
            }
        }
        k
    }

    /// One sample through the blanker.
    #[inline(always)]
    fn next(&mut self, x: Complex32) -> Complex32 {
        let n = self.position;
        self.position += 1;
        let detected = if self.warm {
            self.classify(x, (n % LANES as u64) as usize)
        } else {
            self.warm_up(x)
        };
        if detected {
            self.count.detected += 1;
            self.last_detection = Some(n);
        }
        // The output is input n − pre: blanked when a detection j ∈ [k − post, k + pre] has
        // been seen; every such j ≤ n is known by now, so the latest one decides.
        let delayed = if self.pre == 0 {
            x
        } else {
            let y = self.line[self.at];
            self.line[self.at] = x;
            self.at = (self.at + 1) % self.pre;
            y
        };
        // Detection j blanks output k = n − pre when j + post ≥ k, i.e. j + post + pre ≥ n.
        let blank = match self.last_detection {
            Some(j) => j + self.post + self.pre as u64 >= n,
            None => false,
        };
        let y = if blank {
            self.count.blanked += 1;
            match self.hold_step {
                Some((c, s)) => {
                    let (re, im) = self.hold;
                    self.hold = (re * c - im * s, re * s + im * c);
                    Complex32::new(self.hold.0 as f32, self.hold.1 as f32)
                }
                None => Complex32::default(),
            }
        } else {
            self.hold = (delayed.re as f64, delayed.im as f64);
            delayed
        };
        if self.warm && self.position % self.block == 0 {
            self.end_block();
        }
        y
    }
}

/// A slice kernel rather than the one-sample `SampleBlock`: in-clamp runs go through
/// `ImpulseBlanker::steady_run` (callgrind on `amrx demod --mode am`, 2 s of cu8 at
/// 2.4 MS/s: 667 M instructions in the overload guard with the C library's `log2` per
/// sample and a per-sample level; see BENCHMARKS.md for after).
impl Block for ImpulseBlanker {
    type Input = Complex32;
    type Output = Complex32;

    fn process(&mut self, input: &[Complex32], output: &mut [Complex32]) -> (usize, usize) {
        let n = input.len().min(output.len());
        let (xs, ys) = (&input[..n], &mut output[..n]);
        let mut i = 0;
        while i < n {
            if self.steady() {
                let k = self.steady_run(&xs[i..], &mut ys[i..]);
                i += k;
                if k > 0 {
                    continue;
                }
            }
            ys[i] = self.next(xs[i]);
            i += 1;
        }
        (n, n)
    }

    fn max_output_len(&self, input_len: usize) -> usize {
        input_len
    }

    fn rate_ratio(&self) -> f64 {
        1.0
    }

    fn delay(&self) -> f64 {
        self.pre as f64
    }

    fn reset(&mut self) {
        self.line.fill(Complex32::default());
        self.at = 0;
        self.level = None;
        self.seen = 0;
        self.warm = false;
        self.sums = BlockSums::EMPTY;
        self.bounds = Bounds::NONE;
        self.position = 0;
        self.last_detection = None;
        self.count = BlankerCount::default();
        self.hold = (0.0, 0.0);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::check::{check_block, BlockCheck, DelayProbe};
    use crate::block::process_to_vec;
    use crate::dsp::test_util::complex_tone;
    use crate::dsp::ComplexNoise;

    const RATE: f64 = 240_000.0;

    fn noise(n: usize, seed: u64) -> Vec<Complex32> {
        let mut g = ComplexNoise::new(1.0, seed);
        (0..n).map(|_| g.sample()).collect()
    }

    /// The AVX2 group kernel against its portable twin: the same samples taken, the same
    /// copies and the same sums bit for bit, on in-clamp runs broken by a loud sample, a NaN
    /// and a zero at several places.
    #[test]
    fn group_kernel_equals_the_portable_twin() {
        let base = crate::dsp::test_util::random_complex(300, 41);
        for (at, bad) in [
            (299, Complex32::new(0.5, 0.5)),
            (77, Complex32::new(40.0, 0.0)),
            (130, Complex32::new(f32::NAN, 0.1)),
            (8, Complex32::new(0.0, 0.0)),
        ] {
            let mut xs = base.clone();
            xs[at] = bad;
            let start = BlockSums {
                exponents: [3; LANES],
                mantissas: [1.25; LANES],
                ..BlockSums::EMPTY
            };
            let (mut fast, mut plain) = (start, start);
            let (mut ys_fast, mut ys_plain) = (
                vec![Complex32::default(); 300],
                vec![Complex32::default(); 300],
            );
            let taken = add_groups(&xs, &mut ys_fast, 1e-4, 20.0, &mut fast);
            let want = add_groups_portable(&xs, &mut ys_plain, 1e-4, 20.0, &mut plain);
            assert_eq!(taken, want, "bad sample at {at}");
            assert_eq!(taken, if at == 299 { 296 } else { at / LANES * LANES });
            assert_eq!(ys_fast, ys_plain);
            assert_eq!(fast.exponents, plain.exponents);
            assert_eq!(fast.normal, plain.normal);
            for (f, p) in fast.mantissas.iter().zip(&plain.mantissas) {
                assert_eq!(f.to_bits(), p.to_bits());
            }
        }
    }

    #[test]
    fn meets_the_block_contract() {
        // Noise with impulses, so blanking happens inside the chunks the checker cuts; the
        // delay probe's two tones are constant-envelope and never blanked, so the blanker is a
        // pure delay of `pre` samples for them.
        let mut x = noise(20_000, 3);
        for k in (500..20_000).step_by(1_777) {
            x[k] *= 1e4;
        }
        let make = || ImpulseBlanker::new(BlankerSettings::NOISE_BLANKER, RATE).unwrap();
        let signal = |f: f64| complex_tone(20_000, f);
        check_block(&BlockCheck {
            delay_probe: Some(DelayProbe {
                signal: &signal,
                tones: [0.01, 0.015],
            }),
            ..BlockCheck::new(&make, &x)
        });
    }

    #[test]
    fn blanks_each_impulse_with_its_guards_and_nothing_else() {
        let mut nb = ImpulseBlanker::new(BlankerSettings::NOISE_BLANKER, RATE).unwrap();
        let pre = 0;
        let post = 1; // 5 µs at 240 kS/s
        let mut x = vec![Complex32::new(1.0, 0.0); 10_000];
        x[5_000] = Complex32::new(100.0, 0.0);
        let y = process_to_vec(&mut nb, &x);
        // Output k is input k − pre; input 5000 is blanked from 5000 − pre to 5000 + post.
        for (k, v) in y.iter().enumerate().skip(pre) {
            let input = k - pre;
            let blanked = (5_000 - pre..=5_000 + post).contains(&input);
            assert_eq!(v.norm() == 0.0, blanked, "sample {input}");
        }
        let c = nb.count();
        assert_eq!(c.detected, 1);
        assert_eq!(c.blanked, (pre + post + 1) as u64);
        assert!((c.largest_ratio - 100.0).abs() < 1.0, "{}", c.largest_ratio);
    }

    #[test]
    fn a_held_hole_carries_the_tuned_carrier_on() {
        let f = 20_000.0;
        let mut nb = ImpulseBlanker::new(BlankerSettings::NOISE_BLANKER, RATE)
            .unwrap()
            .holding_at(f, RATE)
            .unwrap();
        let mut x = complex_tone(4_000, f / RATE);
        for v in &mut x[2_000..2_010] {
            *v = Complex32::new(300.0, 0.0);
        }
        let y = process_to_vec(&mut nb, &x);
        let clean = complex_tone(4_000, f / RATE);
        // The hole is the tone itself, to f32 rounding of the rotation.
        for k in 2_000..2_011 {
            assert!(
                (y[k] - clean[k]).norm() < 1e-4,
                "{k}: {} vs {}",
                y[k],
                clean[k]
            );
        }
        assert_eq!(nb.count().blanked, 11);
    }

    #[test]
    fn gaussian_noise_is_blanked_as_rarely_as_its_tail_says() {
        // A complex Gaussian magnitude is Rayleigh: P(|x|² > t·E|x|²) = e^{−t} (Papoulis,
        // Probability, Random Variables and Stochastic Processes, Rayleigh density). The level
        // is the geometric mean: E ln|x|² = ln E|x|² − γ (Euler's γ), so the 12 dB threshold
        // sits at t = 10^1.2 · e^{−γ} = 8.91 and P = e^{−8.91} = 1.35e-4.
        let mut nb = ImpulseBlanker::new(BlankerSettings::NOISE_BLANKER, RATE).unwrap();
        let x = noise(2_000_000, 9);
        let _ = process_to_vec(&mut nb, &x);
        let p = nb.count().detected as f64 / x.len() as f64;
        let expected = (-(10f64.powf(1.2) * (-0.577_215_66f64).exp())).exp();
        // 2e6 samples give ~270 crossings: ±30 % covers the count's spread and the level's
        // wander (a 5 ms mean over 1200 samples).
        assert!((p / expected - 1.0).abs() < 0.3, "{p} vs {expected}");
    }

    #[test]
    fn huge_and_non_finite_samples_never_pass_and_barely_move_the_level() {
        let mut g = ImpulseBlanker::new(BlankerSettings::OVERLOAD, RATE).unwrap();
        let mut x = noise(5_000, 4);
        x[1_000] = Complex32::new(1e10, 0.0);
        for (i, v) in x[2_000..2_100].iter_mut().enumerate() {
            let s = if i % 2 == 0 { 3e38 } else { -3e38 };
            *v = Complex32::new(s, s);
        }
        x[3_000] = Complex32::new(f32::NAN, 0.0);
        x[3_001] = Complex32::new(f32::INFINITY, 1.0);
        let before = {
            let mut h = g.clone();
            let _ = process_to_vec(&mut h, &x[..999]);
            h.level().unwrap()
        };
        let y = process_to_vec(&mut g, &x);
        assert!(y.iter().all(|v| v.norm() < 10.0));
        assert_eq!(g.count().detected, 103);
        assert_eq!(g.count().blanked, 103);
        assert!(g.count().largest_ratio.is_infinite());
        let after = g.level().unwrap();
        assert!((after / before).log10().abs() < 0.3, "{before} → {after}");
    }

    #[test]
    fn neither_a_quiet_nor_a_huge_first_sample_sets_the_level() {
        for first in [1e-5f32, 1e6] {
            let mut g = ImpulseBlanker::new(BlankerSettings::OVERLOAD, RATE).unwrap();
            let mut x = noise(10_000, 4);
            x[0] = Complex32::new(first, 0.0);
            let _ = process_to_vec(&mut g, &x);
            assert_eq!(g.count().detected, 0, "first sample {first}");
            assert!((g.level().unwrap().log10()).abs() < 0.3);
        }
    }

    #[test]
    fn follows_a_lasting_step_up_in_level() {
        // A station 40 dB louder appears: detected at first, passed once the level follows.
        let mut nb = ImpulseBlanker::new(BlankerSettings::NOISE_BLANKER, RATE).unwrap();
        let mut x = noise(48_000, 5);
        for v in &mut x[12_000..] {
            *v *= 100.0;
        }
        let y = process_to_vec(&mut nb, &x);
        // ln(10⁴)/(α·ln(10^1.2)) ≈ 3.3 level time constants (≈ 16 ms, 4000 samples) to climb.
        let blanked_late = y[24_000..].iter().filter(|v| v.norm() == 0.0).count();
        assert!(blanked_late < 20, "{blanked_late}");
    }

    /// The per-sample form the block-wise level replaces: the level moved by every sample and
    /// each sample tested against the level just before it (the blanker before the block-wise
    /// rewrite). Returns the detected indices and the final level (log2 |x|²).
    fn per_sample_detections(s: BlankerSettings, x: &[Complex32]) -> (Vec<usize>, f64) {
        let t = s.threshold_db / 10.0 * std::f64::consts::LOG2_10;
        let alpha = 1.0 / (s.level_s * RATE);
        let (mut level, mut seen, mut found) = (0.0f64, 0u64, Vec::new());
        for (k, v) in x.iter().enumerate() {
            let p = power(*v);
            if !p.is_finite() {
                found.push(k);
                continue;
            }
            if p == 0.0 {
                continue;
            }
            seen += 1;
            let log = p.log2();
            if seen <= WARM_UP {
                level += (log - level) / seen as f64;
                continue;
            }
            let over = log - level;
            level += alpha.max(1.0 / seen as f64) * over.clamp(-t, t);
            if over > t && p > s.floor * s.floor {
                found.push(k);
            }
        }
        (found, level)
    }

    #[test]
    fn block_wise_level_detects_what_the_per_sample_level_detects() {
        // What changed numerically: the level moves once per block (≤ 256 samples, ≤ 1/16 of
        // its time constant) and a block's samples are tested against the level at its start,
        // instead of the level before each sample. Within a block the per-sample level moves
        // by at most block·α·threshold (1/16 of the 60 dB clamp only when
        // every sample is an impulse; ~0.1 dB for noise), so a detection can differ only for
        // a sample within that margin of the threshold. Impulses 80 dB up, zeros, non-finite
        // samples and a 40 dB step (followed within the same blocks) are all detected alike,
        // and the levels agree to 0.1 dB.
        let mut x = noise(200_000, 21);
        for v in &mut x[120_000..] {
            *v *= 100.0;
        }
        for k in (1_000..200_000).step_by(3_331) {
            x[k] *= 1e4;
        }
        for k in (2_000..200_000).step_by(17_017) {
            x[k] = Complex32::new(f32::NAN, 0.0);
            x[k + 5] = Complex32::default();
        }
        let s = BlankerSettings::OVERLOAD;
        let (expected, expected_level) = per_sample_detections(s, &x);
        let mut g = ImpulseBlanker::new(s, RATE).unwrap();
        let mut found = Vec::new();
        for (k, chunk) in x.chunks(777).enumerate() {
            // A blanked sample differs from its input (NaN differs from everything).
            let y = process_to_vec(&mut g, chunk);
            found.extend(
                (0..chunk.len())
                    .filter(|&i| y[i] != chunk[i])
                    .map(|i| k * 777 + i),
            );
        }
        assert_eq!(found, expected);
        assert_eq!(g.count().detected as usize, expected.len());
        let level_db =
            10.0 * (g.level().unwrap().log2() * 2.0 - expected_level).abs() * 2f64.log10();
        assert!(level_db < 0.1, "levels differ by {level_db} dB");

        // The noise blanker's 12 dB threshold sits in the Gaussian tail: detections near it
        // may move between neighbours, so compare the counts (±5 %; ~1000 detections).
        let s = BlankerSettings::NOISE_BLANKER;
        let x = noise(2_000_000, 22);
        let (expected, _) = per_sample_detections(s, &x);
        let mut nb = ImpulseBlanker::new(s, RATE).unwrap();
        let _ = process_to_vec(&mut nb, &x);
        let ratio = nb.count().detected as f64 / expected.len() as f64;
        assert!(
            (ratio - 1.0).abs() < 0.05,
            "{} vs {}",
            nb.count().detected,
            expected.len()
        );
    }

    #[test]
    fn rejects_bad_settings() {
        let s = BlankerSettings::NOISE_BLANKER;
        assert!(ImpulseBlanker::new(s, 0.0).is_err());
        assert!(ImpulseBlanker::new(s, f64::NAN).is_err());
        for bad in [
            BlankerSettings {
                threshold_db: 0.0,
                ..s
            },
            BlankerSettings {
                threshold_db: f64::NAN,
                ..s
            },
            BlankerSettings { pre_s: -1.0, ..s },
            BlankerSettings { post_s: 1.0, ..s },
            BlankerSettings { level_s: 0.0, ..s },
        ] {
            assert!(ImpulseBlanker::new(bad, RATE).is_err(), "{bad:?}");
        }
    }
}

//! Streaming statistics of a time series (one value per trajectory frame):
//! mean and variance, the standard error of the mean of a correlated series by
//! block averaging, the integrated autocorrelation time, and a first-half
//! versus second-half drift check.
//!
//! Every accumulator here has memory independent of the series length, so a
//! coupling can be followed along a trajectory of any size: [`RunningStats`]
//! is O(1), [`BlockAverager`] is O(log n) plus a fixed-size store (4096 values
//! by default).
//!
//! # Block averaging
//!
//! The blocking transformation of Flyvbjerg & Petersen (H. Flyvbjerg, H. G.
//! Petersen, J. Chem. Phys. 1989, 91, 461) replaces a series x₁…xₙ by the means
//! of consecutive pairs; after k steps the series holds nₖ = ⌊n/2ᵏ⌋ means of
//! blocks of 2ᵏ frames. At every level the estimate of the standard error of the
//! mean is
//!
//! σₖ = √(c₀ₖ / (nₖ − 1)),  with c₀ₖ = (1/nₖ) Σᵢ (xᵢ⁽ᵏ⁾ − x̄⁽ᵏ⁾)²,
//!
//! and its own standard error is σₖ / √(2(nₖ − 1)) (same paper). σₖ grows with
//! k while the blocks are shorter than the correlation time and stays flat
//! (within noise) once they are longer. The transformation is applied on the
//! fly: each level keeps running sums and one pending value waiting for its
//! partner; a value left pending at the end (an odd count) is not used at the
//! next level, as in the paper.
//!
//! **Choice of the level** — the automated test of M. Jonsson, "Standard error
//! estimation by an automated blocking method", Phys. Rev. E 2018, 98, 043304:
//! with γₖ the lag-1 autocovariance of the level-k series, the statistic
//! Mⱼ = Σ_{k≥j} nₖ (γₖ / c₀ₖ)² is, when the level-j block means are already
//! uncorrelated, asymptotically χ² with as many degrees of freedom as terms in
//! the sum. The chosen level is the first j with Mⱼ below the 99 % quantile of
//! that χ² distribution (the paper's significance level). Levels with fewer
//! than two blocks take no part. Our additions: the result counts as a
//! [`Plateau::Found`] only if the chosen level still has at least
//! [`MIN_BLOCKS`] = 16 blocks (then the error of the error is at most 18 %);
//! otherwise the series is too short for its correlation time, the reported
//! error is the largest σₖ among levels with at least 16 blocks (a lower bound
//! on the true error) and the status says so.
//!
//! **Integrated autocorrelation time** — with s² the sample variance of the
//! series and σ² the blocked variance of the mean, the statistical
//! inefficiency is g = σ² / (s²/n) = n σ² / s², and τ_int = g / 2 in frames,
//! with the convention τ_int = ½ + Σ_{t≥1} ρ(t) (so τ_int = ½ and g = 1 for an
//! uncorrelated series). The number of effectively independent frames is n/g.
//! For an AR(1) process with lag-1 correlation ρ, g → (1 + ρ)/(1 − ρ) for large
//! n (standard result; e.g. Box & Jenkins, *Time Series Analysis*).
//!
//! **Drift check** — the series is also stored decimated: at most
//! `store_capacity` block means of block size b, where b doubles (adjacent
//! stored means are averaged in pairs) whenever the store fills. These stored
//! means are exactly the level-log₂b series of the blocking transformation. At
//! the end they are split into a first and a second half, each half is block
//! averaged as above, and the halves are flagged as drifting when
//! |m₁ − m₂| > 2 √(e₁² + e₂²) ([`DRIFT_FACTOR`]; for a stationary Gaussian series
//! this fires about 5 % of the time — the two-sided 95 % level, common
//! practice). The halves cover the frames of the complete stored blocks (the
//! last < 2b frames can be left out; with the default store that is under
//! 0.1 % of the series).

use statrs::distribution::{ChiSquared, ContinuousCDF};

/// Minimum number of blocks at the chosen blocking level for the error
/// estimate to count as a plateau (relative error of the error ≤ 1/√30 ≈ 18 %).
pub const MIN_BLOCKS: u64 = 16;

/// Halves differing by more than this many combined standard errors are
/// flagged as drifting (two-sided ≈ 95 % for Gaussian errors; common practice).
pub const DRIFT_FACTOR: f64 = 2.0;

/// Significance level of Jonsson's test (Phys. Rev. E 2018, 98, 043304): the
/// chosen level is the first whose statistic lies below this χ² quantile.
pub const JONSSON_QUANTILE: f64 = 0.99;

/// Default number of block means kept for the drift check.
pub const DEFAULT_STORE_CAPACITY: usize = 4096;

/// Count, mean and variance of a stream of values in one pass, from sums of
/// the values shifted by the first one ("assumed mean"): S₁ = Σ(xᵢ − K),
/// S₂ = Σ(xᵢ − K)², mean = K + S₁/n, (n − 1)s² = S₂ − S₁²/n. With K a value of
/// the series the cancellation in S₂ − S₁²/n is that of the spread of the data
/// about K, not about 0 (Chan, Golub & LeVeque, Am. Stat. 1983, 37, 242, who
/// analyse the shifted algorithm); unlike Welford's update it needs no
/// division per value, which matters in the per-frame loop of a trajectory.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct RunningStats {
    /// Count, shift and S₁.
    sum: RunningMean,
    s2: f64,
    min: f64,
    max: f64,
}

impl RunningStats {
    /// An empty accumulator.
    pub fn new() -> Self {
        Self::default()
    }

    /// Adds one value. Non-finite values are the caller's to reject; they are
    /// ignored here so that no NaN can reach a result.
    #[inline]
    pub fn push(&mut self, x: f64) {
        if !x.is_finite() {
            return;
        }
        if self.sum.n == 0 {
            self.min = x;
            self.max = x;
        } else {
            self.min = self.min.min(x);
            self.max = self.max.max(x);
        }
        let d = self.sum.add(x);
        self.s2 += d * d;
    }

    /// Σ(xᵢ − x̄)² of the values so far (0 when empty).
    fn m2(&self) -> f64 {
        let RunningMean { n, s1, .. } = self.sum;
        if n == 0 {
            return 0.0;
        }
        (self.s2 - s1 * s1 / n as f64).max(0.0)
    }

    /// Merges another accumulator into this one (Chan, Golub & LeVeque's
    /// pairwise update, Am. Stat. 1983, 37, 242), keeping this one's shift.
    pub fn merge(&mut self, other: &RunningStats) {
        if other.sum.n == 0 {
            return;
        }
        if self.sum.n == 0 {
            *self = *other;
            return;
        }
        let (na, nb) = (self.sum.n as f64, other.sum.n as f64);
        let (ma, mb) = (self.sum.s1 / na, other.sum.s1 / nb);
        // Both means relative to this shift; d is their difference.
        let mb_here = mb + (other.sum.shift - self.sum.shift);
        let d = mb_here - ma;
        let n = na + nb;
        let mean = ma + d * nb / n;
        let m2 = self.m2() + other.m2() + d * d * na * nb / n;
        self.sum.n += other.sum.n;
        self.sum.s1 = n * mean;
        self.s2 = m2 + n * mean * mean;
        self.min = self.min.min(other.min);
        self.max = self.max.max(other.max);
    }

    /// Number of values accumulated.
    pub fn count(&self) -> u64 {
        self.sum.count()
    }

    /// Mean, or `None` when empty.
    pub fn mean(&self) -> Option<f64> {
        self.sum.mean()
    }

    /// Sample variance s² (divisor n − 1), or `None` with fewer than 2 values.
    pub fn variance(&self) -> Option<f64> {
        let n = self.sum.n;
        (n > 1).then(|| self.m2() / (n - 1) as f64)
    }

    /// Sample standard deviation s, or `None` with fewer than 2 values.
    pub fn std_dev(&self) -> Option<f64> {
        self.variance().map(f64::sqrt)
    }

    /// Standard error of the mean assuming independent values, s/√n; `None`
    /// with fewer than 2 values. For a correlated series use [`BlockAverager`].
    pub fn naive_sem(&self) -> Option<f64> {
        self.variance().map(|v| (v / self.sum.n as f64).sqrt())
    }

    /// Smallest value, or `None` when empty.
    pub fn min(&self) -> Option<f64> {
        (self.sum.n > 0).then_some(self.min)
    }

    /// Largest value, or `None` when empty.
    pub fn max(&self) -> Option<f64> {
        (self.sum.n > 0).then_some(self.max)
    }
}

/// Running mean of a series by the shifted sum S₁ of [`RunningStats`] (which
/// keeps one inside), without its spread and range, for the many small
/// averages of a trajectory (the mean coupling within each conformational
/// state); the mean has the same bits as that of a [`RunningStats`] fed the
/// same values.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct RunningMean {
    n: u64,
    shift: f64,
    s1: f64,
}

impl RunningMean {
    /// An empty accumulator.
    pub fn new() -> Self {
        Self::default()
    }

    /// Adds one value; non-finite values are left out.
    #[inline]
    pub fn push(&mut self, x: f64) {
        if x.is_finite() {
            self.add(x);
        }
    }

    /// Adds the finite value `x`; returns it shifted (x − K), for the sums
    /// [`RunningStats`] keeps beside these.
    #[inline(always)]
    fn add(&mut self, x: f64) -> f64 {
        if self.n == 0 {
            self.shift = x;
        }
        self.n += 1;
        let d = x - self.shift;
        self.s1 += d;
        d
    }

    /// Number of values accumulated.
    pub fn count(&self) -> u64 {
        self.n
    }

    /// Mean, or `None` when empty.
    pub fn mean(&self) -> Option<f64> {
        (self.n > 0).then(|| self.shift + self.s1 / self.n as f64)
    }
}

/// Running sums of one blocking level (values shifted by the first datum).
#[derive(Debug, Clone, Default)]
struct Level {
    n: u64,
    s1: f64,
    s2: f64,
    /// Σ xᵢ xᵢ₊₁ over consecutive values of this level.
    sp: f64,
    first: f64,
    last: f64,
    pending: Option<f64>,
}

impl Level {
    #[inline]
    fn add(&mut self, v: f64) {
        if self.n == 0 {
            self.first = v;
        } else {
            self.sp += self.last * v;
        }
        self.last = v;
        self.n += 1;
        self.s1 += v;
        self.s2 += v * v;
    }

    /// (mean, c0, lag-1 autocovariance γ), all of the shifted values.
    fn moments(&self) -> (f64, f64, f64) {
        let n = self.n as f64;
        let m = self.s1 / n;
        let c0 = (self.s2 / n - m * m).max(0.0);
        let gamma = if self.n > 1 {
            (self.sp - m * (self.s1 - self.last) - m * (self.s1 - self.first) + (n - 1.0) * m * m)
                / n
        } else {
            0.0
        };
        (m, c0, gamma)
    }
}

/// Streaming block averager (Flyvbjerg & Petersen, J. Chem. Phys. 1989, 91,
/// 461) with Jonsson's automated choice of block size (Phys. Rev. E 2018, 98,
/// 043304) and a first-half/second-half drift check; see the module docs.
#[derive(Debug, Clone)]
pub struct BlockAverager {
    shift: Option<f64>,
    levels: Vec<Level>,
    /// Range of the values (the other plain statistics are level 0's sums).
    min: f64,
    max: f64,
    skipped: u64,
    store: Vec<f64>,
    store_capacity: usize,
    store_block: u64,
    partial_sum: f64,
    partial_n: u64,
}

impl Default for BlockAverager {
    fn default() -> Self {
        Self::new()
    }
}

impl BlockAverager {
    /// An empty accumulator with the default store of
    /// [`DEFAULT_STORE_CAPACITY`] block means.
    pub fn new() -> Self {
        Self::with_store_capacity(DEFAULT_STORE_CAPACITY)
    }

    /// An empty accumulator keeping at most `capacity` block means for the
    /// drift check (rounded up to an even number, at least 64).
    pub fn with_store_capacity(capacity: usize) -> Self {
        let cap = capacity.max(64).div_ceil(2) * 2;
        BlockAverager {
            shift: None,
            levels: Vec::new(),
            min: f64::INFINITY,
            max: f64::NEG_INFINITY,
            skipped: 0,
            store: Vec::with_capacity(cap),
            store_capacity: cap,
            store_block: 1,
            partial_sum: 0.0,
            partial_n: 0,
        }
    }

    /// Adds the value of the next frame. Non-finite values are not accumulated;
    /// they are counted in [`skipped`](Self::skipped) for the caller to report.
    #[inline]
    pub fn push(&mut self, x: f64) {
        if !x.is_finite() {
            self.skipped += 1;
            return;
        }
        let y = self.add_to_levels(x);
        self.partial_sum += y;
        self.partial_n += 1;
        if self.partial_n == self.store_block {
            self.store.push(self.partial_sum / self.store_block as f64);
            self.partial_sum = 0.0;
            self.partial_n = 0;
            if self.store.len() == self.store_capacity {
                let half = self.store_capacity / 2;
                for i in 0..half {
                    self.store[i] = 0.5 * (self.store[2 * i] + self.store[2 * i + 1]);
                }
                self.store.truncate(half);
                self.store_block *= 2;
            }
        }
    }

    /// Adds the finite value `x` to the range and the blocking levels;
    /// returns it shifted by the first value.
    #[inline(always)]
    fn add_to_levels(&mut self, x: f64) -> f64 {
        // x is finite here, so plain comparisons give min and max.
        if x < self.min {
            self.min = x;
        }
        if x > self.max {
            self.max = x;
        }
        let shift = *self.shift.get_or_insert(x);
        let y = x - shift;
        if self.levels.is_empty() {
            self.levels.push(Level::default());
        }
        // Level 0 takes every value; every second one carries a pair mean up.
        let l0 = &mut self.levels[0];
        l0.add(y);
        match l0.pending.take() {
            None => l0.pending = Some(y),
            Some(p) => self.carry(0.5 * (p + y)),
        }
        y
    }

    /// Adds the pair mean `v` to level 1 and carries on up the levels.
    #[inline]
    fn carry(&mut self, mut v: f64) {
        let mut k = 1;
        loop {
            if k == self.levels.len() {
                self.levels.push(Level::default());
            }
            let level = &mut self.levels[k];
            level.add(v);
            match level.pending.take() {
                None => {
                    level.pending = Some(v);
                    return;
                }
                Some(p) => {
                    v = 0.5 * (p + v);
                    k += 1;
                }
            }
        }
    }

    /// Number of finite values accumulated.
    pub fn count(&self) -> u64 {
        self.levels.first().map_or(0, |l| l.n)
    }

    /// Number of non-finite values that were passed and left out.
    pub fn skipped(&self) -> u64 {
        self.skipped
    }

    /// Plain statistics of the series (mean, sample variance, min, max).
    pub fn stats(&self) -> RunningStats {
        // Level 0 holds every value, shifted by the first as RunningStats
        // shifts them, so its sums are those RunningStats would hold.
        match (self.levels.first(), self.shift) {
            (Some(l), Some(shift)) if l.n > 0 => RunningStats {
                sum: RunningMean {
                    n: l.n,
                    shift,
                    s1: l.s1,
                },
                s2: l.s2,
                min: self.min,
                max: self.max,
            },
            _ => RunningStats::new(),
        }
    }

    /// The blocking analysis of the series so far.
    pub fn analyze(&self) -> BlockingAnalysis {
        analyze_levels(&self.levels, &self.stats())
    }

    /// The drift check: first half against second half of the series, each
    /// with its own blocked error. `None` when fewer than 2·[`MIN_BLOCKS`]
    /// block means are stored (series shorter than 32 frames).
    pub fn halves(&self) -> Option<HalvesCheck> {
        let m = self.store.len() / 2;
        if (m as u64) < MIN_BLOCKS {
            return None;
        }
        let shift = self.shift.unwrap_or(0.0);
        let half = |vals: &[f64]| {
            let mut b = BlockAverager::with_store_capacity(64);
            for &v in vals {
                b.push_level_only(v);
            }
            b.analyze()
        };
        let first = half(&self.store[..m]);
        let second = half(&self.store[m..2 * m]);
        let difference = second.mean - first.mean;
        let difference_error = first.sem.hypot(second.sem);
        let drifted = difference.abs() > DRIFT_FACTOR * difference_error;
        Some(HalvesCheck {
            frames_per_half: m as u64 * self.store_block,
            first_mean: first.mean + shift,
            first_sem: first.sem,
            first_plateau: first.plateau,
            second_mean: second.mean + shift,
            second_sem: second.sem,
            second_plateau: second.plateau,
            difference,
            difference_error,
            drifted,
        })
    }

    /// Like [`push`](Self::push) but without the drift store (for the
    /// halves, whose values are finite block means).
    fn push_level_only(&mut self, x: f64) {
        self.add_to_levels(x);
    }
}

/// Whether the blocked error reached a plateau.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Plateau {
    /// Jonsson's test passed at a level with at least [`MIN_BLOCKS`] blocks.
    Found,
    /// The series is too short for its correlation time: the test never passed
    /// with enough blocks left. The error reported is a lower bound.
    NotReached,
    /// Fewer than [`MIN_BLOCKS`] values: no error estimate (reported as 0).
    TooShort,
}

/// The estimate at one blocking level.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct BlockLevel {
    /// Block size 2ᵏ in frames.
    pub block_size: u64,
    /// Number of complete blocks nₖ.
    pub blocks: u64,
    /// σₖ = √(c₀ₖ/(nₖ − 1)), the standard error of the mean at this level (unit
    /// of the series).
    pub sem: f64,
    /// σₖ / √(2(nₖ − 1)), the standard error of σₖ.
    pub sem_error: f64,
    /// Lag-1 autocorrelation of the block means, γₖ/c₀ₖ (0 when c₀ₖ = 0).
    pub lag1_correlation: f64,
}

/// Result of a blocking analysis (see the module docs for every definition).
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct BlockingAnalysis {
    /// Number of values.
    pub count: u64,
    /// Mean of the series.
    pub mean: f64,
    /// Sample standard deviation s of the series (divisor n − 1).
    pub std_dev: f64,
    /// s/√n, the error of the mean were the values independent.
    pub naive_sem: f64,
    /// Every level with at least two blocks, finest first.
    pub levels: Vec<BlockLevel>,
    /// Index into `levels` of the level reported (0 when `levels` is empty).
    pub chosen_level: usize,
    /// Blocked standard error of the mean (unit of the series).
    pub sem: f64,
    /// Standard error of `sem`.
    pub sem_error: f64,
    /// Whether `sem` is a plateau value.
    pub plateau: Plateau,
    /// Statistical inefficiency g = n σ²/s² (1 for an uncorrelated series;
    /// set to 1 when s = 0).
    pub statistical_inefficiency: f64,
    /// Integrated autocorrelation time τ_int = g/2 in frames (convention
    /// τ_int = ½ + Σ_{t≥1} ρ(t)).
    pub tau_int_frames: f64,
    /// Effective number of independent frames, n/g.
    pub effective_samples: f64,
}

/// Degrees of freedom whose χ² quantile is cached (a series of 2⁶⁴ values
/// has at most 64 levels).
const CACHED_DOF: usize = 64;

/// The [`JONSSON_QUANTILE`] quantile of χ² with `dof` degrees of freedom,
/// from a table computed once (the inverse CDF is iterative and the analysis
/// may run at hundreds of checkpoints along a trajectory).
fn chi2_quantile(dof: usize) -> Option<f64> {
    static TABLE: std::sync::OnceLock<Vec<Option<f64>>> = std::sync::OnceLock::new();
    let q = |k: usize| {
        ChiSquared::new(k as f64)
            .ok()
            .map(|chi| chi.inverse_cdf(JONSSON_QUANTILE))
    };
    if dof == 0 {
        return None;
    }
    if dof > CACHED_DOF {
        return q(dof);
    }
    let table = TABLE.get_or_init(|| {
        (0..=CACHED_DOF)
            .map(|k| if k == 0 { None } else { q(k) })
            .collect()
    });
    table.get(dof).copied().flatten()
}

fn analyze_levels(levels: &[Level], stats: &RunningStats) -> BlockingAnalysis {
    let count = stats.count();
    let mean = stats.mean().unwrap_or(0.0);
    let std_dev = stats.std_dev().unwrap_or(0.0);
    let naive_sem = stats.naive_sem().unwrap_or(0.0);
    let mut out = Vec::with_capacity(levels.len());
    let mut ratios = Vec::with_capacity(levels.len());
    for (k, lv) in levels.iter().enumerate() {
        if lv.n < 2 {
            break;
        }
        let (_, c0, gamma) = lv.moments();
        let nm1 = (lv.n - 1) as f64;
        let sem = (c0 / nm1).sqrt();
        let rho = if c0 > 0.0 { gamma / c0 } else { 0.0 };
        out.push(BlockLevel {
            block_size: 1u64 << k,
            blocks: lv.n,
            sem,
            sem_error: sem / (2.0 * nm1).sqrt(),
            lag1_correlation: rho,
        });
        ratios.push(lv.n as f64 * rho * rho);
    }

    let (chosen, plateau) = if count < MIN_BLOCKS || out.is_empty() {
        (0, Plateau::TooShort)
    } else {
        // Jonsson's M_j: suffix sums of n_k (γ_k/c0_k)².
        let d = ratios.len();
        let mut m = vec![0.0; d];
        let mut acc = 0.0;
        for j in (0..d).rev() {
            acc += ratios[j];
            m[j] = acc;
        }
        let found = (0..d).find(|&j| {
            let dof = d - j;
            chi2_quantile(dof).is_some_and(|q| m[j] < q)
        });
        match found {
            Some(j) if out[j].blocks >= MIN_BLOCKS => (j, Plateau::Found),
            _ => {
                // Largest σ_k among levels with enough blocks: a lower bound.
                let best = out
                    .iter()
                    .enumerate()
                    .filter(|(_, l)| l.blocks >= MIN_BLOCKS)
                    .max_by(|a, b| a.1.sem.total_cmp(&b.1.sem))
                    .map(|(i, _)| i)
                    .unwrap_or(0);
                (best, Plateau::NotReached)
            }
        }
    };
    let (sem, sem_error) = match (plateau, out.get(chosen)) {
        (Plateau::TooShort, _) | (_, None) => (0.0, 0.0),
        (_, Some(l)) => (l.sem, l.sem_error),
    };
    let g = if naive_sem > 0.0 && plateau != Plateau::TooShort {
        (sem / naive_sem).powi(2)
    } else {
        1.0
    };
    BlockingAnalysis {
        count,
        mean,
        std_dev,
        naive_sem,
        levels: out,
        chosen_level: chosen,
        sem,
        sem_error,
        plateau,
        statistical_inefficiency: g,
        tau_int_frames: 0.5 * g,
        effective_samples: if g > 0.0 { count as f64 / g } else { 0.0 },
    }
}

/// First half against second half of a series (see the module docs).
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct HalvesCheck {
    /// Frames in each half.
    pub frames_per_half: u64,
    /// Mean of the first half.
    pub first_mean: f64,
    /// Blocked standard error of the first half's mean.
    pub first_sem: f64,
    /// Plateau status of the first half's error.
    pub first_plateau: Plateau,
    /// Mean of the second half.
    pub second_mean: f64,
    /// Blocked standard error of the second half's mean.
    pub second_sem: f64,
    /// Plateau status of the second half's error.
    pub second_plateau: Plateau,
    /// Second mean minus first mean.
    pub difference: f64,
    /// √(e₁² + e₂²), the standard error of `difference`.
    pub difference_error: f64,
    /// True when |difference| > [`DRIFT_FACTOR`] · `difference_error`.
    pub drifted: bool,
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn running_mean_has_the_bits_of_running_stats() {
        let (mut m, mut r) = (RunningMean::new(), RunningStats::new());
        assert_eq!(m.mean(), None);
        for k in 0..1000 {
            let x = 7.3 + (k as f64 * 0.37).sin() * 1e-3 + if k == 500 { f64::NAN } else { 0.0 };
            m.push(x);
            r.push(x);
        }
        assert_eq!(m.count(), r.count());
        assert_eq!(m.mean().map(f64::to_bits), r.mean().map(f64::to_bits));
    }

    /// SplitMix64 (S. Vigna's public-domain generator), private to the tests.
    struct SplitMix64(u64);

    impl SplitMix64 {
        fn next_u64(&mut self) -> u64 {
            self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
            let mut z = self.0;
            z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
            z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
            z ^ (z >> 31)
        }
        /// Uniform in (0, 1].
        fn uniform(&mut self) -> f64 {
            ((self.next_u64() >> 11) + 1) as f64 / (1u64 << 53) as f64
        }
        /// Standard normal by the Box–Muller transform (one of the pair).
        fn normal(&mut self) -> f64 {
            let u1 = self.uniform();
            let u2 = self.uniform();
            (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()
        }
    }

    /// Stationary AR(1) with unit innovations: x_t = ρ x_{t−1} + ε_t.
    fn ar1(rho: f64, n: usize, seed: u64, mut f: impl FnMut(f64)) {
        let mut rng = SplitMix64(seed);
        let gamma0 = 1.0 / (1.0 - rho * rho);
        let mut x = rng.normal() * gamma0.sqrt();
        for _ in 0..n {
            f(x);
            x = rho * x + rng.normal();
        }
    }

    /// Exact variance of the mean of n values of a stationary AR(1):
    /// (γ₀/n)[1 + 2 Σ_{t=1}^{n−1} (1 − t/n) ρ^t] (standard result, e.g. Box &
    /// Jenkins, Time Series Analysis).
    fn ar1_var_mean(rho: f64, n: usize) -> f64 {
        let gamma0 = 1.0 / (1.0 - rho * rho);
        let nf = n as f64;
        let mut s = 0.0;
        let mut p = 1.0;
        for t in 1..n {
            p *= rho;
            s += (1.0 - t as f64 / nf) * p;
            if p < 1e-300 {
                break;
            }
        }
        gamma0 / nf * (1.0 + 2.0 * s)
    }

    #[test]
    fn running_stats_matches_two_pass() {
        let xs = [1.0, 2.5, -3.0, 4.25, 10.0, 0.5];
        let mut r = RunningStats::new();
        xs.iter().for_each(|&x| r.push(x));
        let m = xs.iter().sum::<f64>() / 6.0;
        let v = xs.iter().map(|x| (x - m).powi(2)).sum::<f64>() / 5.0;
        assert!((r.mean().unwrap() - m).abs() < 1e-12);
        assert!((r.variance().unwrap() - v).abs() < 1e-12);
        assert_eq!(r.min(), Some(-3.0));
        assert_eq!(r.max(), Some(10.0));
        let (mut a, mut b) = (RunningStats::new(), RunningStats::new());
        xs[..2].iter().for_each(|&x| a.push(x));
        xs[2..].iter().for_each(|&x| b.push(x));
        a.merge(&b);
        assert!((a.variance().unwrap() - v).abs() < 1e-12);
        assert_eq!(a.count(), 6);
        r.push(f64::NAN);
        assert_eq!(r.count(), 6);
        // A large common offset: the shifted sums keep the spread.
        let big: Vec<f64> = xs.iter().map(|x| x + 1e9).collect();
        let mut r = RunningStats::new();
        big.iter().for_each(|&x| r.push(x));
        assert!((r.variance().unwrap() - v).abs() < 1e-6 * v);
        assert!((r.mean().unwrap() - (m + 1e9)).abs() < 1e-6);
        // Merging accumulators with different shifts, and into an empty one.
        let (mut a, mut b) = (RunningStats::new(), RunningStats::new());
        big[..4].iter().for_each(|&x| a.push(x));
        xs[4..].iter().for_each(|&x| b.push(x + 1e9));
        let mut e = RunningStats::new();
        e.merge(&a);
        e.merge(&b);
        assert!((e.variance().unwrap() - v).abs() < 1e-6 * v);
        assert_eq!((e.min(), e.max()), (Some(-3.0 + 1e9), Some(10.0 + 1e9)));
    }

    #[test]
    fn levels_match_direct_blocking() {
        // Level sums must equal an explicit blocking transformation.
        let mut xs = Vec::new();
        ar1(0.7, 1000, 7, |x| xs.push(x + 100.0));
        let mut b = BlockAverager::new();
        xs.iter().for_each(|&x| b.push(x));
        let a = b.analyze();
        let mut cur = xs.clone();
        for lv in &a.levels {
            assert_eq!(lv.blocks as usize, cur.len());
            let n = cur.len() as f64;
            let m = cur.iter().sum::<f64>() / n;
            let c0 = cur.iter().map(|x| (x - m).powi(2)).sum::<f64>() / n;
            let g = cur.windows(2).map(|w| (w[0] - m) * (w[1] - m)).sum::<f64>() / n;
            assert!((lv.sem - (c0 / (n - 1.0)).sqrt()).abs() < 1e-9 * lv.sem.max(1e-12));
            assert!((lv.lag1_correlation - g / c0).abs() < 1e-8);
            cur = cur.chunks_exact(2).map(|p| 0.5 * (p[0] + p[1])).collect();
        }
        assert!((a.mean - xs.iter().sum::<f64>() / 1000.0).abs() < 1e-9);
    }

    #[test]
    fn store_decimation_keeps_block_means() {
        let mut b = BlockAverager::with_store_capacity(64);
        for i in 0..1000 {
            b.push(i as f64);
        }
        // 1000 values: blocks of 16 once 64·8 = 512 values filled the store.
        assert_eq!(b.store_block, 16);
        assert_eq!(b.store.len(), 62);
        for (j, &m) in b.store.iter().enumerate() {
            assert_eq!(m, 16.0 * j as f64 + 7.5);
        }
    }

    #[test]
    fn short_and_constant_series_give_no_nan() {
        let mut b = BlockAverager::new();
        for _ in 0..10 {
            b.push(3.0);
        }
        let a = b.analyze();
        assert_eq!(a.plateau, Plateau::TooShort);
        assert_eq!(a.sem, 0.0);
        assert!(b.halves().is_none());
        for _ in 0..1000 {
            b.push(3.0);
        }
        let a = b.analyze();
        assert_eq!(a.sem, 0.0);
        assert_eq!(a.statistical_inefficiency, 1.0);
        let h = b.halves().unwrap();
        assert!(!h.drifted);
        assert_eq!(a.mean, 3.0);
        let empty = BlockAverager::new().analyze();
        assert_eq!(empty.count, 0);
        assert_eq!(empty.mean, 0.0);
    }

    /// The AR(1) benchmark: over 200 seeds the blocked error matches the exact
    /// finite-n standard error of the mean, the true mean (0) lies within one
    /// estimated error about 68 % of the time, and g matches (1+ρ)/(1−ρ).
    #[test]
    fn ar1_blocked_error_matches_closed_form() {
        let n = 1usize << 16;
        for &rho in &[0.0, 0.5, 0.9] {
            let exact = ar1_var_mean(rho, n).sqrt();
            let g_exact = ar1_var_mean(rho, n) * n as f64 * (1.0 - rho * rho);
            let seeds = 200;
            let (mut ratio, mut ratio2, mut covered, mut g_sum, mut found) = (0.0, 0.0, 0, 0.0, 0);
            for seed in 0..seeds {
                let mut b = BlockAverager::new();
                ar1(rho, n, 1000 + seed, |x| b.push(x));
                let a = b.analyze();
                let r = a.sem / exact;
                ratio += r;
                ratio2 += r * r;
                if a.mean.abs() <= a.sem {
                    covered += 1;
                }
                g_sum += a.statistical_inefficiency;
                if a.plateau == Plateau::Found {
                    found += 1;
                }
            }
            let s = seeds as f64;
            let (mean_ratio, rms_ratio) = (ratio / s, (ratio2 / s).sqrt());
            let coverage = covered as f64 / s;
            let g_mean = g_sum / s;
            eprintln!(
                "AR(1) rho={rho}: exact sem={exact:.5}, mean ratio={mean_ratio:.3}, \
                 rms ratio={rms_ratio:.3}, coverage={coverage:.3}, g={g_mean:.3} \
                 (exact {g_exact:.3}), plateau found {found}/{seeds}"
            );
            assert!((mean_ratio - 1.0).abs() < 0.10, "mean ratio {mean_ratio}");
            assert!((rms_ratio - 1.0).abs() < 0.10, "rms ratio {rms_ratio}");
            assert!((0.58..=0.78).contains(&coverage), "coverage {coverage}");
            assert!(
                (g_mean / g_exact - 1.0).abs() < 0.15,
                "g {g_mean} vs {g_exact}"
            );
            assert!(found >= 190, "plateau found only {found} times");
        }
    }

    #[test]
    fn ar1_too_short_is_flagged() {
        // ρ = 0.999 (τ ≈ 1000 frames) over 2000 frames: no plateau possible.
        let mut b = BlockAverager::new();
        ar1(0.999, 2000, 3, |x| b.push(x));
        assert_eq!(b.analyze().plateau, Plateau::NotReached);
    }

    #[test]
    fn halves_flag_a_jump_and_pass_stationary_series() {
        let n = 20_000;
        let mut jump = BlockAverager::new();
        let mut i = 0;
        ar1(0.5, n, 11, |x| {
            jump.push(x + if i >= n / 2 { 1.0 } else { 0.0 });
            i += 1;
        });
        let h = jump.halves().unwrap();
        assert!(h.drifted, "{h:?}");
        assert!((h.difference - 1.0).abs() < 0.1, "{h:?}");
        assert_eq!(h.frames_per_half, 10_000);

        // Stationary: flagged in about 5 % of seeds.
        let mut flagged = 0;
        for seed in 0..200 {
            let mut b = BlockAverager::new();
            ar1(0.5, n, 500 + seed, |x| b.push(x));
            if b.halves().unwrap().drifted {
                flagged += 1;
            }
        }
        eprintln!("stationary AR(1) rho=0.5 flagged as drifting: {flagged}/200");
        assert!(flagged <= 24, "{flagged} of 200 stationary series flagged");
    }

    #[test]
    fn memory_is_bounded() {
        let mut b = BlockAverager::with_store_capacity(128);
        for i in 0..1_000_000u64 {
            b.push((i % 17) as f64);
        }
        assert!(b.store.len() <= 128);
        assert!(b.levels.len() <= 21);
        assert_eq!(b.count(), 1_000_000);
    }
}

//! Ergodicity from an ensemble: do the time averages of several records of one process agree
//! with each other, and so with the ensemble average, within their sampling spread?
//!
//! # Method
//! K records (realisations) are read in lockstep, sample index by sample index, and each is cut
//! into the same M to 2M − 1 segments as a single record ([`super::segments`]). For each
//! quantity — the mean x, the mean square x², and the lagged product x(t−τ)x(t) at the chosen
//! lags — every segment of every record gives one value (a batch mean), so record i has a time
//! average (the mean of its n segment values) and the ensemble average is the mean over records.
//!
//! For a stationary process, segments much longer than the correlation time give nearly
//! independent, nearly normal batch means, whose spread estimates the variance of a time average:
//! var(x̄_i) ≈ s_i²/n, the batch-means estimate of G(0)/(2T) (Bendat & Piersol 2010, chapter 4
//! and §8.2: the variance of a mean value estimate from a one-sided density G at 0 Hz and record
//! length T; from memory). If the process is ergodic, the K time averages estimate one number,
//! and the one-way analysis of variance of the K groups of batch means,
//! F = [n Σ_i (x̄_i − x̄)²/(K − 1)] / [Σ_i Σ_j (x_ij − x̄_i)²/(K(n − 1))],
//! follows Snedecor's F distribution with (K − 1, K(n − 1)) degrees of freedom. The quantity is
//! called *ergodic* at α when F ≤ F_{1−α}. A rejection says the records' time averages differ by
//! more than sampling explains — each record tends to its own value, so time averages do not
//! stand for the ensemble (e.g. each record a random constant plus stationary noise).
//! Agreement is consistent with ergodicity; it cannot prove it from K records.
//!
//! Ensemble averages across records at each time t — the mean m(t), the mean square q(t) and the
//! variance across records s²(t) (1/(K − 1)) — are summarised over the same segments: the
//! ensemble's own behaviour in time, beside the records' time averages.
//!
//! # References
//! - J. S. Bendat, A. G. Piersol, *Random Data*, 4th ed., Wiley 2010, chapter 1 (ensemble and
//!   time averages, ergodicity) and chapter 4.
//! - G. W. Snedecor, W. G. Cochran, *Statistical Methods*, 8th ed., Iowa State 1989, chapter 12
//!   (one-way analysis of variance; from memory).
//! - A. M. Law, W. D. Kelton, *Simulation Modeling and Analysis*, 3rd ed., McGraw-Hill 2000,
//!   §9.5.3 (batch means; section number from memory).

use serde::{Deserialize, Serialize};
use statrs::distribution::{ContinuousCDF, FisherSnedecor};

use super::segments::{SegmentAccumulator, SegmentPlan, SegmentSummary};

/// Samples per internal step of the across-record statistics.
const STEP_LEN: usize = 4096;

/// One-way analysis of variance of K groups of equal size.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Anova {
    /// F = between-group mean square / within-group mean square.
    pub f_statistic: f64,
    /// K − 1.
    pub dof_between: f64,
    /// K(n − 1).
    pub dof_within: f64,
    /// F_{1−α}: the groups are called equal when F ≤ this.
    pub f_critical: f64,
    /// P[F' > F] under equal means (Snedecor's F).
    pub p_value: f64,
}

/// The analysis of variance of `groups` (each of the same length n ≥ 2, K ≥ 2 groups) at
/// significance `alpha`; `None` otherwise.
///
/// ```
/// use noisesonde::stationarity::ensemble::one_way_anova;
/// // Group means 2 and 5, within-group deviations ±1 (by hand): SSB = 3·(1.5² + 1.5²) = 13.5,
/// // SSW = 2 + 2 = 4 (each group 1, 2, 3 / 4, 5, 6 about its mean), F = 13.5/1 / (4/4) = 13.5.
/// let a = one_way_anova(&[vec![1.0, 2.0, 3.0], vec![4.0, 5.0, 6.0]], 0.05).unwrap();
/// assert!((a.f_statistic - 13.5).abs() < 1e-12);
/// assert_eq!((a.dof_between, a.dof_within), (1.0, 4.0));
/// ```
pub fn one_way_anova(groups: &[Vec<f64>], alpha: f64) -> Option<Anova> {
    let k = groups.len();
    let n = groups.first()?.len();
    if k < 2 || n < 2 || groups.iter().any(|g| g.len() != n) {
        return None;
    }
    let means: Vec<f64> = groups
        .iter()
        .map(|g| g.iter().sum::<f64>() / n as f64)
        .collect();
    let grand = means.iter().sum::<f64>() / k as f64;
    let between: f64 = n as f64 * means.iter().map(|m| (m - grand).powi(2)).sum::<f64>();
    let within: f64 = groups
        .iter()
        .zip(&means)
        .map(|(g, m)| g.iter().map(|x| (x - m).powi(2)).sum::<f64>())
        .sum();
    let dof_between = (k - 1) as f64;
    let dof_within = (k * (n - 1)) as f64;
    let f_statistic = if within > 0.0 {
        (between / dof_between) / (within / dof_within)
    } else if between > 0.0 {
        f64::MAX
    } else {
        0.0
    };
    let f_statistic = if f_statistic.is_finite() {
        f_statistic
    } else {
        f64::MAX
    };
    let dist = FisherSnedecor::new(dof_between, dof_within).ok()?;
    Some(Anova {
        f_statistic,
        dof_between,
        dof_within,
        f_critical: dist.inverse_cdf(1.0 - alpha),
        p_value: dist.sf(f_statistic).clamp(0.0, 1.0),
    })
}

/// One quantity's time averages across the records.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ErgodicityLine {
    /// The time averages agree within their sampling spread at α (F ≤ F_{1−α}).
    pub ergodic: bool,
    /// Each record's time average (the mean of its segment values).
    pub time_averages: Vec<f64>,
    /// Each time average's standard error from its segments' spread, √(s²/n).
    pub standard_errors: Vec<f64>,
    /// The ensemble average: the mean of the time averages (over records and time).
    pub ensemble_average: f64,
    /// The analysis of variance behind `ergodic`.
    pub anova: Anova,
    /// What was found, in one sentence.
    pub finding: String,
}

/// The lagged product x(t−τ)x(t) at one lag.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LagErgodicity {
    /// τ in samples.
    pub lag_len: usize,
    /// τ in seconds.
    pub lag_s: f64,
    /// The time averages R_i(τ) (no mean removed), their spread and the test.
    #[serde(flatten)]
    pub line: ErgodicityLine,
}

/// Ensemble statistics across records at each time, averaged over each segment.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct OverTime {
    /// Start of each segment, s.
    pub start_s: Vec<f64>,
    /// Mean over the segment of the ensemble mean m(t).
    pub mean: Vec<f64>,
    /// Mean over the segment of the ensemble mean square q(t).
    pub mean_square: Vec<f64>,
    /// Mean over the segment of the variance across records s²(t) (1/(K − 1)).
    pub variance_across: Vec<f64>,
}

/// The streaming part: K aligned records → segment sums of each and of the across-record
/// statistics.
#[derive(Debug, Clone)]
pub struct EnsembleAccumulator {
    records: Vec<SegmentAccumulator>,
    /// m(t), q(t), s²(t).
    across: [SegmentAccumulator; 3],
    scratch: [Vec<f64>; 3],
}

impl EnsembleAccumulator {
    /// An accumulator for `records` (≥ 1) records cut by `plan`.
    pub fn new(records: usize, plan: SegmentPlan) -> Self {
        let across_plan = SegmentPlan {
            max_lag_len: 0,
            ..plan
        };
        Self {
            records: vec![SegmentAccumulator::new(plan); records.max(1)],
            across: std::array::from_fn(|_| SegmentAccumulator::new(across_plan)),
            scratch: std::array::from_fn(|_| vec![0.0; STEP_LEN]),
        }
    }

    /// Adds one block per record, all of the same length (the shortest length is used if they
    /// differ; the pipeline checks) and finite. Allocates nothing.
    pub fn push(&mut self, blocks: &[&[f64]]) {
        let len = blocks.iter().map(|b| b.len()).min().unwrap_or(0);
        let k = blocks.len().min(self.records.len());
        if len == 0 || k == 0 {
            return;
        }
        for (acc, block) in self.records.iter_mut().zip(blocks) {
            acc.push(&block[..len]);
        }
        let kf = k as f64;
        let mut start = 0;
        while start < len {
            let end = (start + STEP_LEN).min(len);
            let [m, q, s2] = &mut self.scratch;
            for t in start..end {
                let i = t - start;
                let mean = blocks[..k].iter().map(|b| b[t]).sum::<f64>() / kf;
                let square = blocks[..k].iter().map(|b| b[t] * b[t]).sum::<f64>() / kf;
                let spread = if k > 1 {
                    blocks[..k]
                        .iter()
                        .map(|b| (b[t] - mean).powi(2))
                        .sum::<f64>()
                        / (kf - 1.0)
                } else {
                    0.0
                };
                m[i] = mean;
                q[i] = square;
                s2[i] = spread;
            }
            let n = end - start;
            for (acc, values) in self.across.iter_mut().zip(&self.scratch) {
                acc.push(&values[..n]);
            }
            start = end;
        }
    }

    /// The segment sums of each record and of m(t), q(t), s²(t); `None` before the first
    /// complete segment.
    pub fn finish(&self) -> Option<(Vec<SegmentSummary>, [SegmentSummary; 3])> {
        let records = self
            .records
            .iter()
            .map(SegmentAccumulator::finish)
            .collect::<Option<Vec<_>>>()?;
        let [m, q, s] = &self.across;
        Some((records, [m.finish()?, q.finish()?, s.finish()?]))
    }
}

/// What the ensemble shows.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct EnsembleFindings {
    /// α of each test.
    pub alpha: f64,
    /// Segments per record (the batch means of each group).
    pub segments: usize,
    /// Samples per segment.
    pub segment_len: u64,
    /// The mean: ergodic in the mean when the records' time averages agree.
    pub mean: ErgodicityLine,
    /// The mean square.
    pub mean_square: ErgodicityLine,
    /// R(τ) at the chosen lags.
    pub autocorrelation: Vec<LagErgodicity>,
    /// The ensemble statistics across records over time.
    pub over_time: OverTime,
    /// Time average of the variance across records, s²(t).
    pub variance_across_records: f64,
    /// Mean over records of each record's own variance in time (about its own mean). Close to
    /// `variance_across_records` for an ergodic ensemble; smaller when each record keeps its
    /// own level.
    pub variance_within_records: f64,
    /// The verdict in one sentence.
    pub verdict: String,
}

fn line(groups: &[Vec<f64>], alpha: f64, what: &str) -> Option<ErgodicityLine> {
    let anova = one_way_anova(groups, alpha)?;
    let n = groups[0].len() as f64;
    let time_averages: Vec<f64> = groups.iter().map(|g| g.iter().sum::<f64>() / n).collect();
    let standard_errors = groups
        .iter()
        .zip(&time_averages)
        .map(|(g, m)| (g.iter().map(|x| (x - m).powi(2)).sum::<f64>() / (n - 1.0) / n).sqrt())
        .collect();
    let ensemble_average = time_averages.iter().sum::<f64>() / time_averages.len() as f64;
    let ergodic = anova.f_statistic <= anova.f_critical;
    let finding = if ergodic {
        format!(
            "the records' time averages of {what} agree within their sampling spread (F = {:.3} ≤ {:.3}, p = {:.3})",
            anova.f_statistic, anova.f_critical, anova.p_value
        )
    } else {
        format!(
            "the records' time averages of {what} differ by more than their sampling spread (F = {:.3} > {:.3}, p = {:.2e}): each record keeps its own value, so one record's time average does not stand for the ensemble",
            anova.f_statistic, anova.f_critical, anova.p_value
        )
    };
    Some(ErgodicityLine {
        ergodic,
        time_averages,
        standard_errors,
        ensemble_average,
        anova,
        finding,
    })
}

/// The ensemble's tests at significance `alpha` on the segment sums from
/// [`EnsembleAccumulator::finish`], at the lags `lags_len` (each ≤ the plan's K). `None` with
/// fewer than two records, fewer than two segments, or a lag beyond K.
pub fn assess_ensemble(
    records: &[SegmentSummary],
    across: &[SegmentSummary; 3],
    alpha: f64,
    lags_len: &[usize],
    sample_rate_hz: f64,
) -> Option<EnsembleFindings> {
    let first = records.first()?;
    let count = first.count();
    if records.len() < 2 || count < 2 || records.iter().any(|r| r.count() != count) {
        return None;
    }
    let groups = |value: &dyn Fn(&SegmentSummary, usize) -> Option<f64>| {
        records
            .iter()
            .map(|r| {
                (0..count)
                    .map(|j| value(r, j))
                    .collect::<Option<Vec<f64>>>()
            })
            .collect::<Option<Vec<_>>>()
    };
    let mean = line(&groups(&|r, j| Some(r.mean(j)))?, alpha, "the mean")?;
    let mean_square = line(
        &groups(&|r, j| Some(r.mean_square(j)))?,
        alpha,
        "the mean square",
    )?;
    let autocorrelation = lags_len
        .iter()
        .map(|&k| {
            let what = format!("x(t−τ)x(t) at τ = {k} samples");
            Some(LagErgodicity {
                lag_len: k,
                lag_s: k as f64 / sample_rate_hz,
                line: line(&groups(&|r, j| r.raw_lag_mean(j, k))?, alpha, &what)?,
            })
        })
        .collect::<Option<Vec<_>>>()?;
    let [m, q, s2] = across;
    let n_across = m.count().min(count);
    let over_time = OverTime {
        start_s: (0..n_across)
            .map(|j| m.start_len(j) as f64 / sample_rate_hz)
            .collect(),
        mean: (0..n_across).map(|j| m.mean(j)).collect(),
        mean_square: (0..n_across).map(|j| q.mean(j)).collect(),
        variance_across: (0..n_across).map(|j| s2.mean(j)).collect(),
    };
    let variance_across_records =
        over_time.variance_across.iter().sum::<f64>() / n_across.max(1) as f64;
    let variance_within_records = records
        .iter()
        .filter_map(|r| {
            let (sums, n) = r.centred_lag_sums(0, count)?;
            Some(sums[0] / n as f64)
        })
        .sum::<f64>()
        / records.len() as f64;
    let mut failing: Vec<String> = Vec::new();
    if !mean.ergodic {
        failing.push("mean".into());
    }
    if !mean_square.ergodic {
        failing.push("mean square".into());
    }
    for lag in &autocorrelation {
        if !lag.line.ergodic {
            failing.push(format!("R at lag {}", lag.lag_len));
        }
    }
    let basis = format!(
        "{} records, {count} segments each, α = {alpha} per test",
        records.len()
    );
    let verdict = if failing.is_empty() {
        format!("time averages agree with the ensemble: consistent with ergodicity ({basis})")
    } else {
        format!(
            "not ergodic in {}: the records' time averages differ beyond their sampling spread ({basis})",
            failing.join(", ")
        )
    };
    Some(EnsembleFindings {
        alpha,
        segments: count,
        segment_len: first.segment_len,
        mean,
        mean_square,
        autocorrelation,
        over_time,
        variance_across_records,
        variance_within_records,
        verdict,
    })
}

//! The runs test of a sequence about its median.
//!
//! # Method
//! Each value is marked + when above the sequence's median and − when below; values equal to
//! the median are left out (common practice). A run is a maximal stretch of equal marks; r is
//! the number of runs. With n₁ values above and n₂ below, in random order, the exact
//! distribution of r is (Wald & Wolfowitz 1940; Bendat & Piersol 2010, chapter 4):
//! - P(r = 2k) = 2·C(n₁−1, k−1)·C(n₂−1, k−1) / C(n₁+n₂, n₁),
//! - P(r = 2k+1) = [C(n₁−1, k)·C(n₂−1, k−1) + C(n₁−1, k−1)·C(n₂−1, k)] / C(n₁+n₂, n₁),
//!
//! with mean 2n₁n₂/N + 1 and variance 2n₁n₂(2n₁n₂ − N)/(N²(N − 1)), N = n₁ + n₂. Too few runs
//! mean the values cluster in time (a slow wander or a step); too many mean they alternate.
//!
//! Acceptance at significance α, in Bendat & Piersol's form r_{n;1−α/2} < r ≤ r_{n;α/2}: the
//! lower bound is the largest r with P[R ≤ r] ≤ α/2, the upper bound the smallest r with
//! P[R > r] ≤ α/2 (the convention that reproduces Table A.5; shared reference notes, section 4).
//! Binomial coefficients are taken through ln Γ (statrs), ample for a few hundred values.
//!
//! # References
//! - A. Wald, J. Wolfowitz, "On a test whether two samples are from the same population",
//!   Ann. Math. Stat. 11(2), 147–162, 1940.
//! - J. S. Bendat, A. G. Piersol, *Random Data*, 4th ed., Wiley 2010, chapter 4 (runs test) and
//!   Table A.5.

use serde::{Deserialize, Serialize};
use statrs::function::factorial::ln_binomial;

/// The exact null distribution of the number of runs for n₁ marks of one kind and n₂ of the
/// other: P(R = r) for r = 0..=n₁+n₂ (zero where impossible). With n₁ = 0 or n₂ = 0 (and
/// N > 0) there is exactly one run.
///
/// ```
/// use noisesonde::stationarity::runs::runs_distribution;
/// // Two of each: the 6 orders ++−−, −−++ (2 runs), +−−+, −++− (3), +−+−, −+−+ (4).
/// let p = runs_distribution(2, 2);
/// assert!((p[2] - 2.0 / 6.0).abs() < 1e-12 && (p[3] - 2.0 / 6.0).abs() < 1e-12);
/// assert!((p[4] - 2.0 / 6.0).abs() < 1e-12);
/// ```
pub fn runs_distribution(above: usize, below: usize) -> Vec<f64> {
    let total = above + below;
    let mut pmf = vec![0.0; total + 1];
    if total == 0 {
        return pmf;
    }
    if above == 0 || below == 0 {
        pmf[1] = 1.0;
        return pmf;
    }
    let (n1, n2) = (above as u64, below as u64);
    let ln_all = ln_binomial(n1 + n2, n1);
    // ln C(n, k), −∞ when k > n (statrs); k ≥ 1 is guaranteed by the callers below.
    let c = |n: u64, k: u64| ln_binomial(n, k);
    for (r, p) in pmf.iter_mut().enumerate().skip(2) {
        let r = r as u64;
        let k = r / 2;
        *p = if r.is_multiple_of(2) {
            2.0 * (c(n1 - 1, k - 1) + c(n2 - 1, k - 1) - ln_all).exp()
        } else {
            (c(n1 - 1, k) + c(n2 - 1, k - 1) - ln_all).exp()
                + (c(n1 - 1, k - 1) + c(n2 - 1, k) - ln_all).exp()
        };
    }
    pmf
}

/// (lower, upper) of the runs count at significance `alpha` for a distribution from
/// [`runs_distribution`]: accept when lower < r ≤ upper; `lower` is `None` when no count is
/// improbable enough on the low side.
pub fn runs_bounds(pmf: &[f64], alpha: f64) -> (Option<u64>, u64) {
    let tail = alpha / 2.0 * (1.0 + TAIL_SLACK);
    let mut lower = None;
    let mut cumulative = 0.0;
    for (r, p) in pmf.iter().enumerate() {
        cumulative += p;
        if cumulative <= tail {
            lower = Some(r as u64);
        } else {
            break;
        }
    }
    let mut above = 0.0;
    let mut upper = pmf.len().saturating_sub(1) as u64;
    for (r, p) in pmf.iter().enumerate().rev() {
        if above <= tail {
            upper = r as u64;
        } else {
            break;
        }
        above += p;
    }
    (lower, upper)
}

/// Relative slack on α/2 so that a tail equal to it in exact arithmetic is not lost to rounding.
const TAIL_SLACK: f64 = 1e-9;

/// The median of `values` (mean of the two middle ones for an even count); `None` when empty.
/// NaN sorts last (total order).
pub fn median(values: &[f64]) -> Option<f64> {
    if values.is_empty() {
        return None;
    }
    Some(crate::numeric::median(&mut values.to_vec()))
}

/// The test's outcome on one sequence.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RunsAboutMedian {
    /// r, the number of runs above and below the median.
    pub statistic: u64,
    /// The median the values were compared with.
    pub median: f64,
    /// n₁, values above the median.
    pub above: usize,
    /// n₂, values below the median (values equal to it are left out).
    pub below: usize,
    /// Lower acceptance bound r_{n;1−α/2}: accept when r > lower; `None`: no lower rejection.
    pub lower: Option<u64>,
    /// Upper acceptance bound r_{n;α/2}: accept when r ≤ upper.
    pub upper: u64,
    /// Exact probability that a sequence in random order is rejected (≤ α).
    pub false_rejection_probability: f64,
    /// lower < r ≤ upper.
    pub accepted: bool,
    /// What a rejection means, in one line.
    pub meaning: String,
}

impl RunsAboutMedian {
    /// Expected r in random order, 2n₁n₂/N + 1 (Wald & Wolfowitz 1940); the observed count
    /// when one side is empty (nothing to order).
    pub fn expected(&self) -> f64 {
        let (n1, n2) = (self.above as f64, self.below as f64);
        if self.above == 0 || self.below == 0 {
            return self.statistic as f64;
        }
        2.0 * n1 * n2 / (n1 + n2) + 1.0
    }

    /// Standard deviation of r in random order, √(2n₁n₂(2n₁n₂ − N)/(N²(N − 1)))
    /// (Wald & Wolfowitz 1940); 0 when one side is empty.
    pub fn std_dev(&self) -> f64 {
        let (n1, n2) = (self.above as f64, self.below as f64);
        let n = n1 + n2;
        if self.above == 0 || self.below == 0 {
            return 0.0;
        }
        (2.0 * n1 * n2 * (2.0 * n1 * n2 - n) / (n * n * (n - 1.0)))
            .max(0.0)
            .sqrt()
    }
}

/// Runs the test at significance `alpha`; `None` for an empty sequence. A sequence with no
/// value on one side of its median has one run (none at all when it is constant) and is
/// accepted: there is nothing to order.
///
/// ```
/// use noisesonde::stationarity::runs::test_runs;
/// // Ten low values then ten high ones: 2 runs, far fewer than the 6 < r ≤ 15 of random order.
/// let step: Vec<f64> = (0..20).map(|i| if i < 10 { 0.0 + i as f64 * 0.01 } else { 1.0 }).collect();
/// let t = test_runs(&step, 0.05, "a step").unwrap();
/// assert_eq!((t.statistic, t.lower, t.upper, t.accepted), (2, Some(6), 15, false));
/// ```
pub fn test_runs(values: &[f64], alpha: f64, meaning: &str) -> Option<RunsAboutMedian> {
    let median = median(values)?;
    let marks = values.iter().filter_map(|&v| {
        if v > median {
            Some(true)
        } else if v < median {
            Some(false)
        } else {
            None
        }
    });
    let (mut above, mut below, mut runs) = (0usize, 0usize, 0u64);
    let mut last = None;
    for mark in marks {
        if mark {
            above += 1;
        } else {
            below += 1;
        }
        if last != Some(mark) {
            runs += 1;
        }
        last = Some(mark);
    }
    let pmf = runs_distribution(above, below);
    let testable = above > 0 && below > 0;
    let (lower, upper) = if testable {
        runs_bounds(&pmf, alpha)
    } else {
        (None, runs)
    };
    let below_p: f64 = lower.map_or(0.0, |l| pmf[..=l as usize].iter().sum());
    let above_p: f64 = pmf
        .get(upper as usize + 1..)
        .map_or(0.0, |t| t.iter().sum());
    Some(RunsAboutMedian {
        statistic: runs,
        median,
        above,
        below,
        lower,
        upper,
        false_rejection_probability: (below_p + above_p).min(1.0),
        accepted: lower.is_none_or(|l| runs > l) && runs <= upper,
        meaning: meaning.to_string(),
    })
}

//! The reverse arrangements test of a sequence for a monotonic trend.
//!
//! # Method
//! For a sequence x₁ … x_N, the statistic is the number of reverse arrangements (inversions)
//! A = #{(i, j) : i < j, x_i > x_j}; a tie counts one half (the usual mid-rank treatment, so the
//! expected value stays N(N−1)/4). For N independent, identically distributed values every order
//! is equally likely, and A has the distribution of the number of inversions of a random
//! permutation: P(A = a) = I_N(a)/N!, with the Mahonian numbers
//! I_n(a) = Σ_{j=0}^{min(a, n−1)} I_{n−1}(a − j), I_1 = [1] (Kendall & Stuart; from memory).
//! This module computes that distribution exactly (as probabilities, dividing by n at each step
//! of the recursion), in O(N³) time and O(N²) memory, which is fast for the few hundred segments
//! used here; mean N(N−1)/4, variance N(2N+5)(N−1)/72 (Bendat & Piersol 2010, chapter 4).
//!
//! Acceptance at significance α (two-sided, α/2 in each tail), in Bendat & Piersol's form
//! A_{N;1−α/2} < A ≤ A_{N;α/2}: the lower bound is the largest a with P[A ≤ a] ≤ α/2 (none when
//! even P[A = 0] is larger), the upper bound the smallest a with P[A > a] ≤ α/2. The exact
//! probability of rejecting a trend-free sequence is then P[A ≤ lower] + P[A > upper] ≤ α.
//! Bendat & Piersol's Table A.6 appears to be the normal approximation ⌊μ + zσ⌋ and differs from
//! these exact bounds by one or two counts (shared reference notes, section 4).
//!
//! # References
//! - J. S. Bendat, A. G. Piersol, *Random Data: Analysis and Measurement Procedures*, 4th ed.,
//!   Wiley 2010, chapter 4 (the reverse arrangements test) and Table A.6.
//! - M. G. Kendall, "A new measure of rank correlation", Biometrika 30, 1938 (the count of
//!   discordant pairs and its distribution).

use serde::{Deserialize, Serialize};

/// Largest sequence accepted by [`inversion_distribution`] (its table holds N(N−1)/2 + 1
/// probabilities: 400 values give 79 801).
pub const MAX_ARRANGEMENT_LEN: usize = 400;

/// The exact null distribution of the inversion count of N values.
#[derive(Debug, Clone, PartialEq)]
pub struct InversionDistribution {
    len: usize,
    /// P(A = a) for a = 0..=N(N−1)/2.
    pmf: Vec<f64>,
}

/// The exact distribution for `len` values (1 ≤ len ≤ [`MAX_ARRANGEMENT_LEN`]); `None` outside.
///
/// ```
/// use noisesonde::stationarity::arrangements::inversion_distribution;
/// // Three values: the 6 orders have 0, 1, 1, 2, 2, 3 inversions (by hand).
/// let d = inversion_distribution(3).unwrap();
/// let sixth = 1.0 / 6.0;
/// assert!((d.pmf()[0] - sixth).abs() < 1e-15 && (d.pmf()[1] - 2.0 * sixth).abs() < 1e-15);
/// ```
pub fn inversion_distribution(len: usize) -> Option<InversionDistribution> {
    if !(1..=MAX_ARRANGEMENT_LEN).contains(&len) {
        return None;
    }
    let max_total = len * (len - 1) / 2;
    let mut pmf = vec![0.0; max_total + 1];
    let mut next = vec![0.0; max_total + 1];
    pmf[0] = 1.0;
    let mut top = 0; // largest a with a non-zero probability so far
    for n in 2..=len {
        // next[a] = (1/n) Σ_{j=0}^{n−1} pmf[a − j], by a running window sum.
        let new_top = top + n - 1;
        let mut window = 0.0;
        for a in 0..=new_top {
            if a <= top {
                window += pmf[a];
            }
            if a >= n {
                window -= pmf[a - n];
            }
            next[a] = window / n as f64;
        }
        std::mem::swap(&mut pmf, &mut next);
        top = new_top;
    }
    Some(InversionDistribution { len, pmf })
}

impl InversionDistribution {
    /// N.
    pub fn len(&self) -> usize {
        self.len
    }

    /// Always false: a distribution is built for at least one value.
    pub fn is_empty(&self) -> bool {
        false
    }

    /// P(A = a), a = 0..=N(N−1)/2.
    pub fn pmf(&self) -> &[f64] {
        &self.pmf
    }

    /// (lower, upper) at significance `alpha`: accept when lower < A ≤ upper; `lower` is `None`
    /// when no count is improbable enough on the low side.
    pub fn bounds(&self, alpha: f64) -> (Option<u64>, u64) {
        let tail = alpha / 2.0;
        let mut lower = None;
        let mut cumulative = 0.0;
        for (a, p) in self.pmf.iter().enumerate() {
            cumulative += p;
            if cumulative <= tail * (1.0 + TAIL_SLACK) {
                lower = Some(a as u64);
            } else {
                break;
            }
        }
        // Upper: smallest a with P[A > a] ≤ α/2, summing the upper tail from the top.
        let mut above = 0.0;
        let mut upper = (self.pmf.len() - 1) as u64;
        for (a, p) in self.pmf.iter().enumerate().rev() {
            // `above` is P[A > a] here.
            if above <= tail * (1.0 + TAIL_SLACK) {
                upper = a as u64;
            } else {
                break;
            }
            above += p;
        }
        (lower, upper)
    }

    /// P[A ≤ a].
    pub fn cdf(&self, a: u64) -> f64 {
        let end = (a as usize).saturating_add(1).min(self.pmf.len());
        self.pmf[..end].iter().sum::<f64>().min(1.0)
    }
}

/// Relative slack on the tail probability when comparing with α/2, so that a tail equal to α/2
/// in exact arithmetic is not excluded by rounding (e.g. for small N, where tails are k/N!).
const TAIL_SLACK: f64 = 1e-12;

/// A = #{i < j : x_i > x_j} + ½·#{i < j : x_i = x_j}. O(N²); NaN compares as neither.
pub fn reverse_arrangements(values: &[f64]) -> f64 {
    let mut count = 0.0;
    for (i, a) in values.iter().enumerate() {
        for b in &values[i + 1..] {
            if a > b {
                count += 1.0;
            } else if a == b {
                count += 0.5;
            }
        }
    }
    count
}

/// The test's outcome on one sequence.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ReverseArrangements {
    /// A, the number of reverse arrangements (ties count ½).
    pub statistic: f64,
    /// N, values in the sequence.
    pub values: usize,
    /// Lower acceptance bound A_{N;1−α/2}: accept when A > lower; `None`: no lower rejection.
    pub lower: Option<u64>,
    /// Upper acceptance bound A_{N;α/2}: accept when A ≤ upper.
    pub upper: u64,
    /// Exact probability that a trend-free sequence is rejected (≤ α, as the count is discrete).
    pub false_rejection_probability: f64,
    /// lower < A ≤ upper.
    pub accepted: bool,
    /// What a rejection means, in one line.
    pub meaning: String,
}

impl ReverseArrangements {
    /// Expected A without a trend, N(N−1)/4 (Bendat & Piersol 2010, chapter 4).
    pub fn expected(&self) -> f64 {
        let n = self.values as f64;
        n * (n - 1.0) / 4.0
    }

    /// Standard deviation of A without a trend, √(N(2N+5)(N−1)/72) (Bendat & Piersol 2010,
    /// chapter 4).
    pub fn std_dev(&self) -> f64 {
        let n = self.values as f64;
        (n * (2.0 * n + 5.0) * (n - 1.0) / 72.0).sqrt()
    }
}

/// Runs the test at significance `alpha` on `values` (1 ≤ N ≤ [`MAX_ARRANGEMENT_LEN`]);
/// `None` outside that range. `meaning` is the one-line reading of a rejection.
///
/// ```
/// use noisesonde::stationarity::arrangements::test_reverse_arrangements;
/// // A steadily rising sequence of 20 values has no reverse arrangement: a trend.
/// let rising: Vec<f64> = (0..20).map(f64::from).collect();
/// let t = test_reverse_arrangements(&rising, 0.05, "a trend").unwrap();
/// assert_eq!((t.statistic, t.lower, t.upper, t.accepted), (0.0, Some(64), 125, false));
/// ```
pub fn test_reverse_arrangements(
    values: &[f64],
    alpha: f64,
    meaning: &str,
) -> Option<ReverseArrangements> {
    let distribution = inversion_distribution(values.len())?;
    let (lower, upper) = distribution.bounds(alpha);
    let statistic = reverse_arrangements(values);
    let below = lower.map_or(0.0, |l| distribution.cdf(l));
    let above = 1.0 - distribution.cdf(upper);
    let accepted = lower.is_none_or(|l| statistic > l as f64) && statistic <= upper as f64;
    Some(ReverseArrangements {
        statistic,
        values: values.len(),
        lower,
        upper,
        false_rejection_probability: (below + above.max(0.0)).min(1.0),
        accepted,
        meaning: meaning.to_string(),
    })
}

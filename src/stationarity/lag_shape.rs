//! Is the autocorrelation a function of lag alone? The normalised autocorrelation of J
//! stretches of the record compared with their pooled value, lag by lag.
//!
//! # Method
//! The record's complete segments are grouped into J consecutive stretches of (nearly) equal
//! length n_j. Each stretch gives its autocorrelation coefficient about its own mean,
//! ρ_j(k) = c_j(k)/c_j(0), c_j(k) = (1/n_j) Σ_m (x[m−k] − μ_j)(x[m] − μ_j) over the pairs whose
//! later sample lies in the stretch, for k = 0..=K. Removing each stretch's own mean and
//! dividing by its own variance makes this a test of the correlation's *shape* only: changes of
//! level and of power are the mean and mean-square lines' business.
//!
//! The pooled coefficient is the length-weighted mean ρ̄(k) = Σ_j w_j ρ_j(k), w_j = n_j/Σn;
//! pooling the stretch estimates (rather than taking the whole record's coefficient) gives it the
//! same small-sample bias as each stretch, so the bias cancels in the differences.
//!
//! For a stationary Gaussian record, Bartlett's formula gives the sampling variance of a
//! coefficient estimated from n samples (Bartlett 1946; Box & Jenkins 1976, eq. 2.1.13):
//!
//! var r_k ≈ (1/n) Σ_{v=−V}^{V} (ρ_v² + ρ_{v+k}ρ_{v−k} − 4ρ_kρ_vρ_{v−k} + 2ρ_v²ρ_k²),
//!
//! and with independent stretches var(ρ_j(k) − ρ̄(k)) = (1 − w_j)·V(k)/n_j, where V(k) is the
//! bracketed sum. The statistic is the largest standardised deviation
//! D = max_{j, 1≤k≤K} |ρ_j(k) − ρ̄(k)| / √((1 − w_j) V(k)/n_j), compared with the normal
//! quantile z* = Φ⁻¹(1 − α/(2JK)): a Bonferroni bound over the J·K comparisons, so the
//! probability of rejecting a stationary record is at most about α (less where neighbouring
//! lags are strongly correlated; the tests measure it by simulation).
//!
//! ρ_v in Bartlett's sum comes from the whole record's coefficient when the caller has it
//! (the pipeline's ACF, to many more lags than K), summed to V = max(K, 8·τ) lags with τ the
//! first lag where it falls to 1/e (all lags it has when it never does); otherwise from ρ̄ to
//! V = K. The truncation is this project's choice; beyond a few correlation times the terms are
//! estimation noise of order 1/n each.
//!
//! # References
//! - M. S. Bartlett, "On the theoretical specification and sampling properties of
//!   autocorrelated time-series", J. R. Stat. Soc. Suppl. 8(1), 27–41, 1946.
//! - G. E. P. Box, G. M. Jenkins, *Time Series Analysis: Forecasting and Control*, revised ed.,
//!   Holden-Day 1976, §2.1.6 (standard errors of autocorrelation estimates; equation number
//!   from memory).
//! - J. S. Bendat, A. G. Piersol, *Random Data*, 4th ed., Wiley 2010, chapter 4 (stationarity
//!   as a mean and an autocorrelation that depend on lag alone).

use serde::{Deserialize, Serialize};
use statrs::distribution::{ContinuousCDF, Normal};

use super::segments::SegmentSummary;

/// Bartlett's sum runs to this many correlation times (1/e lags) of the whole record's
/// coefficient: a choice of this project, checked by the false-rejection simulations.
pub const BARTLETT_SPAN_CORRELATION_TIMES: f64 = 8.0;

/// Bartlett's bracket V(k) = Σ_{v=−V}^{V} (ρ_v² + ρ_{v+k}ρ_{v−k} − 4ρ_kρ_vρ_{v−k} + 2ρ_v²ρ_k²)
/// for a one-sided coefficient `rho` (ρ_0 = 1 first; ρ_{−v} = ρ_v; zero beyond its end), so
/// that var r_k ≈ V(k)/n.
///
/// ```
/// use noisesonde::stationarity::lag_shape::bartlett_bracket;
/// // White noise: ρ_v = 0 for v ≠ 0, so V(k) = 1 for every k ≥ 1 (var r_k = 1/n).
/// let rho = [1.0, 0.0, 0.0, 0.0];
/// assert_eq!(bartlett_bracket(&rho, 2), 1.0);
/// ```
pub fn bartlett_bracket(rho: &[f64], k: usize) -> f64 {
    let at = |v: i64| -> f64 { rho.get(v.unsigned_abs() as usize).copied().unwrap_or(0.0) };
    let span = rho.len() as i64 - 1;
    let k_i = k as i64;
    let rho_k = at(k_i);
    (-span..=span)
        .map(|v| {
            let rho_v = at(v);
            let minus = at(v - k_i);
            rho_v * rho_v + at(v + k_i) * minus - 4.0 * rho_k * rho_v * minus
                + 2.0 * rho_v * rho_v * rho_k * rho_k
        })
        .sum()
}

/// The outcome of the comparison.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LagShape {
    /// J, the stretches compared.
    pub stretches: usize,
    /// Start of each stretch, s.
    pub stretch_start_s: Vec<f64>,
    /// Length of each stretch, s.
    pub stretch_duration_s: Vec<f64>,
    /// Lags 0..=K, s.
    pub lag_s: Vec<f64>,
    /// ρ_j(k), stretch after stretch: stretch j's K+1 values at [j(K+1), (j+1)(K+1)).
    pub coefficient_by_stretch: Vec<f64>,
    /// ρ̄(k), the length-weighted mean over the stretches.
    pub pooled: Vec<f64>,
    /// √(V(k)/n) for a stretch of the mean length: the expected spread of one stretch's
    /// coefficient at each lag (0 at lag 0), for drawing a band about the pooled curve.
    pub standard_error: Vec<f64>,
    /// D, the largest |ρ_j(k) − ρ̄(k)| in standard errors.
    pub largest_deviation: f64,
    /// z*, the threshold D is compared with.
    pub threshold: f64,
    /// Lag of the largest deviation, s.
    pub at_lag_s: f64,
    /// Stretch of the largest deviation, 0-based.
    pub at_stretch: usize,
    /// Lags of ρ in Bartlett's sum (V).
    pub bartlett_lags: usize,
    /// Where those ρ came from: `record` (the whole record's coefficient) or `stretches`.
    pub bartlett_source: String,
    /// What a rejection means, in one line.
    pub meaning: String,
}

impl LagShape {
    /// Autocorrelation a function of lag alone at α: D ≤ z*.
    pub fn stationary(&self) -> bool {
        self.largest_deviation <= self.threshold
    }
}

/// Compares the coefficients of `stretches` stretches of `summary` at significance `alpha`.
/// `record_coefficient`, when given, is the whole record's coefficient ρ(0..) used in Bartlett's
/// sum. `None` when there are fewer complete segments than stretches or fewer than 2 stretches.
pub fn test_lag_shape(
    summary: &SegmentSummary,
    stretches: usize,
    alpha: f64,
    sample_rate_hz: f64,
    record_coefficient: Option<&[f64]>,
    meaning: &str,
) -> Option<LagShape> {
    let count = summary.count();
    if stretches < 2 || count < stretches {
        return None;
    }
    let k_max = summary.max_lag_len;
    let lags = k_max + 1;
    let b = summary.segment_len;
    let mut coefficient_by_stretch = Vec::with_capacity(stretches * lags);
    let mut lengths = Vec::with_capacity(stretches);
    let mut starts = Vec::with_capacity(stretches);
    for j in 0..stretches {
        let (first, end) = (j * count / stretches, (j + 1) * count / stretches);
        let (sums, n) = summary.centred_lag_sums(first, end)?;
        let c0 = sums[0];
        coefficient_by_stretch.extend(sums.iter().map(|c| if c0 > 0.0 { c / c0 } else { 0.0 }));
        lengths.push(n as f64);
        starts.push(first as u64 * b);
    }
    let total: f64 = lengths.iter().sum();
    let weights: Vec<f64> = lengths.iter().map(|n| n / total).collect();
    let pooled: Vec<f64> = (0..lags)
        .map(|k| {
            (0..stretches)
                .map(|j| weights[j] * coefficient_by_stretch[j * lags + k])
                .sum()
        })
        .collect();

    let (rho, source): (Vec<f64>, &str) = match record_coefficient {
        Some(record) if record.len() > lags => {
            let tau = record.iter().position(|&r| r <= (-1.0f64).exp());
            let span = tau.map_or(record.len() - 1, |t| {
                ((BARTLETT_SPAN_CORRELATION_TIMES * t as f64).ceil() as usize)
                    .max(k_max)
                    .min(record.len() - 1)
            });
            (record[..=span].to_vec(), "record")
        }
        _ => (pooled.clone(), "stretches"),
    };
    let bracket: Vec<f64> = (0..lags).map(|k| bartlett_bracket(&rho, k)).collect();

    let comparisons = (stretches * k_max).max(1) as f64;
    let normal = Normal::standard();
    let threshold = normal.inverse_cdf(1.0 - alpha / (2.0 * comparisons));
    let (mut largest, mut at_stretch, mut at_lag) = (0.0f64, 0usize, 0usize);
    for j in 0..stretches {
        for k in 1..lags {
            let diff = coefficient_by_stretch[j * lags + k] - pooled[k];
            let spread = ((1.0 - weights[j]) * bracket[k] / lengths[j]).sqrt();
            let z = if diff == 0.0 {
                0.0
            } else if spread > 0.0 {
                (diff / spread).abs()
            } else {
                // No spread expected but a difference seen (or a non-finite value): as far
                // out as a finite number can say (JSON has no infinity).
                f64::MAX
            };
            let z = if z.is_nan() { f64::MAX } else { z };
            if z > largest {
                largest = z;
                at_stretch = j;
                at_lag = k;
            }
        }
    }
    let mean_len = total / stretches as f64;
    Some(LagShape {
        stretches,
        stretch_start_s: starts.iter().map(|&s| s as f64 / sample_rate_hz).collect(),
        stretch_duration_s: lengths.iter().map(|n| n / sample_rate_hz).collect(),
        lag_s: (0..lags).map(|k| k as f64 / sample_rate_hz).collect(),
        coefficient_by_stretch,
        pooled,
        standard_error: bracket
            .iter()
            .enumerate()
            .map(|(k, v)| {
                if k == 0 {
                    0.0
                } else {
                    (v.max(0.0) / mean_len).sqrt()
                }
            })
            .collect(),
        largest_deviation: largest,
        threshold,
        at_lag_s: at_lag as f64 / sample_rate_hz,
        at_stretch,
        bartlett_lags: rho.len() - 1,
        bartlett_source: source.to_string(),
        meaning: meaning.to_string(),
    })
}

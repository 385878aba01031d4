//! Chi-square confidence interval of a spectral density estimate.
//!
//! # Method
//! An averaged periodogram with ν equivalent degrees of freedom is distributed as G·χ²_ν/ν, so
//! the interval at confidence 1 − α is
//! ν Ĝ / χ²_ν(1 − α/2) ≤ G ≤ ν Ĝ / χ²_ν(α/2), where χ²_ν(q) is the q-quantile
//! (Bendat & Piersol, *Random Data*, 4th ed. 2010, eq. 8.159 (from memory);
//! Percival & Walden 1993, §7.4).
//!
//! # References
//! - P. D. Welch, "The use of fast Fourier transform for the estimation of power spectra",
//!   IEEE Trans. Audio Electroacoust. AU-15(2), 70–73, 1967.
//! - D. B. Percival, A. T. Walden, *Spectral Analysis for Physical Applications*, Cambridge 1993,
//!   eq. (292b) for the equivalent degrees of freedom of WOSA (from memory).

use serde::{Deserialize, Serialize};
use statrs::distribution::{ChiSquared, ContinuousCDF};

/// Multipliers that turn an estimate into the ends of its confidence interval.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ConfidenceFactors {
    /// Confidence level 1 − α, e.g. 0.95.
    pub level: f64,
    /// Degrees of freedom the factors were computed for.
    pub dof: f64,
    /// Lower end = estimate × `lower`: ν / χ²_ν(1 − α/2).
    pub lower: f64,
    /// Upper end = estimate × `upper`: ν / χ²_ν(α/2).
    pub upper: f64,
}

impl ConfidenceFactors {
    /// Factors for `dof` equivalent degrees of freedom at confidence `level` (0 < level < 1).
    /// Returns `None` when `dof` is not finite and positive or the level is out of range.
    ///
    /// ```
    /// use noisesonde::spectral::ConfidenceFactors;
    /// // scipy.stats.chi2.ppf([0.025, 0.975], 10) = 3.2469728, 20.4831774
    /// let f = ConfidenceFactors::new(10.0, 0.95).unwrap();
    /// assert!((f.lower - 10.0 / 20.4831774).abs() < 1e-7);
    /// assert!((f.upper - 10.0 / 3.2469728).abs() < 1e-6);
    /// ```
    pub fn new(dof: f64, level: f64) -> Option<Self> {
        if !(dof.is_finite() && dof > 0.0 && level > 0.0 && level < 1.0) {
            return None;
        }
        let chi = ChiSquared::new(dof).ok()?;
        let alpha = 1.0 - level;
        let q_low = chi.inverse_cdf(alpha / 2.0);
        let q_high = chi.inverse_cdf(1.0 - alpha / 2.0);
        if !(q_low > 0.0 && q_high.is_finite()) {
            return None;
        }
        Some(Self {
            level,
            dof,
            lower: dof / q_high,
            upper: dof / q_low,
        })
    }
}

/// The median of χ²_ν / ν: an estimate with ν degrees of freedom has its median this fraction
/// of its mean (for ν = 2, ln 2). Dividing a median of such estimates by it removes the bias.
/// `None` when ν is not finite and positive.
///
/// ```
/// use noisesonde::spectral::confidence::chi_square_median_over_dof;
/// // scipy.stats.chi2.ppf(0.5, [2, 10, 60]) = 1.386294361, 9.341817766, 59.334666276
/// assert!((chi_square_median_over_dof(2.0).unwrap() - 1.386294361119891 / 2.0).abs() < 1e-12);
/// assert!((chi_square_median_over_dof(10.0).unwrap() - 9.34181776559197 / 10.0).abs() < 1e-12);
/// assert!((chi_square_median_over_dof(60.0).unwrap() - 59.33466627644246 / 60.0).abs() < 1e-12);
/// ```
pub fn chi_square_median_over_dof(dof: f64) -> Option<f64> {
    if !(dof.is_finite() && dof > 0.0) {
        return None;
    }
    let median = ChiSquared::new(dof).ok()?.inverse_cdf(0.5);
    (median > 0.0).then_some(median / dof)
}

/// Equivalent degrees of freedom of Welch's overlapped-segment average.
///
/// # Method
/// ν = 2K / (1 + 2 Σ_{m=1}^{K−1} (1 − m/K) ρ²(m)), with ρ(m) the window's overlap correlation at
/// a shift of m·step samples (Welch 1967, eq. 10; Percival & Walden 1993, eq. (292b), from memory).
/// For Hann at 50 % overlap, ρ(1) = 1/6 and ν = 36K²/(19K − 1).
pub fn welch_dof(window: &[f64], step_len: usize, segments: usize) -> f64 {
    if segments == 0 {
        return 0.0;
    }
    let k = segments as f64;
    let mut sum = 0.0;
    for m in 1..segments {
        let shift = m.saturating_mul(step_len);
        if shift >= window.len() {
            break;
        }
        let rho = crate::window::overlap_correlation(window, shift);
        sum += (1.0 - m as f64 / k) * rho * rho;
    }
    2.0 * k / (1.0 + 2.0 * sum)
}

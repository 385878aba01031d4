//! The autocorrelation implied by an averaged PSD (Wiener–Khinchin theorem).
//!
//! # Method
//! For a one-sided density P[k] from L-point segments, the two-sided density is P[k]/2 off DC
//! and Nyquist. Its inverse DFT times f_s/L is Σ_n (wx)[n](wx)[n+m] / Σw² averaged over
//! segments, whose expectation is R[m]·ρ_w[m] (plus a circular wrap term, negligible while
//! R has decayed by lag L − m), with ρ_w[m] = Σ w[n]w[n+m] / Σw² the window's own correlation
//! (Welch 1967, eq. 6; Bendat & Piersol, *Random Data*, 4th ed. 2010, §5.2.1, from memory).
//! Dividing by ρ_w gives an estimate of R[m] for lags well inside the segment.

use std::sync::Arc;

use realfft::num_complex::Complex;
use realfft::{ComplexToReal, RealFftPlanner};

/// What a Wiener–Khinchin comparison needs for one window, prepared once: the inverse FFT of
/// the segment length and the window's own correlation ρ_w[m] at lags 0..=`max_lag_len`.
///
/// # Method
/// ρ_w[m] = Σ w[n]w[n+m] / Σw², computed for all lags at once as the inverse FFT of |W|² with
/// the window zero-padded to 2L (so the circular correlation equals the linear one),
/// O(L log L) instead of O(L) per lag.
#[derive(Clone)]
pub struct InversePlan {
    inverse: Arc<dyn ComplexToReal<f64>>,
    window_correlation: Vec<f64>,
    segment_len: usize,
}

impl std::fmt::Debug for InversePlan {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("InversePlan")
            .field("segment_len", &self.segment_len)
            .field("lags", &self.window_correlation.len())
            .finish()
    }
}

impl InversePlan {
    /// A plan for `window` (length L ≥ 2) and lags 0..=min(`max_lag_len`, L − 1).
    /// Returns `None` for a window shorter than 2 samples or with zero energy.
    pub fn new(window: &[f64], max_lag_len: usize) -> Option<Self> {
        let segment_len = window.len();
        if segment_len < 2 {
            return None;
        }
        let mut planner = RealFftPlanner::<f64>::new();
        let padded_len = 2 * segment_len;
        let forward = planner.plan_fft_forward(padded_len);
        let backward = planner.plan_fft_inverse(padded_len);
        let mut padded = forward.make_input_vec();
        padded[..segment_len].copy_from_slice(window);
        let mut spectrum = forward.make_output_vec();
        forward.process(&mut padded, &mut spectrum).ok()?;
        for bin in &mut spectrum {
            *bin = Complex::new(bin.norm_sqr(), 0.0);
        }
        let mut correlation = backward.make_output_vec();
        backward.process(&mut spectrum, &mut correlation).ok()?;
        let energy = correlation[0];
        if !(energy > 0.0 && energy.is_finite()) {
            return None;
        }
        let lags = max_lag_len.min(segment_len - 1) + 1;
        let window_correlation = correlation[..lags].iter().map(|c| c / energy).collect();
        Some(Self {
            inverse: planner.plan_fft_inverse(segment_len),
            window_correlation,
            segment_len,
        })
    }

    /// The window's own correlation ρ_w[m], m = 0..=max lag.
    pub fn window_correlation(&self) -> &[f64] {
        &self.window_correlation
    }

    /// ACF estimate at lags 0..=max lag from a one-sided `density` (units²/Hz) of this plan's
    /// segment length at `sample_rate_hz`. Returns an empty vector when the lengths do not fit.
    pub fn acf_from_density(&self, density: &[f64], sample_rate_hz: f64) -> Vec<f64> {
        let segment_len = self.segment_len;
        if density.len() != segment_len / 2 + 1 {
            return Vec::new();
        }
        let has_nyquist = segment_len.is_multiple_of(2);
        let last = density.len() - 1;
        let mut spectrum: Vec<Complex<f64>> = density
            .iter()
            .enumerate()
            .map(|(k, &p)| {
                let two_sided = if k == 0 || (has_nyquist && k == last) {
                    p
                } else {
                    p / 2.0
                };
                Complex::new(two_sided, 0.0)
            })
            .collect();
        let mut lagged = self.inverse.make_output_vec();
        if self.inverse.process(&mut spectrum, &mut lagged).is_err() {
            return Vec::new();
        }
        let scale = sample_rate_hz / segment_len as f64;
        self.window_correlation
            .iter()
            .zip(&lagged)
            .map(|(&rho, &r)| if rho > 0.0 { r * scale / rho } else { 0.0 })
            .collect()
    }
}

/// ACF estimate at lags 0..=`max_lag_len` from a one-sided `density` (units²/Hz) computed with
/// `window` (length L = 2·(bins − 1) for even L) at `sample_rate_hz`: [`InversePlan`] built and
/// used once. Returns an empty vector when the lengths do not fit together.
pub fn acf_from_density(
    density: &[f64],
    window: &[f64],
    sample_rate_hz: f64,
    max_lag_len: usize,
) -> Vec<f64> {
    InversePlan::new(window, max_lag_len)
        .map(|plan| plan.acf_from_density(density, sample_rate_hz))
        .unwrap_or_default()
}

//! The autocorrelation implied by an averaged PSD (Wiener–Khinchin theorem).
//!
//! # Method
//! For a one-sided density P[k] from L-point segments, the two-sided density is P[k]/2 off DC
//! and Nyquist. Its inverse DFT times f_s/L is Σ_n (wx)[n](wx)[n+m] / Σw² averaged over
//! segments, whose expectation is R[m]·ρ_w[m] (plus a circular wrap term, negligible while
//! R has decayed by lag L − m), with ρ_w[m] = Σ w[n]w[n+m] / Σw² the window's own correlation
//! (Welch 1967, eq. 6; Bendat & Piersol, *Random Data*, 4th ed. 2010, §5.2.1, from memory).
//! Dividing by ρ_w gives an estimate of R[m] for lags well inside the segment.

use realfft::num_complex::Complex;
use realfft::RealFftPlanner;

use crate::window::overlap_correlation;

/// ACF estimate at lags 0..=`max_lag_len` from a one-sided `density` (units²/Hz) computed with
/// `window` (length L = 2·(bins − 1) for even L) at `sample_rate_hz`. Returns an empty vector
/// when the lengths do not fit together.
pub fn acf_from_density(
    density: &[f64],
    window: &[f64],
    sample_rate_hz: f64,
    max_lag_len: usize,
) -> Vec<f64> {
    let segment_len = window.len();
    if segment_len < 2 || density.len() != segment_len / 2 + 1 {
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
    let inverse = RealFftPlanner::<f64>::new().plan_fft_inverse(segment_len);
    let mut lagged = inverse.make_output_vec();
    if inverse.process(&mut spectrum, &mut lagged).is_err() {
        return Vec::new();
    }
    let scale = sample_rate_hz / segment_len as f64;
    (0..=max_lag_len.min(segment_len - 1))
        .map(|m| {
            let rho = overlap_correlation(window, m);
            if rho > 0.0 {
                lagged[m] * scale / rho
            } else {
                0.0
            }
        })
        .collect()
}

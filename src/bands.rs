//! Power in a frequency band, integrated from a one-sided density.
//!
//! # Method
//! Bin k of an L-point one-sided density P (spacing Δf) stands for the power P[k]·Δf spread
//! evenly over [f_k − Δf/2, f_k + Δf/2] ∩ [0, f_s/2]. The power between two edges is the sum of
//! each bin's share of [f_lo, f_hi], so partial bins at the edges count in proportion, adjacent
//! bands add up exactly, and the band [0, f_s/2] gives Σ P[k]·Δf, the Parseval total
//! (Heinzel, Rüdiger & Schilling 2002, §10 on integrating a PSD, from memory; the even spread
//! within a bin is this crate's convention). The RMS is the square root.

use crate::report::PsdReport;

/// Power (units²) between `f_lo_hz` and `f_hi_hz` (in either order), clamped to [0, f_s/2].
///
/// ```
/// use noisesonde::bands::band_power_of;
/// // A flat density of 2 units²/Hz, bins every 10 Hz up to 50 Hz:
/// let density = [2.0; 6];
/// let f = [0.0, 10.0, 20.0, 30.0, 40.0, 50.0];
/// // 12 Hz to 27 Hz holds 15 Hz × 2 units²/Hz = 30 units².
/// assert!((band_power_of(&f, &density, 10.0, 12.0, 27.0) - 30.0).abs() < 1e-12);
/// ```
pub fn band_power_of(
    frequency_hz: &[f64],
    density: &[f64],
    bin_width_hz: f64,
    f_lo_hz: f64,
    f_hi_hz: f64,
) -> f64 {
    let (Some(&first), Some(&last)) = (frequency_hz.first(), frequency_hz.last()) else {
        return 0.0;
    };
    if bin_width_hz.is_nan() || bin_width_hz <= 0.0 || f_lo_hz.is_nan() || f_hi_hz.is_nan() {
        return 0.0;
    }
    let lo = f_lo_hz.min(f_hi_hz).max(first);
    let hi = f_lo_hz.max(f_hi_hz).min(last);
    if hi <= lo {
        return 0.0;
    }
    let half = bin_width_hz / 2.0;
    frequency_hz
        .iter()
        .zip(density)
        .map(|(&f, &p)| {
            let bin_lo = (f - half).max(first);
            let bin_hi = (f + half).min(last);
            let width = bin_hi - bin_lo;
            let overlap = (bin_hi.min(hi) - bin_lo.max(lo)).max(0.0);
            if width > 0.0 {
                p * bin_width_hz * overlap / width
            } else {
                0.0
            }
        })
        .sum()
}

/// [`band_power_of`] applied to a report's PSD.
pub fn band_power(psd: &PsdReport, f_lo_hz: f64, f_hi_hz: f64) -> f64 {
    band_power_of(
        &psd.frequency_hz,
        &psd.density,
        psd.bin_width_hz,
        f_lo_hz,
        f_hi_hz,
    )
}

/// RMS (units) between two frequencies: √[`band_power`].
pub fn band_rms(psd: &PsdReport, f_lo_hz: f64, f_hi_hz: f64) -> f64 {
    band_power(psd, f_lo_hz, f_hi_hz).sqrt()
}

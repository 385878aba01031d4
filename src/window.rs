//! Data windows (tapers) for spectral estimation, in their periodic ("DFT-even") form.
//!
//! A periodic window of length N is the first N points of a symmetric window of length N + 1;
//! it is the form used for spectral analysis, because its DFT has the ideal zeros and its
//! ENBW/coherent gain have the textbook closed forms. `scipy.signal.get_window(name, N)` returns
//! the same form, which the reference tests rely on.
//!
//! # References
//! - F. J. Harris, "On the use of windows for harmonic analysis with the discrete Fourier
//!   transform", Proc. IEEE 66(1), 51–83, 1978 (Hann, Hamming, 4-term Blackman–Harris, Kaiser;
//!   ENBW definition, eq. 11).
//! - G. Heinzel, A. Rüdiger, R. Schilling, "Spectrum and spectral density estimation by the
//!   Discrete Fourier transform (DFT), including a comprehensive list of window functions and
//!   some new flat-top windows", Max-Planck-Institut für Gravitationsphysik, 2002 (HFT95, §C).

use std::fmt;
use std::str::FromStr;

use serde::{Deserialize, Serialize};

/// Hann coefficients a0, a1 of the cosine sum (Harris 1978, eq. 27a).
const HANN: [f64; 2] = [0.5, 0.5];
/// Hamming coefficients a0, a1 (Harris 1978, eq. 30).
const HAMMING: [f64; 2] = [0.54, 0.46];
/// 4-term Blackman–Harris, −92 dB side lobes (Harris 1978, Table 1 / eq. 33).
const BLACKMAN_HARRIS: [f64; 4] = [0.35875, 0.48829, 0.14128, 0.01168];
/// HFT95 flat-top, −95 dB side lobes, 0.0044 dB amplitude flatness
/// (Heinzel, Rüdiger & Schilling 2002, §C, "HFT95").
const HFT95: [f64; 5] = [1.0, 1.938_337_9, 1.304_520_2, 0.402_827_0, 0.035_066_5];

/// Largest Kaiser β accepted; beyond it the window is a spike and I0(β) nears overflow.
pub const KAISER_BETA_MAX: f64 = 100.0;

/// Which window to apply to each segment.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
#[serde(tag = "name", rename_all = "kebab-case")]
pub enum WindowKind {
    /// No taper (boxcar). ENBW 1 bin.
    Rectangular,
    /// Hann (raised cosine). ENBW 1.5 bins; the usual choice for noise.
    #[default]
    Hann,
    /// Hamming 0.54/0.46. ENBW 1.3628 bins.
    Hamming,
    /// 4-term Blackman–Harris (−92 dB). ENBW 2.0044 bins.
    BlackmanHarris,
    /// HFT95 flat-top (Heinzel et al. 2002): for tone amplitudes. ENBW 3.8112 bins.
    FlatTop,
    /// Kaiser–Bessel with shape parameter β (Harris 1978 uses α = β/π).
    Kaiser { beta: f64 },
}

impl fmt::Display for WindowKind {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Self::Rectangular => f.write_str("rectangular"),
            Self::Hann => f.write_str("hann"),
            Self::Hamming => f.write_str("hamming"),
            Self::BlackmanHarris => f.write_str("blackman-harris"),
            Self::FlatTop => f.write_str("flat-top"),
            Self::Kaiser { beta } => write!(f, "kaiser:{beta}"),
        }
    }
}

/// A window name that could not be understood.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("unknown window '{text}': use hann, hamming, blackman-harris, flat-top, rectangular or kaiser:BETA (BETA from 0 to {KAISER_BETA_MAX})")]
pub struct ParseWindowError {
    /// What was given.
    pub text: String,
}

impl FromStr for WindowKind {
    type Err = ParseWindowError;

    fn from_str(text: &str) -> Result<Self, Self::Err> {
        let lower = text.trim().to_ascii_lowercase();
        let err = || ParseWindowError {
            text: text.to_string(),
        };
        Ok(match lower.as_str() {
            "rectangular" | "boxcar" | "none" => Self::Rectangular,
            "hann" | "hanning" => Self::Hann,
            "hamming" => Self::Hamming,
            "blackman-harris" | "blackmanharris" => Self::BlackmanHarris,
            "flat-top" | "flattop" | "hft95" => Self::FlatTop,
            other => {
                let beta_text = other.strip_prefix("kaiser:").ok_or_else(err)?;
                let beta: f64 = beta_text.parse().map_err(|_| err())?;
                if !(0.0..=KAISER_BETA_MAX).contains(&beta) {
                    return Err(err());
                }
                Self::Kaiser { beta }
            }
        })
    }
}

impl WindowKind {
    /// The periodic window of length `len`.
    ///
    /// # Method
    /// Cosine sums: w[n] = Σ_k (−1)^k a_k cos(2πkn/N), n = 0..N−1 (Harris 1978, eq. 32).
    /// Kaiser: w[n] = I0(β√(1 − (2n/N − 1)²)) / I0(β), the first N points of the symmetric
    /// (N+1)-point window (Harris 1978, eq. 46; Kaiser & Schafer 1980).
    ///
    /// ```
    /// use noisesonde::window::WindowKind;
    /// let w = WindowKind::Hann.coefficients(4);
    /// // Periodic Hann of length 4: 0.5 − 0.5 cos(2πn/4) = [0, 0.5, 1, 0.5].
    /// assert!((w[0] - 0.0).abs() < 1e-15 && (w[1] - 0.5).abs() < 1e-15 && (w[2] - 1.0).abs() < 1e-15);
    /// ```
    pub fn coefficients(&self, len: usize) -> Vec<f64> {
        match self {
            Self::Rectangular => vec![1.0; len],
            Self::Hann => cosine_sum(&HANN, len),
            Self::Hamming => cosine_sum(&HAMMING, len),
            Self::BlackmanHarris => cosine_sum(&BLACKMAN_HARRIS, len),
            Self::FlatTop => cosine_sum(&HFT95, len),
            Self::Kaiser { beta } => kaiser(*beta, len),
        }
    }

    /// The cosine-sum coefficients a_k, for windows defined that way.
    pub fn cosine_coefficients(&self) -> Option<&'static [f64]> {
        match self {
            Self::Hann => Some(&HANN),
            Self::Hamming => Some(&HAMMING),
            Self::BlackmanHarris => Some(&BLACKMAN_HARRIS),
            Self::FlatTop => Some(&HFT95),
            Self::Rectangular | Self::Kaiser { .. } => None,
        }
    }
}

fn cosine_sum(a: &[f64], len: usize) -> Vec<f64> {
    let n_f = len as f64;
    (0..len)
        .map(|n| {
            let z = 2.0 * std::f64::consts::PI * n as f64 / n_f;
            a.iter()
                .enumerate()
                .map(|(k, &ak)| {
                    let sign = if k % 2 == 0 { 1.0 } else { -1.0 };
                    sign * ak * (k as f64 * z).cos()
                })
                .sum()
        })
        .collect()
}

fn kaiser(beta: f64, len: usize) -> Vec<f64> {
    // Symmetric window of length M = N + 1, of which the first N points are kept.
    let half_span = len as f64 / 2.0; // (M − 1)/2
    let denom = bessel_i0(beta);
    (0..len)
        .map(|n| {
            let r = (n as f64 - half_span) / half_span;
            let arg = (1.0 - r * r).max(0.0).sqrt();
            bessel_i0(beta * arg) / denom
        })
        .collect()
}

/// Modified Bessel function of the first kind, order 0, by its power series
/// I0(x) = Σ_k ((x/2)^k / k!)² (Abramowitz & Stegun 1964, eq. 9.6.12), summed until a term no
/// longer changes the sum. Accurate to a few ulps for |x| ≤ 100 (all terms are positive).
pub fn bessel_i0(x: f64) -> f64 {
    let half = x / 2.0;
    let mut term = 1.0;
    let mut sum = 1.0;
    let mut k = 1.0;
    loop {
        term *= (half / k) * (half / k);
        sum += term;
        if term <= sum * f64::EPSILON * 0.25 {
            return sum;
        }
        k += 1.0;
    }
}

/// Figures of merit of a window that the spectral scaling needs.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct WindowFigures {
    /// Σ w[n].
    pub sum: f64,
    /// Σ w[n]².
    pub sum_of_squares: f64,
    /// Equivalent noise bandwidth in bins: N Σw² / (Σw)² (Harris 1978, eq. 11).
    pub enbw_bins: f64,
    /// Coherent gain relative to the window's peak: Σw / (N · max w) (Harris 1978, eq. 9).
    pub coherent_gain: f64,
}

impl WindowFigures {
    /// Computes the figures of `w` (non-empty, not all zero).
    pub fn of(w: &[f64]) -> Self {
        let sum: f64 = w.iter().sum();
        let sum_of_squares: f64 = w.iter().map(|v| v * v).sum();
        let peak = w.iter().cloned().fold(0.0_f64, f64::max);
        let len = w.len() as f64;
        Self {
            sum,
            sum_of_squares,
            enbw_bins: len * sum_of_squares / (sum * sum),
            coherent_gain: sum / (len * peak),
        }
    }
}

/// Overlap correlation ρ(shift) = Σ w[n] w[n+shift] / Σ w² (Harris 1978, eq. 26; Welch 1967).
pub fn overlap_correlation(w: &[f64], shift_len: usize) -> f64 {
    if shift_len >= w.len() {
        return 0.0;
    }
    let num: f64 = w.iter().zip(&w[shift_len..]).map(|(a, b)| a * b).sum();
    let den: f64 = w.iter().map(|v| v * v).sum();
    num / den
}

//! A, C and Z frequency weightings from their analytic definitions.
//!
//! # Method
//! IEC 61672-1:2013 Annex E defines the weightings by four pole frequencies derived from a few
//! design constants (f_r = 1000 Hz, f_L = 10^1.5 Hz, f_H = 10^3.9 Hz, f_A = 10^2.45 Hz, D² = ½):
//!
//! - f₁,₄ = [(−b ∓ √(b² − 4c)) / 2]^½ with b = [f_r² + f_L²f_H²/f_r² − D(f_L² + f_H²)] / (1 − D)
//!   and c = f_L²f_H². f₄ is taken from the "+" root and f₁² = c / f₄² (the product of the two
//!   roots is c), which avoids the cancellation of the "−" root.
//! - f₂,₃ = f_A·(3 ∓ √5)/2.
//! - C(f) = 20 lg[f₄²f² / ((f² + f₁²)(f² + f₄²))] − C₁₀₀₀
//! - A(f) = 20 lg[f₄²f⁴ / ((f² + f₁²)(f² + f₂²)^½(f² + f₃²)^½(f² + f₄²))] − A₁₀₀₀
//! - Z(f) = 0 dB.
//!
//! A₁₀₀₀ and C₁₀₀₀ are the unnormalised curves at 1 kHz. This module computes them exactly from
//! the same formula (A₁₀₀₀ = −1.999656 dB, C₁₀₀₀ = −0.061902 dB) instead of using the standard's
//! rounded −2.000 and −0.062 dB, so every weighting is 0 dB at 1 kHz to rounding; the rounded
//! constants would shift every A value by 0.0003 dB.
//!
//! The product is evaluated as factors that each lie in [0, 1] (f²/(f² + f₁²), f₄²/(f² + f₄²),
//! f/√(f² + f₂²), f/√(f² + f₃²)), so no power of f overflows.
//!
//! # References
//! - IEC 61672-1:2013, *Electroacoustics — Sound level meters — Part 1: Specifications*,
//!   Annex E (analytical expressions for frequency weightings C, A and Z) and Table 3.

use std::fmt;
use std::str::FromStr;

use serde::{Deserialize, Serialize};

use crate::error::SettingsError;
use crate::units::power_db;

use super::REFERENCE_FREQUENCY_HZ;

/// log10 of f_L, the low design frequency of the C weighting: f_L = 10^1.5 Hz
/// (IEC 61672-1:2013 Annex E).
pub const LOW_DESIGN_LOG10_HZ: f64 = 1.5;
/// log10 of f_H, the high design frequency of the C weighting: f_H = 10^3.9 Hz
/// (IEC 61672-1:2013 Annex E).
pub const HIGH_DESIGN_LOG10_HZ: f64 = 3.9;
/// log10 of f_A, the design frequency of the A weighting's extra poles: f_A = 10^2.45 Hz
/// (IEC 61672-1:2013 Annex E).
pub const A_DESIGN_LOG10_HZ: f64 = 2.45;
/// D², the squared relative response at f_L and f_H (−3 dB): D² = ½ (IEC 61672-1:2013 Annex E).
pub const DESIGN_D_SQUARED: f64 = 0.5;

/// Frequency weighting applied to a spectrum before its power is summed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Weighting {
    /// A weighting: the ear at low levels; −19.1 dB at 100 Hz, +1.3 dB at 2.5 kHz.
    A,
    /// C weighting: nearly flat from 31.5 Hz to 8 kHz; for peak and low-frequency content.
    C,
    /// Z weighting: flat (no weighting), 0 dB at every frequency.
    #[default]
    Z,
}

impl fmt::Display for Weighting {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            Self::A => "a",
            Self::C => "c",
            Self::Z => "z",
        })
    }
}

impl FromStr for Weighting {
    type Err = SettingsError;

    /// Parses `a`, `c` or `z` in either case, ignoring surrounding spaces.
    fn from_str(text: &str) -> Result<Self, Self::Err> {
        match text.trim().to_ascii_lowercase().as_str() {
            "a" => Ok(Self::A),
            "c" => Ok(Self::C),
            "z" => Ok(Self::Z),
            _ => Err(SettingsError::UnknownChoice {
                what: "frequency weighting",
                text: text.to_string(),
                choices: "a c z",
            }),
        }
    }
}

/// The pole frequencies f₁, f₂, f₃, f₄ in Hz, derived from the design constants.
///
/// # Method
/// See the [module](self) documentation: f₄ from the "+" root of the quadratic in f²,
/// f₁² = c/f₄², f₂,₃ = f_A(3 ∓ √5)/2.
///
/// # Units
/// Hz.
///
/// # References
/// IEC 61672-1:2013 Annex E, which quotes f₁ = 20.598997, f₂ = 107.65265, f₃ = 737.86223 and
/// f₄ = 12194.217 Hz.
///
/// ```
/// let [f1, f2, f3, f4] = noisesonde::acoustics::weighting::pole_frequencies_hz();
/// assert!((f1 - 20.598997).abs() < 1e-6 && (f4 - 12194.217).abs() < 1e-3);
/// assert!((f2 - 107.65265).abs() < 1e-5 && (f3 - 737.86223).abs() < 1e-5);
/// ```
pub fn pole_frequencies_hz() -> [f64; 4] {
    let fr2 = REFERENCE_FREQUENCY_HZ * REFERENCE_FREQUENCY_HZ;
    let fl2 = 10f64.powf(2.0 * LOW_DESIGN_LOG10_HZ);
    let fh2 = 10f64.powf(2.0 * HIGH_DESIGN_LOG10_HZ);
    let d = DESIGN_D_SQUARED.sqrt();
    let b = (fr2 + fl2 * fh2 / fr2 - d * (fl2 + fh2)) / (1.0 - d);
    let c = fl2 * fh2;
    let f4_squared = (-b + (b * b - 4.0 * c).sqrt()) / 2.0;
    let f1_squared = c / f4_squared;
    let fa = 10f64.powf(A_DESIGN_LOG10_HZ);
    let root5 = 5f64.sqrt();
    [
        f1_squared.sqrt(),
        fa * (3.0 - root5) / 2.0,
        fa * (3.0 + root5) / 2.0,
        f4_squared.sqrt(),
    ]
}

/// One weighting curve with its poles and 1 kHz normalisation computed once.
#[derive(Debug, Clone, Copy)]
struct Curve {
    weighting: Weighting,
    f1_squared: f64,
    f2_squared: f64,
    f3_squared: f64,
    f4_squared: f64,
    /// Unnormalised amplitude response at f_r (10^(A₁₀₀₀/20) or 10^(C₁₀₀₀/20)).
    amplitude_at_reference: f64,
}

impl Curve {
    fn new(weighting: Weighting) -> Self {
        let [f1, f2, f3, f4] = pole_frequencies_hz();
        let mut curve = Self {
            weighting,
            f1_squared: f1 * f1,
            f2_squared: f2 * f2,
            f3_squared: f3 * f3,
            f4_squared: f4 * f4,
            amplitude_at_reference: 1.0,
        };
        curve.amplitude_at_reference = curve.unnormalised_amplitude(REFERENCE_FREQUENCY_HZ);
        curve
    }

    /// The Annex E ratio before normalisation, as a product of factors in [0, 1].
    fn unnormalised_amplitude(&self, frequency_hz: f64) -> f64 {
        let f = frequency_hz.abs();
        let f_squared = f * f;
        if f_squared.is_infinite() {
            // Every A and C factor tends to 0 (high-pass poles pass, f₄ low-pass stops).
            return match self.weighting {
                Weighting::Z => 1.0,
                Weighting::A | Weighting::C => 0.0,
            };
        }
        let high_pass_f1 = f_squared / (f_squared + self.f1_squared);
        let low_pass_f4 = self.f4_squared / (f_squared + self.f4_squared);
        match self.weighting {
            Weighting::Z => 1.0,
            Weighting::C => high_pass_f1 * low_pass_f4,
            Weighting::A => {
                let high_pass_f2 = f / (f_squared + self.f2_squared).sqrt();
                let high_pass_f3 = f / (f_squared + self.f3_squared).sqrt();
                high_pass_f1 * low_pass_f4 * high_pass_f2 * high_pass_f3
            }
        }
    }

    fn power_gain(&self, frequency_hz: f64) -> f64 {
        if self.weighting == Weighting::Z {
            return 1.0;
        }
        let ratio = self.unnormalised_amplitude(frequency_hz) / self.amplitude_at_reference;
        ratio * ratio
    }
}

impl Weighting {
    /// Linear power factor |W(f)|² of the weighting at `frequency_hz`.
    ///
    /// # Method
    /// The square of the Annex E amplitude ratio divided by its value at 1 kHz (see the
    /// [module](self) documentation). A and C give exactly 0 at 0 Hz and tend to 0 as f → ∞;
    /// Z gives 1 everywhere. The frequency enters through f², so −f gives the same as f; NaN
    /// gives NaN for A and C.
    ///
    /// # Units
    /// `frequency_hz` in Hz; the result is a dimensionless power ratio (1 at 1 kHz).
    ///
    /// # References
    /// IEC 61672-1:2013 Annex E.
    ///
    /// ```
    /// use noisesonde::acoustics::Weighting;
    /// assert_eq!(Weighting::A.power_gain(0.0), 0.0);
    /// assert!((Weighting::A.power_gain(1000.0) - 1.0).abs() < 1e-12);
    /// // IEC 61672-1:2013 Table 3: A is −19.1 dB at 100 Hz (a power factor of about 0.0122).
    /// assert!((10.0 * Weighting::A.power_gain(100.0).log10() + 19.1).abs() < 0.05);
    /// ```
    pub fn power_gain(self, frequency_hz: f64) -> f64 {
        Curve::new(self).power_gain(frequency_hz)
    }

    /// Gain of the weighting at `frequency_hz` in dB: 10·lg [`power_gain`](Self::power_gain).
    ///
    /// # Method
    /// 10·lg|W(f)|², the same as 20·lg of the Annex E amplitude ratio minus A₁₀₀₀ or C₁₀₀₀;
    /// −∞ at 0 Hz for A and C.
    ///
    /// # Units
    /// `frequency_hz` in Hz; the result in dB.
    ///
    /// # References
    /// IEC 61672-1:2013 Annex E; its Table 3 lists the values at the nominal frequencies.
    ///
    /// ```
    /// use noisesonde::acoustics::Weighting;
    /// // IEC 61672-1:2013 Table 3: A = +1.3 dB and C = −0.3 dB at 2.5 kHz (10^3.4 Hz exactly).
    /// let f = 10f64.powf(3.4);
    /// assert!((Weighting::A.gain_db(f) - 1.3).abs() < 0.05);
    /// assert!((Weighting::C.gain_db(f) + 0.3).abs() < 0.05);
    /// assert_eq!(Weighting::Z.gain_db(f), 0.0);
    /// ```
    pub fn gain_db(self, frequency_hz: f64) -> f64 {
        power_db(self.power_gain(frequency_hz), 1.0)
    }

    /// Power factors for the bins of a uniform grid: element k is
    /// [`power_gain`](Self::power_gain)(k·`bin_width_hz`), k = 0..`bins`.
    ///
    /// # Method
    /// The curve's poles and normalisation are computed once, then each bin centre is
    /// evaluated. The bin width is not checked here (a NaN width gives NaN factors for A and C);
    /// [`BandLevelPlan::new`](super::levels::BandLevelPlan::new) checks it before calling.
    ///
    /// # Units
    /// `bin_width_hz` in Hz; the factors are dimensionless power ratios.
    ///
    /// # References
    /// IEC 61672-1:2013 Annex E.
    ///
    /// ```
    /// use noisesonde::acoustics::Weighting;
    /// let gains = Weighting::C.power_gains(250.0, 5); // 0, 250, 500, 750, 1000 Hz
    /// assert_eq!(gains.len(), 5);
    /// assert_eq!(gains[0], 0.0);
    /// assert!((gains[4] - 1.0).abs() < 1e-12);
    /// ```
    pub fn power_gains(self, bin_width_hz: f64, bins: usize) -> Vec<f64> {
        let curve = Curve::new(self);
        (0..bins)
            .map(|k| curve.power_gain(k as f64 * bin_width_hz))
            .collect()
    }

    /// The unnormalised curve's gain at 1 kHz in dB: A₁₀₀₀ for A, C₁₀₀₀ for C, 0 for Z.
    ///
    /// # Method
    /// 20·lg of the Annex E ratio at f_r = 1000 Hz; [`gain_db`](Self::gain_db) subtracts it.
    ///
    /// # Units
    /// dB.
    ///
    /// # References
    /// IEC 61672-1:2013 Annex E, which rounds the constants to A₁₀₀₀ = −2.000 dB and
    /// C₁₀₀₀ = −0.062 dB.
    ///
    /// ```
    /// use noisesonde::acoustics::Weighting;
    /// assert!((Weighting::A.normalisation_db() + 2.000).abs() < 5e-4);
    /// assert!((Weighting::C.normalisation_db() + 0.062).abs() < 5e-4);
    /// ```
    pub fn normalisation_db(self) -> f64 {
        let amplitude = Curve::new(self).amplitude_at_reference;
        2.0 * power_db(amplitude, 1.0)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_round_trip_and_reject_others() {
        for w in [Weighting::A, Weighting::C, Weighting::Z] {
            assert_eq!(w.to_string().parse::<Weighting>(), Ok(w));
            assert_eq!(
                w.to_string().to_uppercase().parse::<Weighting>(),
                Ok(w),
                "upper case accepted"
            );
        }
        assert_eq!(" A ".parse::<Weighting>(), Ok(Weighting::A));
        for bad in ["", "b", "aa", "dBA", "zz"] {
            assert!(bad.parse::<Weighting>().is_err(), "{bad}");
        }
    }

    #[test]
    fn extreme_frequencies_do_not_overflow() {
        // The product form keeps every factor in [0, 1]: A and C vanish at both ends.
        for w in [Weighting::A, Weighting::C] {
            assert_eq!(w.power_gain(0.0), 0.0);
            assert_eq!(w.power_gain(1e200), 0.0);
            assert_eq!(w.power_gain(f64::INFINITY), 0.0);
            assert!(w.power_gain(1e-200) >= 0.0);
            assert!(w.power_gain(f64::NAN).is_nan());
            assert_eq!(w.power_gain(-500.0), w.power_gain(500.0));
        }
        assert_eq!(Weighting::Z.power_gain(f64::INFINITY), 1.0);
    }
}

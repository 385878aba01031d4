//! Octave and one-third-octave bands by the base-10 formulas, with ISO 266 nominal labels.
//!
//! # Method
//! With the octave ratio G = 10^(3/10), the reference frequency f_r = 1000 Hz and b bands per
//! octave (1 or 3 here), band x has the exact mid-band frequency
//! f_m = f_r·G^(x/b) for odd b, f_r·G^((2x+1)/(2b)) for even b,
//! and band edges f₁,₂ = f_m·G^(∓1/(2b)). Every edge is computed as f_r·G^(n/(2b)) from one
//! integer n (n = 2x ∓ 1 for odd b), so the upper edge of band x and the lower edge of band
//! x + 1 are the same floating-point number and contiguous bands tile their span exactly.
//! G^(n/(2b)) is evaluated as 10^(3n/(20b)).
//!
//! Bands are labelled with the nominal mid-band frequencies of ISO 266 (R10 preferred numbers,
//! 10 Hz … 20 kHz for thirds, 16 Hz … 16 kHz for octaves); the exact f_m differ from them by up
//! to a few percent (e.g. 31.5 → 31.6228 Hz) and are what the computations use.
//!
//! # References
//! - IEC 61260-1:2014, *Electroacoustics — Octave-band and fractional-octave-band filters —
//!   Part 1: Specifications*, clause 5 (octave ratio, exact mid-band and band-edge frequencies).
//! - ISO 266:1997, *Acoustics — Preferred frequencies* (nominal labels).

use std::fmt;
use std::ops::RangeInclusive;
use std::str::FromStr;

use serde::{Deserialize, Serialize};

use crate::error::SettingsError;

use super::REFERENCE_FREQUENCY_HZ;

/// Decimal exponent of the octave ratio G = 10^(3/10), as numerator and denominator
/// (IEC 61260-1:2014 clause 5, base-ten system).
const OCTAVE_RATIO_LOG10: (i32, i32) = (3, 10);

/// Mantissas of the ISO 266 nominal one-third-octave frequencies (R10 preferred numbers),
/// one decade from 100 upwards. Every one appears in the 16 Hz … 16 kHz list of the shared
/// reference file refs.txt §3 (computed with numpy 2.4.6 / scipy 1.17.1); their extension to
/// 10 Hz, 12.5 Hz and 20 kHz by continuing the series is from memory (ISO 266).
const R10_MANTISSAS: [f64; 10] = [
    100.0, 125.0, 160.0, 200.0, 250.0, 315.0, 400.0, 500.0, 630.0, 800.0,
];

/// Band indices x of the labelled one-third-octave bands: 10 Hz (x = −20) to 20 kHz (x = 13),
/// the audio range of the ISO 266 labels (common practice).
const THIRD_INDICES: RangeInclusive<i32> = -20..=13;
/// Band indices x of the labelled octave bands: 16 Hz (x = −6) to 16 kHz (x = 4) (common
/// practice; the same range as refs.txt §3).
const OCTAVE_INDICES: RangeInclusive<i32> = -6..=4;

/// Bandwidth of a band family: whole octaves or one-third octaves.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum BandFraction {
    /// Octave bands, b = 1: 16 Hz … 16 kHz.
    Octave,
    /// One-third-octave bands, b = 3: 10 Hz … 20 kHz.
    #[default]
    Third,
}

impl fmt::Display for BandFraction {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            Self::Octave => "octave",
            Self::Third => "third",
        })
    }
}

impl FromStr for BandFraction {
    type Err = SettingsError;

    /// Parses `octave` or `third` in either case, ignoring surrounding spaces.
    fn from_str(text: &str) -> Result<Self, Self::Err> {
        match text.trim().to_ascii_lowercase().as_str() {
            "octave" => Ok(Self::Octave),
            "third" => Ok(Self::Third),
            _ => Err(SettingsError::UnknownChoice {
                what: "band fraction",
                text: text.to_string(),
                choices: "octave third",
            }),
        }
    }
}

/// One band: its index, ISO 266 label, exact mid-band frequency and edges.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Band {
    /// Band number x: the exponent in f_m = 1000·G^(x/b); 0 is the 1 kHz band.
    pub index: i32,
    /// Nominal mid-band frequency (ISO 266 label), Hz: for display only.
    pub nominal_hz: f64,
    /// Exact mid-band frequency f_m, Hz: the geometric mean of the edges.
    pub mid_hz: f64,
    /// Lower band-edge frequency f₁ = f_m·G^(−1/(2b)), Hz.
    pub lower_hz: f64,
    /// Upper band-edge frequency f₂ = f_m·G^(+1/(2b)), Hz.
    pub upper_hz: f64,
}

/// G^(n/(2b)) = 10^(3n/(20b)): one power of the octave ratio, from integers only.
fn ratio_power(n: i32, b: i32) -> f64 {
    let (num, den) = OCTAVE_RATIO_LOG10;
    let exponent = f64::from(num * n) / f64::from(den * 2 * b);
    10f64.powf(exponent)
}

/// Numerator n of the exact mid-band frequency f_r·G^(n/(2b)) of band x: n = 2x for odd b,
/// 2x + 1 for even b (IEC 61260-1:2014 clause 5).
fn mid_numerator(b: i32, x: i32) -> i32 {
    if b % 2 == 1 {
        2 * x
    } else {
        2 * x + 1
    }
}

/// Exact mid-band frequency of band x for b bands per octave, Hz.
fn mid_frequency_hz(b: i32, x: i32) -> f64 {
    REFERENCE_FREQUENCY_HZ * ratio_power(mid_numerator(b, x), b)
}

/// Lower and upper band-edge frequencies of band x for b bands per octave, Hz.
fn edges_hz(b: i32, x: i32) -> (f64, f64) {
    let n = mid_numerator(b, x);
    (
        REFERENCE_FREQUENCY_HZ * ratio_power(n - 1, b),
        REFERENCE_FREQUENCY_HZ * ratio_power(n + 1, b),
    )
}

/// ISO 266 nominal one-third-octave label of third-octave band x (R10 series), Hz.
fn third_nominal_hz(x: i32) -> f64 {
    // x = 10·decade + m: mantissa m of the R10 decade, label = mantissa·10^(decade + 1).
    let mantissa = R10_MANTISSAS[x.rem_euclid(10) as usize];
    let power = x.div_euclid(10) + 1;
    // Whole powers of ten are exact in f64; dividing (not multiplying by 0.1) keeps 12.5 exact.
    let ten_power = 10f64.powi(power.abs());
    if power >= 0 {
        mantissa * ten_power
    } else {
        mantissa / ten_power
    }
}

impl BandFraction {
    /// Bands per octave, b: 1 for octaves, 3 for thirds.
    pub fn bands_per_octave(self) -> i32 {
        match self {
            Self::Octave => 1,
            Self::Third => 3,
        }
    }

    /// Indices x of the labelled bands: −6..=4 for octaves (16 Hz … 16 kHz), −20..=13 for
    /// thirds (10 Hz … 20 kHz).
    pub fn index_range(self) -> RangeInclusive<i32> {
        match self {
            Self::Octave => OCTAVE_INDICES,
            Self::Third => THIRD_INDICES,
        }
    }

    /// Band x, or `None` outside [`index_range`](Self::index_range).
    ///
    /// # Method
    /// f_m = 1000·G^(x/b) (b odd), edges 1000·G^((2x ∓ 1)/(2b)), G = 10^(3/10); the nominal
    /// label is the ISO 266 R10 number (for octaves, that of third-octave band 3x).
    ///
    /// # Units
    /// Hz.
    ///
    /// # References
    /// IEC 61260-1:2014 clause 5; ISO 266:1997.
    ///
    /// ```
    /// use noisesonde::acoustics::BandFraction;
    /// let band = BandFraction::Octave.band(0).unwrap();
    /// assert_eq!((band.nominal_hz, band.mid_hz), (1000.0, 1000.0));
    /// // Edges 1000·10^(∓3/20): 707.9458 and 1412.5375 Hz.
    /// assert!((band.lower_hz - 707.945784).abs() < 1e-6);
    /// assert!((band.upper_hz - 1412.537545).abs() < 1e-6);
    /// assert_eq!(BandFraction::Octave.band(5), None);
    /// ```
    pub fn band(self, index: i32) -> Option<Band> {
        if !self.index_range().contains(&index) {
            return None;
        }
        let b = self.bands_per_octave();
        let (lower_hz, upper_hz) = edges_hz(b, index);
        let nominal_hz = match self {
            Self::Octave => third_nominal_hz(3 * index),
            Self::Third => third_nominal_hz(index),
        };
        Some(Band {
            index,
            nominal_hz,
            mid_hz: mid_frequency_hz(b, index),
            lower_hz,
            upper_hz,
        })
    }

    /// Every labelled band of this fraction, lowest first.
    pub fn bands(self) -> Vec<Band> {
        self.index_range()
            .filter_map(|index| self.band(index))
            .collect()
    }
}

/// Every labelled band whose edges lie inside [`f_lo_hz`, `f_hi_hz`], lowest first.
///
/// # Method
/// Keeps band x when f₁ ≥ `f_lo_hz` and f₂ ≤ `f_hi_hz`; for a PSD up to the Nyquist frequency,
/// `bands_between(fraction, 0.0, nyquist_hz)` gives the bands that the spectrum covers fully.
/// The kept bands are contiguous and share their edges exactly. A NaN limit, or
/// `f_lo_hz > f_hi_hz`, gives no bands.
///
/// # Units
/// Hz.
///
/// # References
/// IEC 61260-1:2014 clause 5.
///
/// ```
/// use noisesonde::acoustics::{bands_between, BandFraction};
/// // A 48 kHz recording: thirds up to 20 kHz (upper edge 22.39 kHz < 24 kHz).
/// let bands = bands_between(BandFraction::Third, 0.0, 24_000.0);
/// assert_eq!(bands.len(), 34);
/// assert_eq!((bands[0].nominal_hz, bands[33].nominal_hz), (10.0, 20_000.0));
/// // An 8 kHz recording: octaves up to 2 kHz (the 4 kHz band reaches 5623 Hz).
/// let octaves = bands_between(BandFraction::Octave, 0.0, 4_000.0);
/// assert_eq!(octaves.last().unwrap().nominal_hz, 2000.0);
/// ```
pub fn bands_between(fraction: BandFraction, f_lo_hz: f64, f_hi_hz: f64) -> Vec<Band> {
    fraction
        .bands()
        .into_iter()
        .filter(|band| band.lower_hz >= f_lo_hz && band.upper_hz <= f_hi_hz)
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn even_rule_gives_the_half_octave_reference_values() {
        // refs.txt §3 (numpy 2.4.6 / scipy 1.17.1), IEC 61260-1:2014 clause 5 even-b rule:
        // b = 2, x = 0: fm = 1188.5022274370185; x = −1: 841.3951416451952.
        let rel = |a: f64, b: f64| (a - b).abs() / b;
        assert!(rel(mid_frequency_hz(2, 0), 1_188.502_227_437_018_5) < 1e-13);
        assert!(rel(mid_frequency_hz(2, -1), 841.395_141_645_195_2) < 1e-13);
        // Even b: the edges are 1000·G^(x/b) and 1000·G^((x+1)/b), so 1000 Hz is an edge.
        assert_eq!(edges_hz(2, 0).0, 1000.0);
        assert_eq!(edges_hz(2, -1).1, 1000.0);
    }

    #[test]
    fn names_round_trip_and_reject_others() {
        for fraction in [BandFraction::Octave, BandFraction::Third] {
            assert_eq!(fraction.to_string().parse(), Ok(fraction));
            assert_eq!(fraction.to_string().to_uppercase().parse(), Ok(fraction));
        }
        for bad in ["", "1/3", "thirds", "oct"] {
            assert!(bad.parse::<BandFraction>().is_err(), "{bad}");
        }
    }

    #[test]
    fn limits_that_are_nan_or_reversed_give_no_bands() {
        assert!(bands_between(BandFraction::Third, f64::NAN, 1e5).is_empty());
        assert!(bands_between(BandFraction::Third, 0.0, f64::NAN).is_empty());
        assert!(bands_between(BandFraction::Third, 2000.0, 1000.0).is_empty());
        assert_eq!(
            bands_between(BandFraction::Octave, 0.0, f64::INFINITY).len(),
            11
        );
    }
}

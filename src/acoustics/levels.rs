//! Octave and one-third-octave band levels of a one-sided PSD, with a frequency weighting.
//!
//! # Method
//! The input is a one-sided power spectral density P on a uniform grid, bin k at f_k = k·Δf
//! (k = 0 … L−1), as [`crate::spectral`] produces it. The weighting is applied per bin, at the
//! bin centre: P_w,k = P_k·|W(f_k)|². The weighted density is then integrated with the crate's
//! band integration, [`crate::bands::band_power_of`], which spreads bin k's power P_w,k·Δf
//! evenly over [f_k − Δf/2, f_k + Δf/2] ∩ [0, f_{L−1}] and counts partial bins at band edges in
//! proportion. Hence:
//!
//! - band power: P_band = ∫ over [f₁, f₂] of the weighted bins;
//! - the bands of [`super::octave`] share their edges exactly, so the band powers add up to the
//!   power integrated over their combined span [f₁ of the first band, f₂ of the last]
//!   (`overall_power`) to rounding — the check that the band sum equals the overall level;
//! - the weighted power of the whole grid is Σ_k P_k·|W(f_k)|²·Δf (`total_power`).
//!
//! Weighting at the bin centre is a piecewise-constant approximation of ∫P(f)|W(f)|²df; it is
//! accurate where |W|² changes little across one bin (for A below 50 Hz, use bins of a few Hz
//! or less). Bands narrower than about two bins are integrated consistently but resolve
//! little; [`BandLevels::bin_width_hz`] is reported so a reader can judge.
//!
//! Levels are 10·lg(P / P₀) through [`crate::units::power_db`], with P₀ = (20 µPa)² for a
//! sound pressure in Pa and 1 unit² otherwise ([`LevelReference`]).
//!
//! # References
//! - IEC 61672-1:2013 Annex E (weightings); IEC 61260-1:2014 clause 5 (bands).
//! - Sound pressure level reference p₀ = 20 µPa: IEC 61672-1:2013 clause 3 (from memory).

use serde::{Deserialize, Serialize};

use crate::bands::band_power_of;
use crate::units::power_db;

use super::octave::{bands_between, Band, BandFraction};
use super::weighting::Weighting;
use super::AcousticsError;

/// Reference sound pressure p₀ = 20 µPa for sound pressure levels in air
/// (IEC 61672-1:2013 clause 3, from memory; REFERENCES.md §9 uses it).
pub const SOUND_PRESSURE_REFERENCE_PA: f64 = 20e-6;
/// Unit name of a calibrated sound pressure, the pascal (SI).
pub const PASCAL_UNIT: &str = "Pa";
/// Fewest bins a PSD needs for band levels: two, so the grid has a span (common practice).
pub const MIN_BINS: usize = 2;

/// The power a level is referred to, and how to write it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LevelReference {
    /// Unit of the samples, e.g. `Pa`, `V`, `FS`.
    pub unit: String,
    /// Reference power P₀ in `unit`²: (20 µPa)² = 4e-10 Pa² for `Pa`, otherwise 1.
    pub power: f64,
    /// How a level in dB re this reference is written, e.g. `dB re 20 uPa`, `dB re 1 V^2`.
    pub label: String,
}

impl LevelReference {
    /// The reference for samples in `unit`: (20 µPa)² when `unit` is exactly `Pa` (sound
    /// pressure level), else 1 `unit`² (dB re 1 V², or dB re 1 FS² for uncalibrated audio,
    /// where a full-scale sine is −3.01 dB).
    ///
    /// # Units
    /// `power` in `unit`².
    ///
    /// # References
    /// p₀ = 20 µPa: IEC 61672-1:2013 clause 3 (from memory); REFERENCES.md §9 gives
    /// 1 Pa = 93.9794 dB SPL.
    ///
    /// ```
    /// use noisesonde::acoustics::LevelReference;
    /// let spl = LevelReference::for_unit("Pa");
    /// assert!((spl.level_db(1.0) - 93.979_400).abs() < 1e-6); // 1 Pa² (1 Pa rms)
    /// let volts = LevelReference::for_unit("V");
    /// assert_eq!((volts.power, volts.label.as_str()), (1.0, "dB re 1 V^2"));
    /// ```
    pub fn for_unit(unit: &str) -> Self {
        if unit == PASCAL_UNIT {
            Self {
                unit: unit.to_string(),
                power: SOUND_PRESSURE_REFERENCE_PA * SOUND_PRESSURE_REFERENCE_PA,
                label: "dB re 20 uPa".to_string(),
            }
        } else {
            Self {
                unit: unit.to_string(),
                power: 1.0,
                label: format!("dB re 1 {unit}^2"),
            }
        }
    }

    /// Level of `power` (in `unit`²): 10·lg(power / P₀) dB, −∞ for zero power.
    pub fn level_db(&self, power: f64) -> f64 {
        power_db(power, self.power)
    }

    fn check(&self) -> Result<(), AcousticsError> {
        if self.power.is_finite() && self.power > 0.0 {
            Ok(())
        } else {
            Err(AcousticsError::ReferencePower { power: self.power })
        }
    }
}

/// Writes a non-finite level (−∞ dB for zero power) as JSON `null` and reads `null` back as −∞,
/// so that reports round-trip.
mod level_serde {
    use serde::{Deserialize, Deserializer, Serializer};

    pub fn serialize<S: Serializer>(level_db: &f64, serializer: S) -> Result<S::Ok, S::Error> {
        if level_db.is_finite() {
            serializer.serialize_some(level_db)
        } else {
            serializer.serialize_none()
        }
    }

    pub fn deserialize<'de, D: Deserializer<'de>>(deserializer: D) -> Result<f64, D::Error> {
        Ok(Option::<f64>::deserialize(deserializer)?.unwrap_or(f64::NEG_INFINITY))
    }
}

/// Power and level of one band.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct BandPower {
    /// The band.
    pub band: Band,
    /// Weighted power in the band, unit².
    pub power: f64,
    /// 10·lg(power / P₀), dB re [`BandLevels::reference`]; −∞ (`null` in JSON) for zero power.
    #[serde(with = "level_serde")]
    pub level_db: f64,
}

/// Band powers and levels of one spectrum, with their overall sum.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BandLevels {
    /// Octave or one-third octave.
    pub fraction: BandFraction,
    /// Weighting applied per bin before integration.
    pub weighting: Weighting,
    /// Bin spacing Δf of the PSD, Hz.
    pub bin_width_hz: f64,
    /// Lower edge of the first band, Hz.
    pub lower_hz: f64,
    /// Upper edge of the last band, Hz.
    pub upper_hz: f64,
    /// Every band that fits in the PSD's grid, lowest first.
    pub bands: Vec<BandPower>,
    /// Weighted power over [`lower_hz`, `upper_hz`], unit²: equals the sum of the band powers.
    pub overall_power: f64,
    /// Level of `overall_power`, dB re `reference`.
    #[serde(with = "level_serde")]
    pub overall_level_db: f64,
    /// Weighted power of the whole grid, Σ_k P_k·|W(f_k)|²·Δf, unit² (includes what lies
    /// outside the bands).
    pub total_power: f64,
    /// Level of `total_power`, dB re `reference`.
    #[serde(with = "level_serde")]
    pub total_level_db: f64,
    /// Reference power of the levels.
    pub reference: LevelReference,
}

/// Precomputed bands, bin frequencies and per-bin weighting factors for one PSD grid.
#[derive(Debug, Clone)]
pub struct BandLevelPlan {
    fraction: BandFraction,
    weighting: Weighting,
    bin_width_hz: f64,
    frequency_hz: Vec<f64>,
    power_gains: Vec<f64>,
    bands: Vec<Band>,
    reference: LevelReference,
}

impl BandLevelPlan {
    /// Checks the grid and prepares the bands that fit in [0, (bins − 1)·Δf].
    ///
    /// # Method
    /// Bin frequencies k·Δf; weighting factors from [`Weighting::power_gains`]; bands from
    /// [`bands_between`]`(fraction, 0, (bins − 1)·Δf)`.
    ///
    /// # Units
    /// `bin_width_hz` in Hz; `reference.power` in unit².
    ///
    /// # Errors
    /// [`AcousticsError::BinWidth`] unless Δf is finite and > 0; [`AcousticsError::TooFewBins`]
    /// below [`MIN_BINS`]; [`AcousticsError::ReferencePower`] unless P₀ is finite and > 0;
    /// [`AcousticsError::NoBandFits`] when the grid ends below the first band's upper edge.
    ///
    /// # References
    /// IEC 61672-1:2013 Annex E; IEC 61260-1:2014 clause 5.
    pub fn new(
        fraction: BandFraction,
        weighting: Weighting,
        bin_width_hz: f64,
        bins: usize,
        reference: LevelReference,
    ) -> Result<Self, AcousticsError> {
        if !(bin_width_hz.is_finite() && bin_width_hz > 0.0) {
            return Err(AcousticsError::BinWidth { bin_width_hz });
        }
        if bins < MIN_BINS {
            return Err(AcousticsError::TooFewBins {
                bins,
                min: MIN_BINS,
            });
        }
        reference.check()?;
        let frequency_hz: Vec<f64> = (0..bins).map(|k| k as f64 * bin_width_hz).collect();
        let highest_hz = (bins - 1) as f64 * bin_width_hz;
        let bands = bands_between(fraction, 0.0, highest_hz);
        if bands.is_empty() {
            return Err(AcousticsError::NoBandFits {
                fraction,
                highest_hz,
            });
        }
        Ok(Self {
            fraction,
            weighting,
            bin_width_hz,
            power_gains: weighting.power_gains(bin_width_hz, bins),
            frequency_hz,
            bands,
            reference,
        })
    }

    /// The bands this plan integrates, lowest first.
    pub fn bands(&self) -> &[Band] {
        &self.bands
    }

    /// Bins the plan expects.
    pub fn bins(&self) -> usize {
        self.frequency_hz.len()
    }

    /// The weighted density P_k·|W(f_k)|², unit²/Hz, after checking `density`.
    ///
    /// # Errors
    /// [`AcousticsError::DensityLength`] if `density` does not have [`bins`](Self::bins)
    /// values; [`AcousticsError::Density`] for a negative or non-finite value.
    pub fn weighted_density(&self, density: &[f64]) -> Result<Vec<f64>, AcousticsError> {
        if density.len() != self.frequency_hz.len() {
            return Err(AcousticsError::DensityLength {
                expected: self.frequency_hz.len(),
                given: density.len(),
            });
        }
        density
            .iter()
            .zip(&self.power_gains)
            .enumerate()
            .map(|(index, (&value, &gain))| {
                if value.is_finite() && value >= 0.0 {
                    Ok(value * gain)
                } else {
                    Err(AcousticsError::Density {
                        index,
                        frequency_hz: self.frequency_hz[index],
                        value,
                    })
                }
            })
            .collect()
    }

    /// Band powers and levels of `density` (one-sided, unit²/Hz, bin k at k·Δf).
    ///
    /// # Method
    /// See the [module](self) documentation: per-bin weighting at the bin centre, then
    /// [`band_power_of`] over each band, over the bands' span (`overall_power`) and over the
    /// whole grid (`total_power`).
    ///
    /// # Units
    /// Powers in unit², levels in dB re `reference`.
    ///
    /// # Errors
    /// As [`weighted_density`](Self::weighted_density).
    ///
    /// # References
    /// IEC 61672-1:2013 Annex E; IEC 61260-1:2014 clause 5.
    ///
    /// ```
    /// use noisesonde::acoustics::{BandFraction, BandLevelPlan, LevelReference, Weighting};
    /// // White noise of 1e-6 Pa²/Hz, one-sided as Welch gives it (DC and Nyquist bins carry
    /// // half a bin's width, hence half the density), 1 Hz bins up to 24 kHz.
    /// let bins = 24_001;
    /// let mut density = vec![1e-6; bins];
    /// density[0] = 0.5e-6;
    /// density[bins - 1] = 0.5e-6;
    /// let plan = BandLevelPlan::new(
    ///     BandFraction::Octave, Weighting::Z, 1.0, bins, LevelReference::for_unit("Pa"),
    /// )?;
    /// let levels = plan.levels(&density)?;
    /// let khz = levels.bands.iter().find(|b| b.band.nominal_hz == 1000.0).unwrap();
    /// // Closed form: 1e-6 Pa²/Hz × (1412.5375 − 707.9458) Hz.
    /// let expected = 1e-6 * (khz.band.upper_hz - khz.band.lower_hz);
    /// assert!((khz.power - expected).abs() < 1e-12 * expected);
    /// let sum: f64 = levels.bands.iter().map(|b| b.power).sum();
    /// assert!((sum - levels.overall_power).abs() < 1e-12 * sum);
    /// # Ok::<(), noisesonde::acoustics::AcousticsError>(())
    /// ```
    pub fn levels(&self, density: &[f64]) -> Result<BandLevels, AcousticsError> {
        let weighted = self.weighted_density(density)?;
        let power_between = |lo: f64, hi: f64| {
            band_power_of(&self.frequency_hz, &weighted, self.bin_width_hz, lo, hi)
        };
        let bands: Vec<BandPower> = self
            .bands
            .iter()
            .map(|&band| {
                let power = power_between(band.lower_hz, band.upper_hz);
                BandPower {
                    band,
                    power,
                    level_db: self.reference.level_db(power),
                }
            })
            .collect();
        // `new` refuses plans without bands, so both ends exist; the fallback is never used.
        let lower_hz = self.bands.first().map_or(0.0, |band| band.lower_hz);
        let upper_hz = self.bands.last().map_or(0.0, |band| band.upper_hz);
        let overall_power = power_between(lower_hz, upper_hz);
        let highest_hz = self.frequency_hz.last().copied().unwrap_or(0.0);
        let total_power = power_between(0.0, highest_hz);
        Ok(BandLevels {
            fraction: self.fraction,
            weighting: self.weighting,
            bin_width_hz: self.bin_width_hz,
            lower_hz,
            upper_hz,
            bands,
            overall_power,
            overall_level_db: self.reference.level_db(overall_power),
            total_power,
            total_level_db: self.reference.level_db(total_power),
            reference: self.reference.clone(),
        })
    }

    /// Weighted power of the whole grid, Σ_k P_k·|W(f_k)|²·Δf in unit²: the broadband mean
    /// square a weighting passes (one value per segment for [`super::LevelHistory`]).
    ///
    /// # Errors
    /// As [`weighted_density`](Self::weighted_density).
    pub fn total_power(&self, density: &[f64]) -> Result<f64, AcousticsError> {
        let weighted = self.weighted_density(density)?;
        let highest_hz = self.frequency_hz.last().copied().unwrap_or(0.0);
        Ok(band_power_of(
            &self.frequency_hz,
            &weighted,
            self.bin_width_hz,
            0.0,
            highest_hz,
        ))
    }
}

/// Band levels of `density` in one call: [`BandLevelPlan::new`] then
/// [`BandLevelPlan::levels`]. Build the plan once instead when many spectra share a grid.
///
/// # Errors
/// As [`BandLevelPlan::new`] and [`BandLevelPlan::levels`].
///
/// ```
/// use noisesonde::acoustics::{band_levels, BandFraction, LevelReference, Weighting};
/// // A 1 kHz tone of 1 Pa rms (mean square 1 Pa²) in one 2 Hz bin: 93.98 dB SPL, A-weighted
/// // too, since A(1 kHz) = 0 dB.
/// let bin_width_hz = 2.0;
/// let mut density = vec![0.0; 4097];
/// density[500] = 1.0 / bin_width_hz;
/// let reference = LevelReference::for_unit("Pa");
/// let levels = band_levels(&density, bin_width_hz, BandFraction::Third, Weighting::A, &reference)?;
/// assert!((levels.total_level_db - 93.979_400).abs() < 1e-6);
/// # Ok::<(), noisesonde::acoustics::AcousticsError>(())
/// ```
pub fn band_levels(
    density: &[f64],
    bin_width_hz: f64,
    fraction: BandFraction,
    weighting: Weighting,
    reference: &LevelReference,
) -> Result<BandLevels, AcousticsError> {
    BandLevelPlan::new(
        fraction,
        weighting,
        bin_width_hz,
        density.len(),
        reference.clone(),
    )?
    .levels(density)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn zero_power_levels_round_trip_through_json_as_null() {
        let reference = LevelReference::for_unit("V");
        let levels = band_levels(
            &[0.0; 64],
            500.0,
            BandFraction::Octave,
            Weighting::A,
            &reference,
        )
        .unwrap();
        assert_eq!(levels.overall_level_db, f64::NEG_INFINITY);
        let json = serde_json::to_string(&levels).unwrap();
        assert!(json.contains("\"overall_level_db\":null"), "{json}");
        let back: BandLevels = serde_json::from_str(&json).unwrap();
        assert_eq!(back, levels);
    }

    #[test]
    fn bad_grids_and_densities_are_typed_errors() {
        let reference = LevelReference::for_unit("V");
        let plan = |width: f64, bins: usize| {
            BandLevelPlan::new(
                BandFraction::Third,
                Weighting::A,
                width,
                bins,
                reference.clone(),
            )
        };
        for width in [0.0, -1.0, f64::NAN, f64::INFINITY] {
            assert!(matches!(
                plan(width, 100),
                Err(AcousticsError::BinWidth { .. })
            ));
        }
        assert!(matches!(
            plan(1.0, 1),
            Err(AcousticsError::TooFewBins { bins: 1, min: 2 })
        ));
        // 10 bins of 1 Hz end at 9 Hz, below the 10 Hz band's upper edge (11.22 Hz).
        assert!(matches!(
            plan(1.0, 10),
            Err(AcousticsError::NoBandFits { .. })
        ));
        let bad_reference = LevelReference {
            power: 0.0,
            ..reference.clone()
        };
        assert!(matches!(
            BandLevelPlan::new(BandFraction::Third, Weighting::A, 1.0, 100, bad_reference),
            Err(AcousticsError::ReferencePower { .. })
        ));
        let plan = plan(1.0, 100).unwrap();
        assert!(matches!(
            plan.levels(&[1.0; 99]),
            Err(AcousticsError::DensityLength {
                expected: 100,
                given: 99
            })
        ));
        let mut density = vec![1.0; 100];
        density[7] = -1e-3;
        assert!(matches!(
            plan.levels(&density),
            Err(AcousticsError::Density { index: 7, .. })
        ));
        density[7] = f64::NAN;
        assert!(matches!(
            plan.total_power(&density),
            Err(AcousticsError::Density { index: 7, .. })
        ));
    }
}

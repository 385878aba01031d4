//! Units, calibration and decibels: the only place where display units are made.
//!
//! Inside the pipeline every quantity is in the calibrated unit U (SI where U is V, Pa, …):
//! samples in U, powers in U², densities in U²/Hz. Decibels appear only at the edge.

use serde::{Deserialize, Serialize};

use crate::error::SettingsError;

/// Unit of samples that are in digital full scale (1.0 = full scale) and not calibrated.
pub const FULL_SCALE_UNIT: &str = "FS";
/// Unit of text samples when the user names none.
pub const TEXT_UNIT: &str = "units";
/// Longest unit name accepted.
const MAX_UNIT_LEN: usize = 16;

/// Turns full-scale (or text) samples into physical units.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct Calibration {
    /// Physical value of one unit of input (for full-scale input: of digital full scale).
    pub scale_units_per_fs: f64,
    /// Name of the physical unit, e.g. `V`, `Pa`, `g`; `None` keeps the input's own unit.
    pub unit: Option<String>,
}

impl Default for Calibration {
    fn default() -> Self {
        Self {
            scale_units_per_fs: 1.0,
            unit: None,
        }
    }
}

impl Calibration {
    /// Checks the scale (finite, > 0) and the unit name (1–16 printable characters, no spaces).
    ///
    /// # Errors
    /// [`SettingsError::Scale`] or [`SettingsError::Unit`].
    pub fn check(&self) -> Result<(), SettingsError> {
        let scale = self.scale_units_per_fs;
        if !(scale.is_finite() && scale > 0.0) {
            return Err(SettingsError::Scale { scale });
        }
        if let Some(unit) = &self.unit {
            let ok = !unit.is_empty()
                && unit.chars().count() <= MAX_UNIT_LEN
                && unit.chars().all(|c| !c.is_whitespace() && !c.is_control());
            if !ok {
                return Err(SettingsError::Unit { unit: unit.clone() });
            }
        }
        Ok(())
    }

    /// The unit name of calibrated samples: the user's, or `FS` for full-scale input, or
    /// `units` for text.
    pub fn unit_for(&self, full_scale_input: bool) -> String {
        match &self.unit {
            Some(unit) => unit.clone(),
            None if full_scale_input => FULL_SCALE_UNIT.to_string(),
            None => TEXT_UNIT.to_string(),
        }
    }
}

/// Names of the units derived from a sample unit U.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct DerivedUnits {
    /// U.
    pub amplitude: String,
    /// U² (power, mean square, variance, autocorrelation).
    pub power: String,
    /// U²/Hz (power spectral density).
    pub density: String,
    /// U/√Hz (amplitude spectral density), written `U/sqrt(Hz)`.
    pub amplitude_density: String,
}

impl DerivedUnits {
    /// Units derived from `unit`.
    ///
    /// ```
    /// let u = noisesonde::units::DerivedUnits::of("V");
    /// assert_eq!((u.power.as_str(), u.density.as_str()), ("V^2", "V^2/Hz"));
    /// ```
    pub fn of(unit: &str) -> Self {
        Self {
            amplitude: unit.to_string(),
            power: format!("{unit}^2"),
            density: format!("{unit}^2/Hz"),
            amplitude_density: format!("{unit}/sqrt(Hz)"),
        }
    }
}

/// 10·log10(power / reference_power): a power ratio in dB; −∞ for zero power.
pub fn power_db(power: f64, reference_power: f64) -> f64 {
    10.0 * (power / reference_power).log10()
}

/// The RMS value of a level given in dB re `reference_rms` (a root-power quantity):
/// reference_rms × 10^(level_db/20). For a sound calibrator at 94 dB SPL (re 20 µPa) it is
/// 1.002374 Pa.
///
/// ```
/// use noisesonde::units::rms_from_level_db;
/// // shared REFERENCES §9 (computed): 94 dB SPL = 1.002374 Pa, 114 dB SPL = 10.02374 Pa,
/// // re 20 µPa (common practice).
/// assert!((rms_from_level_db(94.0, 20e-6) - 1.002374).abs() < 5e-7);
/// assert!((rms_from_level_db(114.0, 20e-6) - 10.02374).abs() < 5e-6);
/// ```
pub fn rms_from_level_db(level_db: f64, reference_rms: f64) -> f64 {
    reference_rms * 10f64.powf(level_db / 20.0)
}

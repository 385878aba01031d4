//! The largest tone in a frequency range of a PSD, measured against its noise floor: for
//! calibrating with a sound calibrator (or any reference tone), and for quoting hum.
//!
//! # Method
//! Given a one-sided density d_j (units²/Hz) with bin width Δf and the window's ENBW in bins:
//! 1. the peak p is the bin of largest density whose centre lies in [f_lo, f_hi];
//! 2. the tone's bins are p − k … p + k with k = ⌈2·ENBW⌉ + 1 unless given: the main-lobe
//!    half-width of the cosine-sum windows is about 1.3–1.4 × their ENBW (Hann 2 bins for ENBW
//!    1.5, Blackman–Harris 4 for 2.0, HFT95 5 for 3.81; Harris 1978 and Heinzel et al. 2002,
//!    from memory), so this covers the main lobe of a tone up to half a bin off centre with at
//!    least a bin to spare (Hann: k = 4, flat-top HFT95: k = 9). Rectangular windows leak too
//!    slowly for this: half a bin off centre, about 6 % of the tone's power lies beyond ±3 bins;
//! 3. the floor density is the median of the `floor_bins` bins on each side beyond the tone's
//!    bins (DC and Nyquist excluded), divided by the median of χ²_ν/ν, the distribution of an
//!    averaged density with ν degrees of freedom (so the median estimates the mean; for ν = 2
//!    the median is ln 2 ≈ 0.69 of the mean). A median ignores other tones among those bins;
//! 4. power P = Σ_{j=p−k}^{p+k} (d_j − floor) Δf, the tone's mean square (Heinzel, Rüdiger &
//!    Schilling 2002, §10: a peak's power is the sum over its bins of the power spectrum divided
//!    by the ENBW, which is the same sum of density × Δf; from memory); rms = √P;
//! 5. frequency: the centroid Σ f_j (d_j − floor) / Σ (d_j − floor) over the same bins.
//!
//! A tone that holds its level over the record gives P = A²/2 for amplitude A, whatever its
//! position between bins (no scallop loss, unlike reading the peak of a power spectrum).
//!
//! # Units
//! Powers in units², RMS in units, densities in units²/Hz, frequencies in Hz.
//!
//! # References
//! - F. J. Harris, "On the use of windows for harmonic analysis with the discrete Fourier
//!   transform", Proc. IEEE 66(1), 51–83, 1978.
//! - G. Heinzel, A. Rüdiger, R. Schilling, "Spectrum and spectral density estimation by the
//!   Discrete Fourier transform (DFT)", Max-Planck-Institut für Gravitationsphysik, 2002.

use crate::numeric::median;
use serde::{Deserialize, Serialize};

use crate::report::PsdReport;

/// Default number of floor bins on each side of the tone's bins.
pub const DEFAULT_FLOOR_BINS: usize = 16;
/// Fewest floor bins (both sides together) for a median worth the name.
pub const MIN_FLOOR_BINS: usize = 4;

/// Slack taken off 2·ENBW before rounding up, so that Hann's computed ENBW of 1.5000000000000002
/// bins gives 3, not 4.
const ENBW_ROUNDING_SLACK: f64 = 1e-9;

/// Where to look and how wide to sum; plain data with defaults.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct ToneSettings {
    /// Lowest frequency the peak may have, Hz.
    pub f_lo_hz: f64,
    /// Highest frequency the peak may have, Hz.
    pub f_hi_hz: f64,
    /// Bins summed on each side of the peak; `None`: ⌈2·ENBW⌉ + 1.
    pub half_width_bins: Option<usize>,
    /// Bins on each side, beyond the summed ones, whose median gives the floor.
    pub floor_bins: usize,
}

impl Default for ToneSettings {
    fn default() -> Self {
        Self {
            f_lo_hz: 0.0,
            f_hi_hz: f64::MAX,
            half_width_bins: None,
            floor_bins: DEFAULT_FLOOR_BINS,
        }
    }
}

/// A measured tone.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Tone {
    /// Power-weighted centroid frequency, Hz.
    pub frequency_hz: f64,
    /// Mean square of the tone above the floor, units².
    pub power: f64,
    /// √power, units.
    pub rms: f64,
    /// Bin of the largest density.
    pub peak_bin: usize,
    /// First and last bins summed.
    pub first_bin: usize,
    /// Last bin summed.
    pub last_bin: usize,
    /// Floor density (bias-corrected median), units²/Hz.
    pub floor_density: f64,
    /// Floor power subtracted from the sum, units².
    pub floor_power: f64,
    /// Floor bins whose median was taken.
    pub floor_bins_used: usize,
}

impl Tone {
    /// Calibration factor for a tone known to have `reference_rms` (e.g. 1.002374 Pa for a 94 dB
    /// SPL calibrator, see [`crate::units::rms_from_level_db`]): reference_rms / rms. For a PSD
    /// of uncalibrated full-scale samples it is the physical value of full scale
    /// (`Calibration::scale_units_per_fs`); for a PSD already calibrated with scale s, the
    /// corrected scale is s × factor.
    ///
    /// # Errors
    /// [`ToneError::ReferenceRms`] when `reference_rms` is not finite and positive.
    pub fn calibration_factor(&self, reference_rms: f64) -> Result<f64, ToneError> {
        if !(reference_rms.is_finite() && reference_rms > 0.0) {
            return Err(ToneError::ReferenceRms { reference_rms });
        }
        Ok(reference_rms / self.rms)
    }
}

/// Why no tone could be measured.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum ToneError {
    /// The density is empty.
    #[error("the spectrum is empty")]
    EmptySpectrum,
    /// A density value is negative or not finite.
    #[error("density bin {bin} is {value}: a density must be finite and ≥ 0")]
    BadDensity {
        /// The bin.
        bin: usize,
        /// Its value.
        value: f64,
    },
    /// The bin width is unusable.
    #[error("bin width {bin_width_hz} Hz is invalid: it must be finite and above 0")]
    BinWidth {
        /// Given width.
        bin_width_hz: f64,
    },
    /// The ENBW is unusable.
    #[error("ENBW {enbw_bins} bins is invalid: it must be finite and at least 1")]
    Enbw {
        /// Given ENBW.
        enbw_bins: f64,
    },
    /// The degrees of freedom are unusable.
    #[error("{dof} degrees of freedom are invalid: they must be finite and above 0")]
    Dof {
        /// Given degrees of freedom.
        dof: f64,
    },
    /// No bin centre lies in the range.
    #[error("no bin between {f_lo_hz} Hz and {f_hi_hz} Hz (bins run from 0 to {max_hz} Hz): widen the range")]
    Range {
        /// Lower end asked for.
        f_lo_hz: f64,
        /// Upper end asked for.
        f_hi_hz: f64,
        /// Frequency of the last bin.
        max_hz: f64,
    },
    /// The half-width is zero.
    #[error(
        "a half-width of 0 bins sums no main lobe: give at least 1 bin, or none for the default"
    )]
    HalfWidth,
    /// The tone's bins run into DC or Nyquist.
    #[error("the peak at {peak_hz} Hz is within {half_width_bins} bins of DC or Nyquist: use longer segments (finer bins) or a range away from the ends")]
    NearEdge {
        /// Peak frequency.
        peak_hz: f64,
        /// Bins summed on each side.
        half_width_bins: usize,
    },
    /// Too few bins for the floor.
    #[error("only {floor_bins} bins are left for the noise floor, fewer than {min}: use longer segments or more floor bins")]
    FloorTooNarrow {
        /// Bins available.
        floor_bins: usize,
        /// Fewest accepted.
        min: usize,
    },
    /// Nothing stands above the floor.
    #[error("no tone near {peak_hz} Hz: the bins around the peak ({peak_density} units²/Hz) hold no more power than the floor ({floor_density} units²/Hz) predicts")]
    NoTone {
        /// Peak frequency.
        peak_hz: f64,
        /// Density at the peak.
        peak_density: f64,
        /// Floor density.
        floor_density: f64,
    },
    /// The reference RMS is unusable.
    #[error("reference RMS {reference_rms} is invalid: give the calibrator's RMS, a finite value above 0 (e.g. 1.002374 Pa for 94 dB SPL)")]
    ReferenceRms {
        /// Given value.
        reference_rms: f64,
    },
}

/// Finds and measures the largest tone between `settings.f_lo_hz` and `settings.f_hi_hz`.
///
/// # Method
/// See the [module](self) docs.
///
/// # Units
/// `density` in units²/Hz, `bin_width_hz` in Hz, `enbw_bins` in bins; `dof` is the equivalent
/// degrees of freedom of the density (e.g. `PsdReport::dof`).
///
/// # Errors
/// [`ToneError`] naming the input or the condition that stops the measurement.
///
/// # References
/// Heinzel, Rüdiger & Schilling 2002, §10 (from memory).
///
/// ```
/// use noisesonde::tone::{find_tone, ToneSettings};
/// // A Hann-windowed tone of mean square 0.5 at bin 40 on a flat floor of 1e-6 units²/Hz, 1 Hz
/// // bins: density (A²/2)/ENBW_hz = 1/3 at the centre and a quarter of it at ±1 bin.
/// let mut density = vec![1e-6; 129];
/// density[39] += 1.0 / 12.0;
/// density[40] += 1.0 / 3.0;
/// density[41] += 1.0 / 12.0;
/// // With 10⁶ degrees of freedom the floor's median needs (almost) no correction.
/// let tone = find_tone(&density, 1.0, 1.5, 1e6, &ToneSettings::default())?;
/// assert!((tone.power - 0.5).abs() < 1e-9 && (tone.frequency_hz - 40.0).abs() < 1e-9);
/// assert_eq!((tone.first_bin, tone.last_bin), (36, 44)); // Hann: ±4 bins
/// # Ok::<(), noisesonde::tone::ToneError>(())
/// ```
pub fn find_tone(
    density: &[f64],
    bin_width_hz: f64,
    enbw_bins: f64,
    dof: f64,
    settings: &ToneSettings,
) -> Result<Tone, ToneError> {
    if density.is_empty() {
        return Err(ToneError::EmptySpectrum);
    }
    if let Some((bin, &value)) = density
        .iter()
        .enumerate()
        .find(|(_, d)| !(d.is_finite() && **d >= 0.0))
    {
        return Err(ToneError::BadDensity { bin, value });
    }
    if !(bin_width_hz.is_finite() && bin_width_hz > 0.0) {
        return Err(ToneError::BinWidth { bin_width_hz });
    }
    if !(enbw_bins.is_finite() && enbw_bins >= 1.0) {
        return Err(ToneError::Enbw { enbw_bins });
    }
    if !(dof.is_finite() && dof > 0.0) {
        return Err(ToneError::Dof { dof });
    }
    let bins = density.len();
    let (f_lo_hz, f_hi_hz) = (settings.f_lo_hz, settings.f_hi_hz);
    let range_error = || ToneError::Range {
        f_lo_hz,
        f_hi_hz,
        max_hz: (bins - 1) as f64 * bin_width_hz,
    };
    let peak_bin = density
        .iter()
        .enumerate()
        .filter(|(bin, _)| {
            let f = *bin as f64 * bin_width_hz;
            f >= f_lo_hz && f <= f_hi_hz
        })
        .max_by(|a, b| a.1.total_cmp(b.1))
        .map(|(bin, _)| bin)
        .ok_or_else(range_error)?;
    let peak_hz = peak_bin as f64 * bin_width_hz;

    let half_width = match settings.half_width_bins {
        Some(0) => return Err(ToneError::HalfWidth),
        Some(k) => k,
        None => ((2.0 * enbw_bins - ENBW_ROUNDING_SLACK).ceil() as usize).saturating_add(1),
    };
    // The summed bins must avoid DC (bin 0) and the last bin, whose one-sided factor differs.
    let last_interior = bins.saturating_sub(2);
    if peak_bin <= half_width || peak_bin.saturating_add(half_width) > last_interior {
        return Err(ToneError::NearEdge {
            peak_hz,
            half_width_bins: half_width,
        });
    }
    let first_bin = peak_bin - half_width;
    let last_bin = peak_bin + half_width;

    let below = first_bin.saturating_sub(settings.floor_bins).max(1)..first_bin;
    let above = last_bin + 1
        ..(last_bin + 1)
            .saturating_add(settings.floor_bins)
            .min(last_interior + 1);
    let mut floor_values: Vec<f64> = density[below]
        .iter()
        .chain(&density[above])
        .copied()
        .collect();
    if floor_values.len() < MIN_FLOOR_BINS {
        return Err(ToneError::FloorTooNarrow {
            floor_bins: floor_values.len(),
            min: MIN_FLOOR_BINS,
        });
    }
    let floor_bins_used = floor_values.len();
    let floor_density = median(&mut floor_values) / chi_square_median_ratio(dof);

    let summed = &density[first_bin..=last_bin];
    let excess: f64 = summed.iter().map(|d| d - floor_density).sum();
    if excess.is_nan() || excess <= 0.0 {
        return Err(ToneError::NoTone {
            peak_hz,
            peak_density: density[peak_bin],
            floor_density,
        });
    }
    let moment: f64 = summed
        .iter()
        .enumerate()
        .map(|(i, d)| (first_bin + i) as f64 * (d - floor_density))
        .sum();
    let power = excess * bin_width_hz;
    Ok(Tone {
        frequency_hz: moment / excess * bin_width_hz,
        power,
        rms: power.sqrt(),
        peak_bin,
        first_bin,
        last_bin,
        floor_density,
        floor_power: floor_density * summed.len() as f64 * bin_width_hz,
        floor_bins_used,
    })
}

/// [`find_tone`] on a report's PSD (its density, bin width, ENBW and degrees of freedom).
///
/// # Errors
/// As [`find_tone`].
pub fn find_tone_in(psd: &PsdReport, settings: &ToneSettings) -> Result<Tone, ToneError> {
    find_tone(
        &psd.density,
        psd.bin_width_hz,
        psd.enbw_bins,
        psd.dof,
        settings,
    )
}

/// Median of χ²_ν/ν: what the median of many bins of an averaged density with ν degrees of
/// freedom is, as a fraction of their mean (ln 2 for ν = 2; → 1 as ν grows); 1 when ν is unusable.
fn chi_square_median_ratio(dof: f64) -> f64 {
    crate::spectral::confidence::chi_square_median_over_dof(dof)
        .filter(|r| r.is_finite())
        .unwrap_or(1.0)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// χ²_2 median / 2 = ln 2 (closed form: χ²_2/2 is exponential with mean 1);
    /// scipy.stats.chi2.ppf(0.5, 10) = 9.34181776559197 (pinned scipy 1.17.1, run by hand).
    #[test]
    fn chi_square_median_ratio_matches_known_medians() {
        assert!((chi_square_median_ratio(2.0) - std::f64::consts::LN_2).abs() < 1e-9);
        assert!((chi_square_median_ratio(10.0) - 0.934_181_8).abs() < 1e-6);
        assert!(chi_square_median_ratio(1e4) > 0.9999);
    }

    #[test]
    fn median_of_odd_and_even_counts() {
        assert_eq!(median(&mut [3.0, 1.0, 2.0]), 2.0);
        assert_eq!(median(&mut [4.0, 1.0, 3.0, 2.0]), 2.5);
    }
}

//! The report: plain data that every front end consumes. Field names carry units; the README
//! documents each field.

use serde::{Deserialize, Serialize};

use crate::acf::AcfEstimator;
use crate::io::SourceInfo;
use crate::moments::Moments;
use crate::spectral::{Average, Detrend};
use crate::stationarity::StationarityReport;
use crate::units::{Calibration, DerivedUnits};
use crate::window::WindowKind;

/// Version of the report's layout; bumped when a field changes meaning or disappears.
pub const SCHEMA: &str = "noisesonde.report/1";

/// Everything measured on one record.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Report {
    /// Layout version, [`SCHEMA`].
    pub schema: String,
    /// What was read.
    pub source: SourceInfo,
    /// Sample rate in hertz.
    pub sample_rate_hz: f64,
    /// Samples analysed (of the chosen channel).
    pub samples: u64,
    /// samples / sample_rate_hz.
    pub duration_s: f64,
    /// Channel analysed, 0-based.
    pub channel: usize,
    /// Unit of the samples after calibration.
    pub unit: String,
    /// Units of derived quantities.
    pub units: DerivedUnits,
    /// The calibration applied.
    pub calibration: Calibration,
    /// Moments in `unit` (powers in `unit`²).
    pub moments: Moments,
    /// Welch power spectral density.
    pub psd: PsdReport,
    /// Autocorrelation and autocovariance.
    pub acf: AcfReport,
    /// Consistency checks between the estimators.
    pub checks: Checks,
    /// Stationarity tests on segment statistics; `None` when the record is too short for them.
    #[serde(default)]
    pub stationarity: Option<StationarityReport>,
    /// Things the user should know (truncated files, clipping, few segments, …).
    pub warnings: Vec<String>,
}

/// The PSD with everything needed to read it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PsdReport {
    /// Bin centre frequencies, Hz.
    pub frequency_hz: Vec<f64>,
    /// One-sided power spectral density, `unit`²/Hz.
    pub density: Vec<f64>,
    /// One-sided power spectrum, `unit`² (density × enbw_hz).
    pub power_spectrum: Vec<f64>,
    /// Unit of `density`, e.g. `V^2/Hz`.
    pub unit: String,
    /// Unit of `power_spectrum`, e.g. `V^2`.
    pub power_spectrum_unit: String,
    /// Window applied to each segment.
    pub window: WindowKind,
    /// Segment length L, samples.
    pub segment_len: usize,
    /// Overlap O, samples.
    pub overlap_len: usize,
    /// Per-segment detrend.
    pub detrend: Detrend,
    /// Mean or median averaging.
    pub average: Average,
    /// Bin spacing f_s/L, Hz.
    pub bin_width_hz: f64,
    /// Equivalent noise bandwidth, bins.
    pub enbw_bins: f64,
    /// Equivalent noise bandwidth (resolution bandwidth, RBW), Hz.
    pub enbw_hz: f64,
    /// Segments averaged.
    pub segments: usize,
    /// Equivalent degrees of freedom of interior bins (DC and Nyquist have half).
    pub dof: f64,
    /// Samples after the last whole segment, not in the PSD.
    pub unused_samples: u64,
    /// Confidence level of the interval, e.g. 0.95.
    pub confidence_level: f64,
    /// Lower end of the chi-square interval of `density`, `unit`²/Hz.
    pub ci_lower: Vec<f64>,
    /// Upper end of the chi-square interval of `density`, `unit`²/Hz.
    pub ci_upper: Vec<f64>,
    /// ci_lower / density for interior bins.
    pub ci_factor_lower: f64,
    /// ci_upper / density for interior bins.
    pub ci_factor_upper: f64,
}

/// Autocorrelation against lag.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct AcfReport {
    /// Lags, s.
    pub lag_s: Vec<f64>,
    /// R[k] = (1/N) Σ x[n]x[n+k] (or 1/(N−k), unbiased), `unit`²; R[0] = mean square.
    pub autocorrelation: Vec<f64>,
    /// C[k], the same with the record's mean removed, `unit`²; C[0] = variance.
    pub autocovariance: Vec<f64>,
    /// C[k]/C[0], dimensionless.
    pub coefficient: Vec<f64>,
    /// Unit of `autocorrelation` and `autocovariance`.
    pub unit: String,
    /// Biased (1/N) or unbiased (1/(N−k)).
    pub estimator: AcfEstimator,
    /// Largest lag computed, s.
    pub max_lag_s: f64,
    /// First lag where the coefficient crosses zero (linear interpolation), s; `None` if it
    /// stays positive up to the largest lag.
    pub zero_crossing_s: Option<f64>,
    /// First lag where the coefficient falls to 1/e (linear interpolation), s; `None` if it
    /// stays above.
    pub one_over_e_s: Option<f64>,
}

/// First lag (in samples, linearly interpolated) where `coefficient` falls to `level` or below.
pub fn first_crossing(coefficient: &[f64], level: f64) -> Option<f64> {
    coefficient.windows(2).enumerate().find_map(|(k, pair)| {
        let (a, b) = (pair[0], pair[1]);
        (a > level && b <= level).then(|| k as f64 + (a - level) / (a - b))
    })
}

/// Cross-checks that the numbers hang together.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Checks {
    /// ∫PSD df against the time-domain power.
    pub parseval: Parseval,
    /// The ACF obtained from the PSD against the direct ACF.
    pub wiener_khinchin: WienerKhinchin,
}

/// Parseval's theorem: the integrated one-sided density equals the power it came from.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Parseval {
    /// Σ density × bin_width_hz, `unit`².
    pub integrated_psd: f64,
    /// The time-domain power it is compared with, `unit`².
    pub time_domain: f64,
    /// `variance` (when segments are detrended) or `mean_square` (no detrend).
    pub compared_with: String,
    /// integrated_psd / time_domain (1 for a stationary record; 0 when the power is zero).
    pub ratio: f64,
}

/// Wiener–Khinchin: the inverse transform of the averaged PSD, corrected for the window's
/// own correlation, against the directly computed ACF.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct WienerKhinchin {
    /// Largest |ACF_from_PSD[k] − ACF[k]| / ACF[0] over the lags compared.
    pub max_deviation: f64,
    /// Lags compared: 0..=this many samples (up to L/4 and the maximum lag).
    pub lags_compared: usize,
    /// `autocovariance` (detrended segments) or `autocorrelation` (no detrend).
    pub compared_with: String,
}

/// A report's long arrays, taken out so that a front end can move them as typed arrays (a Web
/// Worker transfers them to the page instead of copying them through JSON text).
///
/// [`Report::take_arrays`] leaves the rest of the report (a few hundred bytes of JSON whatever
/// the record's length) and [`Report::restore_arrays`] puts them back; the round trip is exact.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ReportArrays {
    /// Each array with its dotted path in the report's JSON, e.g. `psd.density`.
    pub arrays: Vec<(&'static str, Vec<f64>)>,
}

impl ReportArrays {
    /// The array at `path`, if it was taken.
    pub fn get(&self, path: &str) -> Option<&[f64]> {
        self.arrays
            .iter()
            .find(|(p, _)| *p == path)
            .map(|(_, v)| v.as_slice())
    }
}

impl Report {
    /// Dotted JSON paths of the arrays that [`Report::take_arrays`] moves out, in its order.
    /// Those under `stationarity` exist only when the report has stationarity tests.
    pub const ARRAY_PATHS: [&'static str; 23] = [
        "psd.frequency_hz",
        "psd.density",
        "psd.power_spectrum",
        "psd.ci_lower",
        "psd.ci_upper",
        "acf.lag_s",
        "acf.autocorrelation",
        "acf.autocovariance",
        "acf.coefficient",
        "stationarity.segments.start_s",
        "stationarity.segments.mean",
        "stationarity.segments.mean_square",
        "stationarity.segments.variance",
        "stationarity.autocorrelation.comparison.stretch_start_s",
        "stationarity.autocorrelation.comparison.stretch_duration_s",
        "stationarity.autocorrelation.comparison.lag_s",
        "stationarity.autocorrelation.comparison.coefficient_by_stretch",
        "stationarity.autocorrelation.comparison.pooled",
        "stationarity.autocorrelation.comparison.standard_error",
        "stationarity.spectrogram.frequency_hz",
        "stationarity.spectrogram.start_s",
        "stationarity.spectrogram.end_s",
        "stationarity.spectrogram.density",
    ];

    /// The arrays of [`Report::ARRAY_PATHS`], in order; `None` where the report has no such
    /// part (no stationarity tests, or no spectrogram).
    fn array_slots(&mut self) -> [Option<&mut Vec<f64>>; 23] {
        let (psd, acf) = (&mut self.psd, &mut self.acf);
        let (segments, comparison, spectrogram) = match self.stationarity.as_mut() {
            Some(st) => (
                Some(&mut st.segments),
                Some(&mut st.autocorrelation.comparison),
                st.spectrogram.as_mut(),
            ),
            None => (None, None, None),
        };
        let (start_s, mean, mean_square, variance) = match segments {
            Some(s) => (
                Some(&mut s.start_s),
                Some(&mut s.mean),
                Some(&mut s.mean_square),
                Some(&mut s.variance),
            ),
            None => (None, None, None, None),
        };
        let (stretch_start_s, stretch_duration_s, lag_s, by_stretch, pooled, standard_error) =
            match comparison {
                Some(c) => (
                    Some(&mut c.stretch_start_s),
                    Some(&mut c.stretch_duration_s),
                    Some(&mut c.lag_s),
                    Some(&mut c.coefficient_by_stretch),
                    Some(&mut c.pooled),
                    Some(&mut c.standard_error),
                ),
                None => (None, None, None, None, None, None),
            };
        let (frequency_hz, column_start_s, column_end_s, density) = match spectrogram {
            Some(g) => (
                Some(&mut g.frequency_hz),
                Some(&mut g.start_s),
                Some(&mut g.end_s),
                Some(&mut g.density),
            ),
            None => (None, None, None, None),
        };
        [
            Some(&mut psd.frequency_hz),
            Some(&mut psd.density),
            Some(&mut psd.power_spectrum),
            Some(&mut psd.ci_lower),
            Some(&mut psd.ci_upper),
            Some(&mut acf.lag_s),
            Some(&mut acf.autocorrelation),
            Some(&mut acf.autocovariance),
            Some(&mut acf.coefficient),
            start_s,
            mean,
            mean_square,
            variance,
            stretch_start_s,
            stretch_duration_s,
            lag_s,
            by_stretch,
            pooled,
            standard_error,
            frequency_hz,
            column_start_s,
            column_end_s,
            density,
        ]
    }

    /// Moves the long arrays out (they become empty here), named by [`Report::ARRAY_PATHS`];
    /// a part the report lacks gives an empty array.
    pub fn take_arrays(&mut self) -> ReportArrays {
        let arrays = Self::ARRAY_PATHS
            .into_iter()
            .zip(self.array_slots())
            .map(|(path, slot)| (path, slot.map(std::mem::take).unwrap_or_default()))
            .collect();
        ReportArrays { arrays }
    }

    /// Puts back arrays taken by [`Report::take_arrays`] (or rebuilt from their paths); a path
    /// that is missing, or names a part the report lacks, leaves things as they are.
    pub fn restore_arrays(&mut self, arrays: ReportArrays) {
        for (path, values) in arrays.arrays {
            if let Some(index) = Self::ARRAY_PATHS.iter().position(|p| *p == path) {
                if let Some(slot) = self.array_slots().into_iter().nth(index).flatten() {
                    *slot = values;
                }
            }
        }
    }
}

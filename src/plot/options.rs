//! What to plot and how: plain data, deserialised from the page's JSON with defaults.

use std::fmt;
use std::str::FromStr;

use serde::{Deserialize, Serialize};

use crate::report::{AcfReport, PsdReport, Report};
use crate::units::{power_db, FULL_SCALE_UNIT};

/// The quantity on the y axis of a PSD plot.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(try_from = "String", into = "String")]
pub enum PsdMode {
    /// Power spectral density, `U^2/Hz` (`density`), logarithmic axis.
    #[default]
    Density,
    /// Amplitude spectral density √PSD, `U/sqrt(Hz)` (`asd`), logarithmic axis.
    AmplitudeDensity,
    /// Power spectrum, PSD × ENBW in hertz, `U^2` per bin (`power`), logarithmic axis: a
    /// bin-centred sine of amplitude A reads A²/2.
    PowerSpectrum,
    /// The PSD in decibels re 1 `U^2/Hz` (`db`), linear axis.
    Decibel,
}

impl PsdMode {
    /// Every mode, in the order of their names in messages.
    pub const ALL: [PsdMode; 4] = [
        PsdMode::Density,
        PsdMode::AmplitudeDensity,
        PsdMode::PowerSpectrum,
        PsdMode::Decibel,
    ];

    /// The name parsed by [`FromStr`]: `density`, `asd`, `power` or `db`.
    pub fn name(self) -> &'static str {
        match self {
            PsdMode::Density => "density",
            PsdMode::AmplitudeDensity => "asd",
            PsdMode::PowerSpectrum => "power",
            PsdMode::Decibel => "db",
        }
    }

    /// Whether the y axis is logarithmic (all but decibels).
    pub fn is_log(self) -> bool {
        self != PsdMode::Decibel
    }

    /// A one-sided density value (`U^2/Hz`) in this mode's unit, for a PSD whose equivalent noise
    /// bandwidth is `enbw_hz`. Decibels of zero are −∞.
    pub fn from_density(self, density: f64, enbw_hz: f64) -> f64 {
        match self {
            PsdMode::Density => density,
            PsdMode::AmplitudeDensity => density.sqrt(),
            PsdMode::PowerSpectrum => density * enbw_hz,
            PsdMode::Decibel => power_db(density, 1.0),
        }
    }

    /// The value of bin `bin` in this mode's unit, or `None` past the end. The power spectrum is
    /// the report's own `power_spectrum`, so read-outs equal the command line's numbers.
    pub fn value_at(self, psd: &PsdReport, bin: usize) -> Option<f64> {
        match self {
            PsdMode::PowerSpectrum => psd.power_spectrum.get(bin).copied(),
            _ => psd
                .density
                .get(bin)
                .map(|&p| self.from_density(p, psd.enbw_hz)),
        }
    }

    /// The unit of this mode's values for `report`: e.g. `V^2/Hz`, `V/sqrt(Hz)`, `V^2`,
    /// `dB re 1 V^2/Hz`.
    pub fn unit(self, report: &Report) -> String {
        match self {
            PsdMode::Density => report.psd.unit.clone(),
            PsdMode::AmplitudeDensity => report.units.amplitude_density.clone(),
            PsdMode::PowerSpectrum => report.psd.power_spectrum_unit.clone(),
            PsdMode::Decibel => format!("dB re 1 {}", report.psd.unit),
        }
    }

    /// The y-axis description: quantity and unit, e.g. `ASD (V/sqrt(Hz))`.
    pub fn axis_label(self, report: &Report) -> String {
        let quantity = match self {
            PsdMode::Density | PsdMode::Decibel => "PSD",
            PsdMode::AmplitudeDensity => "ASD",
            PsdMode::PowerSpectrum => "power per bin",
        };
        format!("{quantity} ({})", self.unit(report))
    }

    /// A line explaining the unit where it needs it: decibels of full-scale samples.
    pub fn unit_note(self, report: &Report) -> Option<String> {
        (self == PsdMode::Decibel && report.unit == FULL_SCALE_UNIT).then(|| {
            format!(
                "FS = digital full scale; a full-scale sine has power 0.5 FS^2 = {:.2} dB re 1 FS^2 \
                 (0 dBFS where full scale is defined by a sine, as in AES17)",
                power_db(0.5, 1.0)
            )
        })
    }

    /// Axis units per decade of power: 1 for log10 of a power, ½ for log10 of an amplitude,
    /// 10 for decibels.
    pub(crate) fn axis_units_per_power_decade(self) -> f64 {
        match self {
            PsdMode::Density | PsdMode::PowerSpectrum => 1.0,
            PsdMode::AmplitudeDensity => 0.5,
            PsdMode::Decibel => 10.0,
        }
    }
}

impl fmt::Display for PsdMode {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for PsdMode {
    type Err = ParsePlotModeError;

    /// Parses `density`, `asd`, `power` or `db`, ignoring case and surrounding spaces.
    fn from_str(text: &str) -> Result<Self, Self::Err> {
        PsdMode::ALL
            .into_iter()
            .find(|m| m.name().eq_ignore_ascii_case(text.trim()))
            .ok_or_else(|| ParsePlotModeError {
                what: "PSD plot mode",
                text: text.to_string(),
                choices: "density, asd, power, db",
            })
    }
}

impl TryFrom<String> for PsdMode {
    type Error = ParsePlotModeError;
    fn try_from(text: String) -> Result<Self, Self::Error> {
        text.parse()
    }
}

impl From<PsdMode> for String {
    fn from(mode: PsdMode) -> Self {
        mode.name().to_string()
    }
}

/// A plot mode name that is not one of the choices.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("unknown {what} '{text}': use one of {choices}")]
pub struct ParsePlotModeError {
    /// Which kind of mode, e.g. `"PSD plot mode"`.
    pub what: &'static str,
    /// The text given.
    pub text: String,
    /// The names accepted.
    pub choices: &'static str,
}

/// How to draw a PSD.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct PsdPlotOptions {
    /// The quantity on the y axis.
    pub mode: PsdMode,
    /// Whether to shade the confidence interval of each bin behind the curve.
    pub show_ci: bool,
    /// Frequency cursors, Hz: none, one (a line) or two (two lines and the band between them
    /// shaded). Cursors outside the plotted range are not drawn.
    pub cursors_hz: Vec<f64>,
    /// Backend pixels per CSS pixel (the device pixel ratio on a canvas); fonts and lines scale
    /// with it.
    pub pixel_ratio: f64,
    /// Further densities on the same bins drawn over the PSD (a live view's peak hold and
    /// frozen reference). Set by the caller, never read from JSON.
    #[serde(skip)]
    pub traces: Vec<PsdTrace>,
}

impl Default for PsdPlotOptions {
    fn default() -> Self {
        Self {
            mode: PsdMode::default(),
            show_ci: true,
            cursors_hz: vec![],
            pixel_ratio: 1.0,
            traces: vec![],
        }
    }
}

/// What a further PSD trace is, which sets its colour and line.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TraceKind {
    /// The largest value each bin has reached (a thin line above the average).
    PeakHold,
    /// A frozen earlier average to compare against (dashed).
    Reference,
}

/// A density (`unit`²/Hz, one value per bin of the report's PSD) drawn over the PSD, named in
/// the plot's caption.
#[derive(Debug, Clone, PartialEq)]
pub struct PsdTrace {
    /// What it is.
    pub kind: TraceKind,
    /// Its name in the caption, e.g. `peak hold`.
    pub label: String,
    /// Density per bin, `unit`²/Hz.
    pub density: Vec<f64>,
}

/// The quantity on the y axis of an autocorrelation plot.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(try_from = "String", into = "String")]
pub enum AcfMode {
    /// C(τ)/C(0), dimensionless (`coefficient`).
    #[default]
    Coefficient,
    /// C(τ), mean removed, `U^2` (`autocovariance`).
    Autocovariance,
    /// R(τ), mean kept, `U^2` (`autocorrelation`).
    Autocorrelation,
}

impl AcfMode {
    /// Every mode, in the order of their names in messages.
    pub const ALL: [AcfMode; 3] = [
        AcfMode::Coefficient,
        AcfMode::Autocovariance,
        AcfMode::Autocorrelation,
    ];

    /// The name parsed by [`FromStr`].
    pub fn name(self) -> &'static str {
        match self {
            AcfMode::Coefficient => "coefficient",
            AcfMode::Autocovariance => "autocovariance",
            AcfMode::Autocorrelation => "autocorrelation",
        }
    }

    /// The report's values of this mode.
    pub fn values(self, acf: &AcfReport) -> &[f64] {
        match self {
            AcfMode::Coefficient => &acf.coefficient,
            AcfMode::Autocovariance => &acf.autocovariance,
            AcfMode::Autocorrelation => &acf.autocorrelation,
        }
    }

    /// The unit of this mode's values: `1` for the coefficient, else the ACF's unit (`V^2`).
    pub fn unit(self, report: &Report) -> String {
        match self {
            AcfMode::Coefficient => "1".to_string(),
            _ => report.acf.unit.clone(),
        }
    }

    /// The y-axis description, short enough to run along a low plot: `coefficient
    /// (dimensionless)`, `autocovariance (V^2)`, `autocorrelation (V^2)`.
    pub fn axis_label(self, report: &Report) -> String {
        match self {
            AcfMode::Coefficient => "coefficient (dimensionless)".to_string(),
            _ => format!("{} ({})", self.name(), self.unit(report)),
        }
    }
}

impl fmt::Display for AcfMode {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for AcfMode {
    type Err = ParsePlotModeError;

    /// Parses `coefficient`, `autocovariance` or `autocorrelation`, ignoring case and
    /// surrounding spaces.
    fn from_str(text: &str) -> Result<Self, Self::Err> {
        AcfMode::ALL
            .into_iter()
            .find(|m| m.name().eq_ignore_ascii_case(text.trim()))
            .ok_or_else(|| ParsePlotModeError {
                what: "ACF plot mode",
                text: text.to_string(),
                choices: "coefficient, autocovariance, autocorrelation",
            })
    }
}

impl TryFrom<String> for AcfMode {
    type Error = ParsePlotModeError;
    fn try_from(text: String) -> Result<Self, Self::Error> {
        text.parse()
    }
}

impl From<AcfMode> for String {
    fn from(mode: AcfMode) -> Self {
        mode.name().to_string()
    }
}

/// How to draw an autocorrelation.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct AcfPlotOptions {
    /// The quantity on the y axis.
    pub mode: AcfMode,
    /// Backend pixels per CSS pixel; fonts and lines scale with it.
    pub pixel_ratio: f64,
}

impl Default for AcfPlotOptions {
    fn default() -> Self {
        Self {
            mode: AcfMode::default(),
            pixel_ratio: 1.0,
        }
    }
}

/// Index of the value in ascending `axis` nearest to `x` (the lower one on a tie); `None` for
/// an empty axis or a non-finite `x`.
///
/// ```
/// use noisesonde::plot::nearest_bin;
/// let f = [0.0, 10.0, 20.0, 30.0];
/// assert_eq!(nearest_bin(&f, 14.0), Some(1));
/// assert_eq!(nearest_bin(&f, 16.0), Some(2));
/// assert_eq!(nearest_bin(&f, 1e9), Some(3));
/// assert_eq!(nearest_bin(&f, f64::NAN), None);
/// ```
pub fn nearest_bin(axis: &[f64], x: f64) -> Option<usize> {
    if axis.is_empty() || !x.is_finite() {
        return None;
    }
    let above = axis.partition_point(|&v| v < x);
    if above == 0 {
        return Some(0);
    }
    if above == axis.len() {
        return Some(axis.len() - 1);
    }
    let (lo, hi) = (axis[above - 1], axis[above]);
    Some(if x - lo <= hi - x { above - 1 } else { above })
}

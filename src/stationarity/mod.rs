//! Evidence that the record's averages stand for the process: stationarity tests on segment
//! statistics, a check that the autocorrelation depends on lag alone, and (across several
//! records) ergodicity.
//!
//! Every figure noisesonde prints is a time average over one record. It describes the process
//! only if the record is stationary (mean and mean square constant, autocorrelation a function of
//! lag alone) and the process ergodic. This module tests what one record can show:
//! - **segment statistics** ([`segments`]): the record cut into M to 2M − 1 equal segments in
//!   bounded memory; per segment the mean, mean square and variance;
//! - **the mean and mean-square lines**: Bendat & Piersol's procedure on each sequence of
//!   segment values, the reverse arrangements test ([`arrangements`], a monotonic trend) and the
//!   runs test about the median ([`runs`], clustering or alternation), each at significance α
//!   with bounds from the exact null distributions. A line is *stationary* when both tests
//!   accept; with two tests at α each, a stationary record fails a line with probability up to
//!   about 2α (each test's exact probability is in the report);
//! - **the autocorrelation line** ([`lag_shape`]): the normalised autocorrelation of J stretches
//!   against their pooled value, in units of Bartlett's standard error, at α overall;
//! - across records, [`ensemble`] compares time averages with each other and with ensemble
//!   averages (ergodicity); one record cannot show it, and the report says so.
//!
//! # References
//! - J. S. Bendat, A. G. Piersol, *Random Data: Analysis and Measurement Procedures*, 4th ed.,
//!   Wiley 2010, chapter 4 (stationarity and ergodicity; runs and reverse arrangements tests;
//!   Tables A.5 and A.6).
//! - A. Wald, J. Wolfowitz, Ann. Math. Stat. 11(2), 1940 (runs).
//! - M. G. Kendall, Biometrika 30, 1938 (inversions).
//! - M. S. Bartlett, J. R. Stat. Soc. Suppl. 8(1), 1946 (variance of autocorrelation estimates).

pub mod arrangements;
pub mod ensemble;
pub mod lag_shape;
pub mod runs;
pub mod segments;

use serde::{Deserialize, Serialize};

use crate::error::SettingsError;
use crate::spectral::Spectrogram;

use self::arrangements::{test_reverse_arrangements, ReverseArrangements, MAX_ARRANGEMENT_LEN};
use self::lag_shape::{test_lag_shape, LagShape};
use self::runs::{test_runs, RunsAboutMedian};
use self::segments::{SegmentPlan, SegmentSummary};

/// Default M: the record ends with 20 to 39 segments (common practice: Bendat & Piersol's
/// examples use 20 to 100 segments).
pub const DEFAULT_SEGMENTS: usize = 20;
/// Smallest M (Table A.6 starts at N = 10).
pub const MIN_SEGMENTS: usize = 10;
/// Largest M: the exact inversion distribution of 2M − 1 values stays small and fast.
pub const MAX_SEGMENTS: usize = MAX_ARRANGEMENT_LEN / 2;
/// Default significance of each test (common practice).
pub const DEFAULT_ALPHA: f64 = 0.05;
/// Largest α accepted: beyond it the "acceptance" region is no longer the likely one.
pub const MAX_ALPHA: f64 = 0.5;
/// Default K, the largest lag of the autocorrelation comparison, in samples.
pub const DEFAULT_MAX_LAG_LEN: usize = 32;
/// Largest K accepted (the per-sample cost grows with K).
pub const MAX_LAG_LEN: usize = 256;
/// Default J, stretches whose autocorrelations are compared.
pub const DEFAULT_STRETCHES: usize = 4;
/// Fewest stretches (a comparison needs two).
pub const MIN_STRETCHES: usize = 2;
/// Segments shorter than this many correlation times (1/e lags of the record's coefficient)
/// make neighbouring segment statistics correlated, and the tests, which assume independent
/// values, reject a stationary record too often: the report warns. A choice of this project
/// (adjacent segment means of an AR(1) record are then correlated by about 1/(2·10)).
pub const MIN_SEGMENT_CORRELATION_TIMES: f64 = 10.0;

/// What the user chooses for the stationarity tests; plain data with defaults.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct StationaritySettings {
    /// M: the record is cut into M to 2M − 1 equal segments.
    pub segments: usize,
    /// α, the significance of each test.
    pub alpha: f64,
    /// K: lags 1..=K (samples) of the autocorrelation comparison.
    pub max_lag_len: usize,
    /// J: stretches whose autocorrelations are compared (at most M).
    pub stretches: usize,
}

impl Default for StationaritySettings {
    fn default() -> Self {
        Self {
            segments: DEFAULT_SEGMENTS,
            alpha: DEFAULT_ALPHA,
            max_lag_len: DEFAULT_MAX_LAG_LEN,
            stretches: DEFAULT_STRETCHES,
        }
    }
}

impl StationaritySettings {
    /// Checks the settings and returns the segmentation they ask for.
    ///
    /// # Errors
    /// [`SettingsError`] naming the first setting out of range.
    pub fn plan(&self) -> Result<SegmentPlan, SettingsError> {
        if !(MIN_SEGMENTS..=MAX_SEGMENTS).contains(&self.segments) {
            return Err(SettingsError::StationaritySegments {
                segments: self.segments,
                min: MIN_SEGMENTS,
                max: MAX_SEGMENTS,
            });
        }
        if !(self.alpha > 0.0 && self.alpha < MAX_ALPHA) {
            return Err(SettingsError::Alpha {
                alpha: self.alpha,
                max: MAX_ALPHA,
            });
        }
        if !(1..=MAX_LAG_LEN).contains(&self.max_lag_len) {
            return Err(SettingsError::StationarityLags {
                max_lag_len: self.max_lag_len,
                max: MAX_LAG_LEN,
            });
        }
        if !(MIN_STRETCHES..=self.segments).contains(&self.stretches) {
            return Err(SettingsError::Stretches {
                stretches: self.stretches,
                min: MIN_STRETCHES,
                max: self.segments,
            });
        }
        Ok(SegmentPlan::new(self.segments, self.max_lag_len))
    }
}

/// The segment statistics behind the tests, for plotting over time.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SegmentTable {
    /// Complete segments.
    pub count: usize,
    /// Samples per segment.
    pub segment_len: u64,
    /// Duration of a segment, s.
    pub segment_s: f64,
    /// Start of each segment, s.
    pub start_s: Vec<f64>,
    /// Mean of each segment, `unit`.
    pub mean: Vec<f64>,
    /// Mean square of each segment, `unit`².
    pub mean_square: Vec<f64>,
    /// Variance (1/b) of each segment about its own mean, `unit`².
    pub variance: Vec<f64>,
    /// Samples after the last complete segment, not tested.
    pub unused_samples: u64,
}

impl SegmentTable {
    /// The table of `summary` at `sample_rate_hz`.
    pub fn of(summary: &SegmentSummary, sample_rate_hz: f64) -> Self {
        let count = summary.count();
        Self {
            count,
            segment_len: summary.segment_len,
            segment_s: summary.segment_len as f64 / sample_rate_hz,
            start_s: (0..count)
                .map(|j| summary.start_len(j) as f64 / sample_rate_hz)
                .collect(),
            mean: (0..count).map(|j| summary.mean(j)).collect(),
            mean_square: (0..count).map(|j| summary.mean_square(j)).collect(),
            variance: (0..count).map(|j| summary.variance(j)).collect(),
            unused_samples: summary.unused_samples,
        }
    }
}

/// One line of the verdict on a sequence of segment values (means or mean squares).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LevelLine {
    /// Both tests accept at α.
    pub stationary: bool,
    /// The trend test.
    pub reverse_arrangements: ReverseArrangements,
    /// The clustering test.
    pub runs: RunsAboutMedian,
    /// What was found, in one sentence.
    pub finding: String,
    /// What to try when the line fails.
    pub advice: String,
}

/// Which sequence a line tests, for its wording.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Quantity {
    /// Segment means: the level.
    Mean,
    /// Segment mean squares: the power.
    MeanSquare,
}

impl Quantity {
    fn noun(self) -> &'static str {
        match self {
            Quantity::Mean => "segment means",
            Quantity::MeanSquare => "segment mean squares",
        }
    }
    fn what(self) -> &'static str {
        match self {
            Quantity::Mean => "level",
            Quantity::MeanSquare => "power",
        }
    }
}

/// Advice when the mean line fails.
const MEAN_ADVICE: &str =
    "let the equipment settle, analyse a steady part, or read slow drift from the PSD's low end";
/// Advice when the mean-square line fails.
const MEAN_SQUARE_ADVICE: &str =
    "look for gain changes, interference or clipping; analyse steady parts separately";
/// Advice when the autocorrelation line fails.
const ACF_ADVICE: &str =
    "compare the spectrogram's columns; split the record where the spectrum changes";
/// What one record says about ergodicity.
pub const ERGODICITY_NOTE: &str =
    "not testable from one record: compare several records of the process (noisesonde ensemble)";

/// Tests one sequence with both tests at `alpha`. `None` when it is empty or longer than
/// [`MAX_ARRANGEMENT_LEN`].
pub fn test_level(values: &[f64], alpha: f64, quantity: Quantity) -> Option<LevelLine> {
    let (noun, what) = (quantity.noun(), quantity.what());
    let ra = test_reverse_arrangements(values, alpha, &format!("a trend in {what}"))?;
    let runs = test_runs(values, alpha, &format!("a wander or step in {what}"))?;
    let mut findings = Vec::new();
    if !ra.accepted {
        let direction = if ra.statistic <= ra.expected() {
            "rise"
        } else {
            "fall"
        };
        findings.push(format!("the {noun} {direction}: a trend in {what}"));
    }
    if !runs.accepted {
        let kind = if (runs.statistic as f64) < runs.expected() {
            "cluster in time: a wander or step in"
        } else {
            "alternate: a periodic change of"
        };
        findings.push(format!("the {noun} {kind} {what}"));
    }
    let stationary = ra.accepted && runs.accepted;
    let finding = if stationary {
        format!("no trend or clustering of the {noun}")
    } else {
        findings.join("; ")
    };
    Some(LevelLine {
        stationary,
        reverse_arrangements: ra,
        runs,
        finding,
        advice: match quantity {
            Quantity::Mean => MEAN_ADVICE,
            Quantity::MeanSquare => MEAN_SQUARE_ADVICE,
        }
        .to_string(),
    })
}

/// The autocorrelation line: [`LagShape`] with what to try when it fails.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct AutocorrelationLine {
    /// Autocorrelation a function of lag alone at α.
    pub stationary: bool,
    /// The comparison behind it.
    pub comparison: LagShape,
    /// What was found, in one sentence.
    pub finding: String,
    /// What to try when the line fails.
    pub advice: String,
}

/// Everything the stationarity tests found in one record.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct StationarityReport {
    /// α, the significance of each test.
    pub alpha: f64,
    /// The segment statistics over time.
    pub segments: SegmentTable,
    /// The segment means: a constant level.
    pub mean: LevelLine,
    /// The segment mean squares: a constant power.
    pub mean_square: LevelLine,
    /// The autocorrelation of stretches: a function of lag alone.
    pub autocorrelation: AutocorrelationLine,
    /// Welch PSDs of consecutive stretches (bounded), when the pipeline computed them.
    pub spectrogram: Option<Spectrogram>,
    /// The verdict in one sentence, with α and the segment count.
    pub verdict: String,
    /// What one record says about ergodicity.
    pub ergodicity: String,
}

/// Runs every test on `summary` with `settings`. `record_coefficient` is the whole record's
/// autocorrelation coefficient when the caller has it (for Bartlett's formula and the
/// correlation-time warning). Returns the report and its warnings, or `None` when there are
/// fewer than M complete segments (the record is shorter than M·b₀ samples).
pub fn assess(
    summary: &SegmentSummary,
    settings: &StationaritySettings,
    sample_rate_hz: f64,
    record_coefficient: Option<&[f64]>,
    spectrogram: Option<Spectrogram>,
) -> Option<(StationarityReport, Vec<String>)> {
    if summary.count() < settings.segments {
        return None;
    }
    let alpha = settings.alpha;
    let segments = SegmentTable::of(summary, sample_rate_hz);
    let mean = test_level(&segments.mean, alpha, Quantity::Mean)?;
    let mean_square = test_level(&segments.mean_square, alpha, Quantity::MeanSquare)?;
    let comparison = test_lag_shape(
        summary,
        settings.stretches,
        alpha,
        sample_rate_hz,
        record_coefficient,
        "a change in spectrum shape",
    )?;
    let finding = if comparison.stationary() {
        "the stretches agree with the pooled curve".to_string()
    } else {
        format!(
            "stretch {} departs from the pooled curve at lag {:.3e} s",
            comparison.at_stretch + 1,
            comparison.at_lag_s
        )
    };
    let autocorrelation = AutocorrelationLine {
        stationary: comparison.stationary(),
        comparison,
        finding,
        advice: ACF_ADVICE.to_string(),
    };

    let mut warnings = Vec::new();
    if let Some(rho) = record_coefficient {
        let one_over_e = (-1.0f64).exp();
        match rho.iter().position(|&r| r <= one_over_e) {
            Some(tau) => {
                let times = summary.segment_len as f64 / tau.max(1) as f64;
                if times < MIN_SEGMENT_CORRELATION_TIMES {
                    warnings.push(format!(
                        "stationarity segments are {} samples long, only {:.1} correlation times: neighbouring segment statistics are correlated and the tests reject a stationary record too often; a longer record or a smaller --stationarity-segments helps",
                        summary.segment_len, times
                    ));
                }
            }
            None => warnings.push(format!(
                "the autocorrelation stays above 1/e up to the largest lag ({} samples): the stationarity tests assume segments ({} samples) much longer than the correlation time, which may not hold",
                rho.len().saturating_sub(1),
                summary.segment_len
            )),
        }
    }

    let failing: Vec<&str> = [
        (!mean.stationary).then_some("mean"),
        (!mean_square.stationary).then_some("mean square"),
        (!autocorrelation.stationary).then_some("autocorrelation"),
    ]
    .into_iter()
    .flatten()
    .collect();
    let basis = format!(
        "α = {alpha} per test, {} segments of {:.4e} s",
        segments.count, segments.segment_s
    );
    let verdict = if failing.is_empty() {
        format!("stationary in mean, mean square and autocorrelation ({basis})")
    } else {
        format!("not stationary in {} ({basis})", failing.join(", "))
    };
    Some((
        StationarityReport {
            alpha,
            segments,
            mean,
            mean_square,
            autocorrelation,
            spectrogram,
            verdict,
            ergodicity: ERGODICITY_NOTE.to_string(),
        },
        warnings,
    ))
}

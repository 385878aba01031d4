//! The pipeline: settings + a streaming sample source → a [`Report`].
//!
//! The command line, the page and the live microphone all drive the same [`Analyzer`]: build it
//! once from [`Settings`] and the source's [`SourceInfo`], [`Analyzer::push`] blocks of samples,
//! and ask for a [`Report`] at the end (or at any moment, for a live view).

use serde::{Deserialize, Serialize};

use crate::acf::{Acf, AcfEstimator, AcfPlan};
use crate::error::{AnalysisError, Error, SettingsError};
use crate::io::{SampleSource, SourceInfo};
use crate::moments::MomentsAccumulator;
use crate::report::{
    first_crossing, AcfReport, Checks, Parseval, PsdReport, Report, WienerKhinchin, SCHEMA,
};
use crate::spectral::confidence::ConfidenceFactors;
use crate::spectral::inverse::InversePlan;
use crate::spectral::{
    Average, Detrend, Spectrogram, Welch, WelchPlan, WelchResult, WelchSettings,
};
use crate::stationarity::segments::SegmentAccumulator;
use crate::stationarity::{assess, StationaritySettings};
use crate::units::{Calibration, DerivedUnits};

/// Samples handled per internal step (and per read from a source).
pub const BLOCK_LEN: usize = 65_536;
/// Default confidence level of the PSD interval (95 %: common practice).
pub const DEFAULT_CONFIDENCE_LEVEL: f64 = 0.95;
/// Fewest segments before the report warns that the PSD is coarse.
const FEW_SEGMENTS: usize = 8;
/// Wiener–Khinchin deviation (fraction of R(0)) above which the report warns.
const WK_WARN_DEVIATION: f64 = 0.1;

/// Everything the user can choose; plain data with defaults, checked by [`Analyzer::new`].
/// Missing fields take their defaults when deserialised (the page sends only what it shows).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct Settings {
    /// Welch PSD settings.
    pub welch: WelchSettings,
    /// Largest autocorrelation lag in seconds; `None`: one PSD segment (L / f_s).
    pub max_lag_s: Option<f64>,
    /// Biased or unbiased autocorrelation.
    pub acf_estimator: AcfEstimator,
    /// Full scale → physical units.
    pub calibration: Calibration,
    /// Confidence level of the PSD interval.
    pub confidence_level: f64,
    /// Segments, significance and lags of the stationarity tests.
    pub stationarity: StationaritySettings,
}

impl Default for Settings {
    fn default() -> Self {
        Self {
            welch: WelchSettings::default(),
            max_lag_s: None,
            acf_estimator: AcfEstimator::default(),
            calibration: Calibration::default(),
            confidence_level: DEFAULT_CONFIDENCE_LEVEL,
            stationarity: StationaritySettings::default(),
        }
    }
}

/// The streaming analysis of one channel.
#[derive(Debug, Clone)]
pub struct Analyzer {
    settings: Settings,
    source: SourceInfo,
    scale: f64,
    moments: MomentsAccumulator,
    welch: Welch,
    acf: Acf,
    /// The Wiener–Khinchin check's inverse FFT and window correlation, prepared once (a live
    /// view asks for a report many times a second).
    wiener_khinchin: Option<InversePlan>,
    segments: SegmentAccumulator,
    scaled: Vec<f64>,
    samples: u64,
}

impl Analyzer {
    /// Checks `settings` against `source` and precomputes the plans.
    ///
    /// # Errors
    /// [`SettingsError`] naming the first setting that cannot be used.
    pub fn new(settings: &Settings, source: &SourceInfo) -> Result<Self, SettingsError> {
        let sample_rate_hz = source.sample_rate_hz;
        if !(sample_rate_hz.is_finite() && sample_rate_hz > 0.0) {
            return Err(SettingsError::SampleRate { sample_rate_hz });
        }
        settings.calibration.check()?;
        let level = settings.confidence_level;
        if !(level > 0.0 && level < 1.0) {
            return Err(SettingsError::ConfidenceLevel { level });
        }
        let welch_plan = WelchPlan::new(&settings.welch)?;
        let segment_plan = settings.stationarity.plan()?;
        let max_lag_len = match settings.max_lag_s {
            None => settings.welch.segment_len,
            Some(max_lag_s) => {
                if !(max_lag_s.is_finite() && max_lag_s >= 0.0) {
                    return Err(SettingsError::MaxLagSeconds { max_lag_s });
                }
                let len = (max_lag_s * sample_rate_hz).round();
                if len > crate::acf::MAX_LAG_LEN as f64 {
                    return Err(SettingsError::MaxLag {
                        max_lag_len: len.min(usize::MAX as f64) as usize,
                        limit: crate::acf::MAX_LAG_LEN,
                    });
                }
                len as usize
            }
        };
        let scale = settings.calibration.scale_units_per_fs;
        let clip_levels = source.clip_level_fs.map(|high| (-scale, high * scale));
        Ok(Self {
            settings: settings.clone(),
            source: source.clone(),
            scale,
            moments: MomentsAccumulator::new(clip_levels),
            wiener_khinchin: InversePlan::new(
                welch_plan.window(),
                (settings.welch.segment_len / 4).min(max_lag_len),
            ),
            welch: Welch::new(welch_plan),
            acf: Acf::new(AcfPlan::new(max_lag_len)?),
            segments: SegmentAccumulator::new(segment_plan),
            scaled: Vec::with_capacity(BLOCK_LEN),
            samples: 0,
        })
    }

    /// Samples pushed so far.
    pub fn samples(&self) -> u64 {
        self.samples
    }

    /// Feeds a block of samples in the source's units (full scale for audio files).
    ///
    /// # Errors
    /// [`AnalysisError::NonFiniteSample`] at the first NaN or infinity (nothing of the block is
    /// used), [`AnalysisError::MedianTooLong`] from median averaging.
    pub fn push(&mut self, block: &[f64]) -> Result<(), AnalysisError> {
        if let Some(position) = block.iter().position(|x| !x.is_finite()) {
            let index = self.samples + position as u64;
            return Err(AnalysisError::NonFiniteSample {
                index,
                time_s: index as f64 / self.source.sample_rate_hz,
                value: block[position],
            });
        }
        for chunk in block.chunks(BLOCK_LEN) {
            self.scaled.clear();
            self.scaled.extend(chunk.iter().map(|x| x * self.scale));
            self.moments.push(&self.scaled);
            self.welch.push(&self.scaled)?;
            self.acf.push(&self.scaled);
            self.segments.push(&self.scaled);
            self.samples += chunk.len() as u64;
        }
        Ok(())
    }

    /// The report on the samples so far; pushing may continue afterwards. `source_warnings`
    /// (from the reader) are placed first among the warnings.
    ///
    /// # Errors
    /// [`AnalysisError::TooShort`] before one whole PSD segment.
    pub fn report(&self, source_warnings: &[String]) -> Result<Report, AnalysisError> {
        let (welch, spectrogram) = self
            .welch
            .finish_with_spectrogram(self.source.sample_rate_hz)
            .ok_or_else(|| self.too_short())?;
        self.report_with(welch, Some(spectrogram), source_warnings)
    }

    fn too_short(&self) -> AnalysisError {
        AnalysisError::TooShort {
            samples: self.samples,
            segment_len: self.settings.welch.segment_len,
            suggestion: suggest_segment(self.samples),
        }
    }

    /// [`Analyzer::report`] with the PSD given rather than this analyzer's own Welch average:
    /// a live view's recent average, on the same plan (window, segment, overlap), so that its
    /// interval, checks and units come out of the same code. Moments and the autocorrelation
    /// are this analyzer's. `welch.density` must have the plan's bins. Without a
    /// `spectrogram` the stationarity section has none.
    ///
    /// # Errors
    /// [`AnalysisError::TooShort`] before one whole PSD segment.
    pub fn report_with(
        &self,
        welch: WelchResult,
        spectrogram: Option<Spectrogram>,
        source_warnings: &[String],
    ) -> Result<Report, AnalysisError> {
        let segment_len = self.settings.welch.segment_len;
        let too_short = || self.too_short();
        let fs = self.source.sample_rate_hz;
        let moments = self.moments.finish().ok_or_else(too_short)?;
        let acf = self
            .acf
            .finish(self.settings.acf_estimator)
            .ok_or_else(too_short)?;
        let unit = self.settings.calibration.unit_for(self.source.full_scale);
        let units = DerivedUnits::of(&unit);
        let mut warnings: Vec<String> = source_warnings.to_vec();

        // Chi-square interval; DC and Nyquist bins carry half the degrees of freedom.
        let level = self.settings.confidence_level;
        let interior = ConfidenceFactors::new(welch.dof, level);
        let edge = ConfidenceFactors::new(welch.dof / 2.0, level);
        let bins = welch.density.len();
        let has_nyquist = segment_len.is_multiple_of(2);
        let factors_for = |bin: usize| {
            if bin == 0 || (has_nyquist && bin == bins - 1) {
                edge
            } else {
                interior
            }
        };
        let (ci_lower, ci_upper): (Vec<f64>, Vec<f64>) = welch
            .density
            .iter()
            .enumerate()
            .map(|(bin, &p)| match factors_for(bin) {
                Some(f) => (p * f.lower, p * f.upper),
                None => (0.0, f64::MAX),
            })
            .unzip();

        let detrended = self.settings.welch.detrend != Detrend::None;
        let integrated_psd: f64 = welch.density.iter().sum::<f64>() * welch.bin_width_hz;
        let (time_domain, compared_with) = if detrended {
            (moments.variance, "variance")
        } else {
            (moments.mean_square, "mean_square")
        };
        let parseval = Parseval {
            integrated_psd,
            time_domain,
            compared_with: compared_with.to_string(),
            ratio: if time_domain > 0.0 {
                integrated_psd / time_domain
            } else {
                0.0
            },
        };

        let direct = if detrended {
            &acf.autocovariance
        } else {
            &acf.autocorrelation
        };
        // Lags 0..=min(L/4, max lag, N − 1): the plan covers the first two bounds.
        let mut from_psd = self
            .wiener_khinchin
            .as_ref()
            .map(|plan| plan.acf_from_density(&welch.density, fs))
            .unwrap_or_default();
        from_psd.truncate(direct.len());
        let r0 = direct.first().copied().unwrap_or(0.0);
        let max_deviation = if r0 > 0.0 {
            from_psd
                .iter()
                .zip(direct.iter())
                .map(|(a, b)| (a - b).abs() / r0)
                .fold(0.0, f64::max)
        } else {
            0.0
        };
        let wiener_khinchin = WienerKhinchin {
            max_deviation,
            lags_compared: from_psd.len().saturating_sub(1),
            compared_with: if detrended {
                "autocovariance"
            } else {
                "autocorrelation"
            }
            .to_string(),
        };

        if let Some(clipped) = moments.clipped_samples.filter(|&c| c > 0) {
            warnings.push(format!(
                "{clipped} samples are at or beyond digital full scale: the record is clipped and every figure is suspect"
            ));
        }
        if welch.segments < FEW_SEGMENTS {
            if let Some(f) = interior {
                warnings.push(format!(
                    "only {} PSD segments ({:.1} degrees of freedom): the {:.0} % interval spans ×{:.3} to ×{:.3} of each value; a shorter segment or a longer record narrows it",
                    welch.segments, welch.dof, level * 100.0, f.lower, f.upper
                ));
            }
        }
        if self.settings.welch.average == Average::Median {
            warnings.push(
                "median averaging: the confidence interval uses the degrees of freedom of mean averaging and is too narrow for median estimates"
                    .to_string(),
            );
        }
        let requested_lag = self.acf.plan().max_lag_len();
        if acf.lag_len.len() < requested_lag + 1 {
            warnings.push(format!(
                "maximum lag reduced from {requested_lag} to {} samples: the record is that short",
                acf.lag_len.len().saturating_sub(1)
            ));
        }
        if max_deviation > WK_WARN_DEVIATION {
            warnings.push(format!(
                "the ACF from the PSD and the direct ACF differ by {:.1} % of R(0): the record may not be stationary, or power below the PSD's first bin (drift, 1/f) dominates",
                max_deviation * 100.0
            ));
        }

        let stationarity = match self.segments.finish().and_then(|summary| {
            assess(
                &summary,
                &self.settings.stationarity,
                fs,
                Some(&acf.coefficient),
                spectrogram,
            )
        }) {
            Some((report, found)) => {
                warnings.extend(found);
                Some(report)
            }
            None => {
                let plan = self.segments.plan();
                warnings.push(format!(
                    "no stationarity tests: they need {} segments of at least {} samples ({} samples), the record has {}",
                    plan.min_segments,
                    plan.base_len,
                    plan.min_segments as u64 * plan.base_len,
                    self.samples
                ));
                None
            }
        };

        let zero_crossing_s = first_crossing(&acf.coefficient, 0.0).map(|k| k / fs);
        let one_over_e_s = first_crossing(&acf.coefficient, (-1.0f64).exp()).map(|k| k / fs);
        let segments_used = self.welch.plan().segments_in(self.samples);
        let covered = if segments_used == 0 {
            0
        } else {
            (segments_used - 1) * self.welch.plan().step_len() as u64 + segment_len as u64
        };
        Ok(Report {
            schema: SCHEMA.to_string(),
            source: self.source.clone(),
            sample_rate_hz: fs,
            samples: self.samples,
            duration_s: self.samples as f64 / fs,
            channel: self.source.channel,
            unit: unit.clone(),
            calibration: self.settings.calibration.clone(),
            moments,
            psd: PsdReport {
                frequency_hz: welch.frequency_hz,
                density: welch.density,
                power_spectrum: welch.power_spectrum,
                unit: units.density.clone(),
                power_spectrum_unit: units.power.clone(),
                window: self.settings.welch.window,
                segment_len,
                overlap_len: welch.overlap_len,
                detrend: self.settings.welch.detrend,
                average: self.settings.welch.average,
                bin_width_hz: welch.bin_width_hz,
                enbw_bins: welch.enbw_bins,
                enbw_hz: welch.enbw_hz,
                segments: welch.segments,
                dof: welch.dof,
                unused_samples: self.samples - covered,
                confidence_level: level,
                ci_lower,
                ci_upper,
                ci_factor_lower: interior.map_or(0.0, |f| f.lower),
                ci_factor_upper: interior.map_or(f64::MAX, |f| f.upper),
            },
            acf: AcfReport {
                lag_s: acf.lag_len.iter().map(|&k| k as f64 / fs).collect(),
                autocorrelation: acf.autocorrelation,
                autocovariance: acf.autocovariance,
                coefficient: acf.coefficient,
                unit: units.power.clone(),
                estimator: acf.estimator,
                max_lag_s: requested_lag.min(self.samples.saturating_sub(1) as usize) as f64 / fs,
                zero_crossing_s,
                one_over_e_s,
            },
            units,
            checks: Checks {
                parseval,
                wiener_khinchin,
            },
            stationarity,
            warnings,
        })
    }
}

/// The largest power of two not above `samples` (at least 8), as a segment length to suggest.
fn suggest_segment(samples: u64) -> usize {
    let mut len = crate::spectral::welch::MIN_SEGMENT_LEN;
    while (len as u64) * 2 <= samples {
        len *= 2;
    }
    len
}

/// Reads `source` to its end through an [`Analyzer`] and returns the report.
///
/// # Errors
/// Any reader, settings or analysis error.
pub fn analyze(source: &mut dyn SampleSource, settings: &Settings) -> Result<Report, Error> {
    let mut analyzer = Analyzer::new(settings, source.info())?;
    let mut block = vec![0.0; BLOCK_LEN];
    loop {
        let got = source.read(&mut block)?;
        if got == 0 {
            break;
        }
        analyzer.push(&block[..got])?;
    }
    Ok(analyzer.report(source.warnings())?)
}

//! The ensemble pipeline: several records of one process, read in lockstep → an
//! [`EnsembleReport`] on ergodicity.
//!
//! Like [`crate::analysis`]: build an [`EnsembleAnalyzer`] from [`EnsembleSettings`] and the
//! records' [`SourceInfo`]s, [`EnsembleAnalyzer::push`] aligned blocks (one per record, equal
//! lengths), and ask for the report. [`analyze_ensemble`] does the lockstep reading from sample
//! sources; the command line opens the files. The statistics are in
//! [`crate::stationarity::ensemble`].

use serde::{Deserialize, Serialize};

use crate::error::{AnalysisError, Error, SettingsError};
use crate::io::{SampleSource, SourceInfo};
use crate::stationarity::ensemble::{assess_ensemble, EnsembleAccumulator, EnsembleFindings};
use crate::stationarity::segments::SegmentPlan;
use crate::stationarity::{assess, StationarityReport, StationaritySettings};
use crate::units::{Calibration, DerivedUnits};

/// Version of the ensemble report's layout.
pub const ENSEMBLE_SCHEMA: &str = "noisesonde.ensemble/1";
/// Samples per record read in one lockstep step (memory: this × 8 bytes × 2 per record).
pub const ENSEMBLE_BLOCK_LEN: usize = 8192;
/// Relative difference of sample rates still taken as equal (rates derived from text time
/// columns differ in their last digits).
const SAMPLE_RATE_TOLERANCE: f64 = 1e-9;

/// What the user chooses for an ensemble; plain data with defaults.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct EnsembleSettings {
    /// Full scale → physical units, the same for every record.
    pub calibration: Calibration,
    /// Segments (the batch means), α, and the lags kept.
    pub stationarity: StationaritySettings,
    /// Lags (samples) of the autocorrelation comparison, each ≤ `stationarity.max_lag_len`;
    /// `None`: 1, 2, 4, … up to it.
    pub lags_len: Option<Vec<usize>>,
}

/// Everything measured on an ensemble of records.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct EnsembleReport {
    /// Layout version, [`ENSEMBLE_SCHEMA`].
    pub schema: String,
    /// What was read, record by record.
    pub sources: Vec<SourceInfo>,
    /// K, the records.
    pub records: usize,
    /// Sample rate, Hz (the first record's).
    pub sample_rate_hz: f64,
    /// Aligned samples per record (the shortest record's length).
    pub samples: u64,
    /// samples / sample_rate_hz.
    pub duration_s: f64,
    /// Unit of the samples after calibration.
    pub unit: String,
    /// Units of derived quantities.
    pub units: DerivedUnits,
    /// The calibration applied to every record.
    pub calibration: Calibration,
    /// Time averages against the ensemble: the ergodicity tests.
    pub ensemble: EnsembleFindings,
    /// Each record's own stationarity tests, in the order of `sources`.
    pub each_record: Vec<StationarityReport>,
    /// Things the user should know.
    pub warnings: Vec<String>,
}

/// The streaming analysis of K aligned records.
#[derive(Debug, Clone)]
pub struct EnsembleAnalyzer {
    settings: EnsembleSettings,
    lags_len: Vec<usize>,
    sources: Vec<SourceInfo>,
    scale: f64,
    accumulator: EnsembleAccumulator,
    scaled: Vec<Vec<f64>>,
    samples: u64,
}

impl EnsembleAnalyzer {
    /// Checks `settings` against the records' `sources`.
    ///
    /// # Errors
    /// [`SettingsError::TooFewRecords`] for fewer than two records (ergodicity cannot be tested
    /// from one), [`SettingsError::SampleRateMismatch`], [`SettingsError::EnsembleLag`], or a
    /// calibration or stationarity setting out of range.
    pub fn new(settings: &EnsembleSettings, sources: &[SourceInfo]) -> Result<Self, SettingsError> {
        if sources.len() < 2 {
            return Err(SettingsError::TooFewRecords {
                records: sources.len(),
            });
        }
        let first_hz = sources[0].sample_rate_hz;
        if !(first_hz.is_finite() && first_hz > 0.0) {
            return Err(SettingsError::SampleRate {
                sample_rate_hz: first_hz,
            });
        }
        for (record, source) in sources.iter().enumerate().skip(1) {
            let hz = source.sample_rate_hz;
            let same = (hz - first_hz).abs() <= SAMPLE_RATE_TOLERANCE * first_hz;
            if !same {
                return Err(SettingsError::SampleRateMismatch {
                    record,
                    sample_rate_hz: hz,
                    first_hz,
                });
            }
        }
        settings.calibration.check()?;
        let plan: SegmentPlan = settings.stationarity.plan()?;
        let max_lag_len = settings.stationarity.max_lag_len;
        let lags_len = match &settings.lags_len {
            Some(lags) => lags.clone(),
            None => std::iter::successors(Some(1usize), |k| Some(k * 2))
                .take_while(|&k| k <= max_lag_len)
                .collect(),
        };
        if let Some(&lag_len) = lags_len.iter().find(|&&k| k > max_lag_len) {
            return Err(SettingsError::EnsembleLag {
                lag_len,
                max_lag_len,
            });
        }
        Ok(Self {
            settings: settings.clone(),
            lags_len,
            sources: sources.to_vec(),
            scale: settings.calibration.scale_units_per_fs,
            accumulator: EnsembleAccumulator::new(sources.len(), plan),
            scaled: vec![vec![0.0; ENSEMBLE_BLOCK_LEN]; sources.len()],
            samples: 0,
        })
    }

    /// Aligned samples pushed so far (per record).
    pub fn samples(&self) -> u64 {
        self.samples
    }

    /// Feeds one block per record, in the sources' units, all of the same length.
    ///
    /// # Errors
    /// [`AnalysisError::BlockCount`] unless there is one block per record,
    /// [`AnalysisError::UnequalBlocks`] when their lengths differ,
    /// [`AnalysisError::NonFiniteSampleIn`] at the first NaN or infinity (nothing of
    /// the blocks is used).
    pub fn push(&mut self, blocks: &[&[f64]]) -> Result<(), AnalysisError> {
        let expected = blocks.first().map_or(0, |b| b.len());
        if blocks.len() != self.sources.len() {
            return Err(AnalysisError::BlockCount {
                blocks: blocks.len(),
                records: self.sources.len(),
            });
        }
        for (record, block) in blocks.iter().enumerate() {
            if block.len() != expected {
                return Err(AnalysisError::UnequalBlocks {
                    record,
                    len: block.len(),
                    expected,
                });
            }
            if let Some(position) = block.iter().position(|x| !x.is_finite()) {
                let index = self.samples + position as u64;
                return Err(AnalysisError::NonFiniteSampleIn {
                    record,
                    index,
                    time_s: index as f64 / self.sources[0].sample_rate_hz,
                    value: block[position],
                });
            }
        }
        let mut start = 0;
        while start < expected {
            let end = (start + ENSEMBLE_BLOCK_LEN).min(expected);
            for (out, block) in self.scaled.iter_mut().zip(blocks) {
                for (o, x) in out.iter_mut().zip(&block[start..end]) {
                    *o = x * self.scale;
                }
            }
            let n = end - start;
            let views: Vec<&[f64]> = self.scaled.iter().map(|s| &s[..n]).collect();
            self.accumulator.push(&views);
            start = end;
        }
        self.samples += expected as u64;
        Ok(())
    }

    /// The report on the samples so far. `warnings` (from the readers and the lockstep
    /// reading) come first among its warnings.
    ///
    /// # Errors
    /// [`AnalysisError::EnsembleTooShort`] before M segments of every record are complete.
    pub fn report(&self, warnings: &[String]) -> Result<EnsembleReport, AnalysisError> {
        let st = &self.settings.stationarity;
        let plan = self.accumulator_plan();
        let too_short = || AnalysisError::EnsembleTooShort {
            samples: self.samples,
            needed: st.segments as u64 * plan.base_len,
            segments: st.segments,
        };
        let fs = self.sources[0].sample_rate_hz;
        let (records, across) = self.accumulator.finish().ok_or_else(too_short)?;
        if records.iter().any(|r| r.count() < st.segments) {
            return Err(too_short());
        }
        let findings = assess_ensemble(&records, &across, st.alpha, &self.lags_len, fs)
            .ok_or_else(too_short)?;
        let mut all_warnings = warnings.to_vec();
        let mut each_record = Vec::with_capacity(records.len());
        for (summary, source) in records.iter().zip(&self.sources) {
            let (report, found) = assess(summary, st, fs, None, None).ok_or_else(too_short)?;
            all_warnings.extend(found.into_iter().map(|w| format!("{}: {w}", source.name)));
            each_record.push(report);
        }
        let full_scale = self.sources[0].full_scale;
        if self.sources.iter().any(|s| s.full_scale != full_scale) {
            all_warnings.push(
                "the records mix full-scale (audio) and text inputs: one calibration applies to all, so their units may not agree"
                    .to_string(),
            );
        }
        let unit = self.settings.calibration.unit_for(full_scale);
        Ok(EnsembleReport {
            schema: ENSEMBLE_SCHEMA.to_string(),
            sources: self.sources.clone(),
            records: self.sources.len(),
            sample_rate_hz: fs,
            samples: self.samples,
            duration_s: self.samples as f64 / fs,
            units: DerivedUnits::of(&unit),
            unit,
            calibration: self.settings.calibration.clone(),
            ensemble: findings,
            each_record,
            warnings: all_warnings,
        })
    }

    fn accumulator_plan(&self) -> SegmentPlan {
        SegmentPlan::new(
            self.settings.stationarity.segments,
            self.settings.stationarity.max_lag_len,
        )
    }
}

/// Reads `sources` in lockstep to the end of the shortest and returns the ensemble report.
///
/// # Errors
/// Any reader, settings or analysis error.
pub fn analyze_ensemble(
    sources: &mut [&mut dyn SampleSource],
    settings: &EnsembleSettings,
) -> Result<EnsembleReport, Error> {
    let infos: Vec<SourceInfo> = sources.iter().map(|s| s.info().clone()).collect();
    let mut analyzer = EnsembleAnalyzer::new(settings, &infos)?;
    let mut buffers = vec![vec![0.0; ENSEMBLE_BLOCK_LEN]; sources.len()];
    let mut filled = vec![0usize; sources.len()];
    let mut ended = vec![false; sources.len()];
    loop {
        for (i, source) in sources.iter_mut().enumerate() {
            while filled[i] < ENSEMBLE_BLOCK_LEN && !ended[i] {
                let got = source.read(&mut buffers[i][filled[i]..])?;
                if got == 0 {
                    ended[i] = true;
                } else {
                    filled[i] += got;
                }
            }
        }
        let common = filled.iter().copied().min().unwrap_or(0);
        if common > 0 {
            let views: Vec<&[f64]> = buffers.iter().map(|b| &b[..common]).collect();
            analyzer.push(&views)?;
            for (buffer, f) in buffers.iter_mut().zip(filled.iter_mut()) {
                buffer.copy_within(common..*f, 0);
                *f -= common;
            }
        }
        if ended.iter().zip(&filled).any(|(&e, &f)| e && f == 0) {
            break;
        }
    }
    let mut warnings = Vec::new();
    for (source, info) in sources.iter().zip(&infos) {
        for w in source.warnings() {
            warnings.push(format!("{}: {w}", info.name));
        }
    }
    let shortest = ended
        .iter()
        .zip(&filled)
        .position(|(&e, &f)| e && f == 0)
        .map(|i| infos[i].name.clone());
    let longer: Vec<&str> = ended
        .iter()
        .zip(&filled)
        .zip(&infos)
        .filter(|((&e, &f), _)| !e || f > 0)
        .map(|(_, info)| info.name.as_str())
        .collect();
    if let (Some(shortest), false) = (shortest, longer.is_empty()) {
        warnings.push(format!(
            "the records differ in length: all were used up to the end of the shortest ({shortest}, {} samples); the rest of {} was not read",
            analyzer.samples(),
            longer.join(", ")
        ));
    }
    Ok(analyzer.report(&warnings)?)
}

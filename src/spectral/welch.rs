//! Welch's averaged, overlapped-segment periodogram, computed while samples stream in.
//!
//! # Method
//! The record is cut into K whole segments of L samples that start every S = L − O samples
//! (O samples of overlap; a final partial segment is dropped). Each segment is detrended
//! (none, its mean, or its least-squares line), multiplied by the window w and transformed;
//! the periodograms |X[k]|² are averaged (mean, or median divided by its bias) and scaled:
//! - density: P[k] = c·|X[k]|² / (f_s Σw²)   (units²/Hz)
//! - power spectrum: P[k] = c·|X[k]|² / (Σw)²   (units², a tone's mean square at its bin)
//!
//! with c = 2 for one-sided bins except DC and (for even L) Nyquist, where c = 1. The two
//! scalings differ by the ENBW in hertz: spectrum = density × ENBW_bins × f_s / L.
//! These are the conventions of `scipy.signal.welch` (periodic windows, whole segments only,
//! per-segment detrend), which the reference tests check to 1e-9.
//!
//! # References
//! - P. D. Welch, "The use of fast Fourier transform for the estimation of power spectra: a
//!   method based on time averaging over short, modified periodograms", IEEE Trans. Audio
//!   Electroacoust. AU-15(2), 70–73, 1967.
//! - Median averaging and its bias: B. Allen et al., "FINDCHIRP: an algorithm for detection of
//!   gravitational waves from inspiraling compact binaries", Phys. Rev. D 85, 122006 (2012),
//!   Appendix B (the bias 1 + Σ_{i=1}^{(K−1)/2} (1/(2i+1) − 1/(2i)); from memory, and as
//!   implemented by `scipy.signal.welch(average='median')`).

use std::fmt;
use std::str::FromStr;
use std::sync::Arc;

use realfft::num_complex::Complex;
use realfft::{RealFftPlanner, RealToComplex};
use serde::{Deserialize, Serialize};

use crate::error::{AnalysisError, SettingsError};
use crate::window::{WindowFigures, WindowKind};

use super::confidence::welch_dof;
use super::spectrogram::{ColumnParts, ColumnStore, Spectrogram, SpectrogramLayout};
use crate::numeric::{median, sum_in_lanes};

/// Default segment length in samples.
pub const DEFAULT_SEGMENT_LEN: usize = 4096;
/// Default overlap between segments, as a fraction of the segment (50 %: common practice for Hann).
pub const DEFAULT_OVERLAP_FRAC: f64 = 0.5;
/// Shortest segment accepted.
pub const MIN_SEGMENT_LEN: usize = 8;
/// Longest segment accepted (2^24 samples).
pub const MAX_SEGMENT_LEN: usize = 1 << 24;
/// Slack added before rounding the overlap down, so that 0.29 × 100 gives 29, not 28.
const OVERLAP_ROUNDING_SLACK: f64 = 1e-9;
/// Largest number of stored periodogram values for median averaging (256 MiB of f64).
pub const MEDIAN_MAX_VALUES: usize = 32 << 20;

/// What to remove from each segment before windowing.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Detrend {
    /// Nothing: the DC bin keeps the record's mean.
    None,
    /// The segment's mean (default).
    #[default]
    Mean,
    /// The segment's least-squares straight line.
    Linear,
}

/// How the segments' periodograms are combined.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Average {
    /// Arithmetic mean (Welch 1967).
    #[default]
    Mean,
    /// Per-bin median divided by its bias for K segments; robust to transients.
    /// Stores every segment's periodogram until the end (memory grows with the record).
    Median,
}

macro_rules! text_enum {
    ($ty:ty, $what:literal, $($text:literal => $value:expr),+) => {
        impl fmt::Display for $ty {
            fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
                $(if *self == $value { return f.write_str($text); })+
                Ok(())
            }
        }
        impl FromStr for $ty {
            type Err = SettingsError;
            fn from_str(text: &str) -> Result<Self, Self::Err> {
                match text.trim().to_ascii_lowercase().as_str() {
                    $($text => Ok($value),)+
                    _ => Err(SettingsError::UnknownChoice {
                        what: $what,
                        text: text.to_string(),
                        choices: concat!($($text, " "),+).trim_end(),
                    }),
                }
            }
        }
    };
}
text_enum!(Detrend, "detrend", "none" => Detrend::None, "mean" => Detrend::Mean, "linear" => Detrend::Linear);
text_enum!(Average, "average", "mean" => Average::Mean, "median" => Average::Median);

/// Settings of the Welch estimator: plain data, checked by [`WelchPlan::new`].
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct WelchSettings {
    /// Window applied to each segment.
    pub window: WindowKind,
    /// Segment length L in samples; sets the bin spacing f_s/L.
    pub segment_len: usize,
    /// Overlap between consecutive segments as a fraction of L, 0 ≤ overlap < 1; rounded down
    /// to whole samples (O = ⌊overlap·L⌋, as scipy's default `noverlap = nperseg // 2`).
    pub overlap_frac: f64,
    /// Per-segment detrend.
    pub detrend: Detrend,
    /// Mean or median averaging.
    pub average: Average,
}

impl Default for WelchSettings {
    fn default() -> Self {
        Self {
            window: WindowKind::Hann,
            segment_len: DEFAULT_SEGMENT_LEN,
            overlap_frac: DEFAULT_OVERLAP_FRAC,
            detrend: Detrend::Mean,
            average: Average::Mean,
        }
    }
}

/// Precomputed window, FFT plan and scratch for one [`WelchSettings`].
#[derive(Clone)]
pub struct WelchPlan {
    settings: WelchSettings,
    window: Vec<f64>,
    figures: WindowFigures,
    overlap_len: usize,
    fft: Arc<dyn RealToComplex<f64>>,
    layout: SpectrogramLayout,
}

impl fmt::Debug for WelchPlan {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.debug_struct("WelchPlan")
            .field("settings", &self.settings)
            .field("overlap_len", &self.overlap_len)
            .finish()
    }
}

impl WelchPlan {
    /// Checks the settings and precomputes the window and FFT.
    ///
    /// # Errors
    /// [`SettingsError`] when the segment length is outside
    /// [`MIN_SEGMENT_LEN`]..=[`MAX_SEGMENT_LEN`] or the overlap is not in [0, 1).
    pub fn new(settings: &WelchSettings) -> Result<Self, SettingsError> {
        let segment_len = settings.segment_len;
        if !(MIN_SEGMENT_LEN..=MAX_SEGMENT_LEN).contains(&segment_len) {
            return Err(SettingsError::SegmentLength {
                segment_len,
                min: MIN_SEGMENT_LEN,
                max: MAX_SEGMENT_LEN,
            });
        }
        let overlap_frac = settings.overlap_frac;
        if !(overlap_frac.is_finite() && (0.0..1.0).contains(&overlap_frac)) {
            return Err(SettingsError::Overlap { overlap_frac });
        }
        let overlap_len = ((overlap_frac * segment_len as f64 + OVERLAP_ROUNDING_SLACK).floor()
            as usize)
            .min(segment_len - 1);
        let window = settings.window.coefficients(segment_len);
        let figures = WindowFigures::of(&window);
        if !(figures.sum > 0.0 && figures.enbw_bins.is_finite()) {
            return Err(SettingsError::DegenerateWindow {
                window: settings.window.to_string(),
            });
        }
        let fft = RealFftPlanner::<f64>::new().plan_fft_forward(segment_len);
        let layout = SpectrogramLayout::new(segment_len / 2 + 1, segment_len.is_multiple_of(2));
        Ok(Self {
            settings: *settings,
            window,
            figures,
            overlap_len,
            fft,
            layout,
        })
    }

    /// The settings this plan was built from.
    pub fn settings(&self) -> &WelchSettings {
        &self.settings
    }
    /// Segment length L.
    pub fn segment_len(&self) -> usize {
        self.settings.segment_len
    }
    /// Overlap O in samples.
    pub fn overlap_len(&self) -> usize {
        self.overlap_len
    }
    /// Step S = L − O between segment starts.
    pub fn step_len(&self) -> usize {
        self.settings.segment_len - self.overlap_len
    }
    /// Number of one-sided bins, L/2 + 1.
    pub fn bins(&self) -> usize {
        self.settings.segment_len / 2 + 1
    }
    /// The window's coefficients.
    pub fn window(&self) -> &[f64] {
        &self.window
    }
    /// The window's figures (sums, ENBW, coherent gain).
    pub fn figures(&self) -> &WindowFigures {
        &self.figures
    }
    /// 1/(f_s Σw²): turns a segment's |X[k]|² into a two-sided density (units²/Hz), before
    /// the one-sided factor of [`WelchPlan::one_sided_factor`].
    pub(crate) fn density_scale(&self, sample_rate_hz: f64) -> f64 {
        1.0 / (sample_rate_hz * self.figures.sum_of_squares)
    }
    /// c of the one-sided spectrum: 1 at DC and (for even L) Nyquist, else 2.
    pub(crate) fn one_sided_factor(&self, bin: usize) -> f64 {
        let has_nyquist = self.settings.segment_len.is_multiple_of(2);
        if bin == 0 || (has_nyquist && bin == self.bins() - 1) {
            1.0
        } else {
            2.0
        }
    }
    /// Whole segments in a record of `samples`: ⌊(N − O)/S⌋ when N ≥ L, else 0.
    pub fn segments_in(&self, samples: u64) -> u64 {
        let l = self.segment_len() as u64;
        if samples < l {
            return 0;
        }
        (samples - self.overlap_len as u64) / self.step_len() as u64
    }
}

/// Samples a batch of segments should span; batches are cut by segment index, so the grouping
/// (and so the rounding of the sums) does not depend on how the caller cuts its blocks.
const BATCH_TARGET_LEN: usize = 1 << 20;
/// Most segments in one batch.
const BATCH_MAX_SEGMENTS: usize = 256;
/// Least work (segments × L) for which a batch's second half goes to another thread.
#[cfg(not(target_arch = "wasm32"))]
const THREAD_MIN_WORK: usize = 1 << 16;

/// One segment's detrend, window and real FFT, with its buffers reused from segment to segment.
/// Shared by [`Welch`] and the live spectrum (`crate::live`), so both transform a segment in
/// exactly the same way.
#[derive(Clone)]
pub(crate) struct SegmentTransform {
    work: Vec<f64>,
    spectrum: Vec<Complex<f64>>,
    scratch: Vec<Complex<f64>>,
}

impl SegmentTransform {
    pub(crate) fn new(plan: &WelchPlan) -> Self {
        Self {
            work: vec![0.0; plan.segment_len()],
            spectrum: plan.fft.make_output_vec(),
            scratch: plan.fft.make_scratch_vec(),
        }
    }

    /// X[k], k = 0..L/2, of `seg` (L samples) after the plan's detrend and window. Allocates
    /// nothing.
    pub(crate) fn spectrum(&mut self, plan: &WelchPlan, seg: &[f64]) -> &[Complex<f64>] {
        debug_assert_eq!(seg.len(), plan.segment_len());
        let len = seg.len();
        match plan.settings.detrend {
            Detrend::None => {
                for ((out, &x), &w) in self.work.iter_mut().zip(seg).zip(&plan.window) {
                    *out = x * w;
                }
            }
            Detrend::Mean => {
                let mean = sum_in_lanes(seg) / len as f64;
                for ((out, &x), &w) in self.work.iter_mut().zip(seg).zip(&plan.window) {
                    *out = (x - mean) * w;
                }
            }
            Detrend::Linear => {
                // Least-squares line against the centred index t = n − (L−1)/2:
                // intercept = mean, slope = Σ t x / Σ t², Σ t² = L(L²−1)/12.
                let centre = (len as f64 - 1.0) / 2.0;
                let mean = sum_in_lanes(seg) / len as f64;
                let sum_tx: f64 = seg
                    .iter()
                    .enumerate()
                    .map(|(n, &x)| (n as f64 - centre) * x)
                    .sum();
                let lf = len as f64;
                let sum_tt = lf * (lf * lf - 1.0) / 12.0;
                let slope = sum_tx / sum_tt;
                for (n, ((out, &x), &w)) in
                    self.work.iter_mut().zip(seg).zip(&plan.window).enumerate()
                {
                    *out = (x - mean - slope * (n as f64 - centre)) * w;
                }
            }
        }
        // Lengths are fixed by the plan, so the FFT cannot fail.
        let transformed =
            plan.fft
                .process_with_scratch(&mut self.work, &mut self.spectrum, &mut self.scratch);
        debug_assert!(transformed.is_ok());
        &self.spectrum
    }
}

/// Per-thread buffers: one segment's transform, the sums of |X[k]|² over the segments it
/// processed, and their spectrogram rows by column.
#[derive(Clone)]
struct SegmentWorker {
    transform: SegmentTransform,
    sum_power: Vec<f64>,
    /// Every processed segment's |X[k]|² in order (median averaging only).
    stored_power: Vec<f64>,
    columns: ColumnParts,
}

impl SegmentWorker {
    /// Buffers for shares of up to `max_segments` segments.
    fn new(plan: &WelchPlan, max_segments: usize) -> Self {
        Self {
            transform: SegmentTransform::new(plan),
            sum_power: vec![0.0; plan.bins()],
            stored_power: Vec::new(),
            columns: ColumnParts::new(plan.layout.rows(), max_segments),
        }
    }

    /// Processes the segments starting at `starts` (offsets into `samples`) into fresh sums;
    /// `first_index` is the record's index of the batch's first segment, and spectrogram rows
    /// are grouped `per_column` segments to a column.
    fn run(
        &mut self,
        plan: &WelchPlan,
        samples: &[f64],
        starts: std::ops::Range<usize>,
        first_index: u64,
        per_column: u64,
    ) {
        self.sum_power.fill(0.0);
        self.stored_power.clear();
        self.columns.reset(per_column);
        let len = plan.segment_len();
        for index in starts {
            let start = index * plan.step_len();
            self.segment(
                plan,
                &samples[start..start + len],
                first_index + index as u64,
            );
        }
    }

    fn segment(&mut self, plan: &WelchPlan, seg: &[f64], index: u64) {
        let spectrum = self.transform.spectrum(plan, seg);
        for (acc, x) in self.sum_power.iter_mut().zip(spectrum) {
            *acc += x.norm_sqr();
        }
        plan.layout
            .add_segment(self.columns.slot_for(index), |bin| spectrum[bin].norm_sqr());
        if plan.settings.average == Average::Median {
            self.stored_power
                .extend(spectrum.iter().map(|x| x.norm_sqr()));
        }
    }
}

/// Welch's estimator in progress: push samples, then [`Welch::finish`].
///
/// ```
/// use noisesonde::spectral::{Welch, WelchPlan, WelchSettings};
/// // Alternating ±σ at every sample is a tone at Nyquist whose power σ² sits in the last bin
/// // of the power spectrum (no doubling there), here with σ = 0.5.
/// let x: Vec<f64> = (0..65_536).map(|n| if n % 2 == 0 { 0.5 } else { -0.5 }).collect();
/// let mut welch = Welch::new(WelchPlan::new(&WelchSettings::default()).unwrap());
/// welch.push(&x).unwrap();
/// let r = welch.finish(1000.0).unwrap();
/// let nyquist = *r.power_spectrum.last().unwrap();
/// assert!((nyquist - 0.25).abs() < 1e-12); // mean square of ±0.5
/// assert_eq!(r.segments, 31); // (65536 − 2048) / 2048
/// ```
///
/// Segments are processed in batches of up to 64 (fixed by segment index); each batch is
/// split in two halves whose sums are added in order. Natively the second half runs on another
/// thread when the batch is large enough; the sums, and so the results, are the same either way.
#[derive(Clone)]
pub struct Welch {
    plan: WelchPlan,
    /// Samples of the batch being filled; the first `filled` are valid.
    pending: Vec<f64>,
    filled: usize,
    batch_segments: usize,
    workers: [SegmentWorker; 2],
    /// Σ over segments of |X[k]|².
    sum_power: Vec<f64>,
    /// Every segment's |X[k]|², segment after segment (median averaging only).
    stored_power: Vec<f64>,
    segments: usize,
    columns: ColumnStore,
}

impl fmt::Debug for Welch {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.debug_struct("Welch")
            .field("plan", &self.plan)
            .field("segments", &self.segments)
            .finish()
    }
}

/// The averaged spectrum, in the units of the samples pushed.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct WelchResult {
    /// Bin centre frequencies k·f_s/L, k = 0..L/2.
    pub frequency_hz: Vec<f64>,
    /// One-sided power spectral density, units²/Hz.
    pub density: Vec<f64>,
    /// One-sided power spectrum, units² (a bin-centred tone of RMS A reads A²).
    pub power_spectrum: Vec<f64>,
    /// Bin spacing f_s/L in hertz.
    pub bin_width_hz: f64,
    /// Equivalent noise bandwidth in bins.
    pub enbw_bins: f64,
    /// Equivalent noise bandwidth in hertz (the resolution bandwidth, RBW).
    pub enbw_hz: f64,
    /// Segments averaged, K.
    pub segments: usize,
    /// Overlap O in samples.
    pub overlap_len: usize,
    /// Equivalent degrees of freedom of the average (for interior bins).
    pub dof: f64,
}

impl Welch {
    /// A fresh estimator for `plan`.
    pub fn new(plan: WelchPlan) -> Self {
        let step = plan.step_len();
        let batch_segments = (BATCH_TARGET_LEN / step).clamp(2, BATCH_MAX_SEGMENTS);
        let batch_len = (batch_segments - 1) * step + plan.segment_len();
        let worker = SegmentWorker::new(&plan, batch_segments.div_ceil(2));
        Self {
            pending: vec![0.0; batch_len],
            filled: 0,
            batch_segments,
            workers: [worker.clone(), worker],
            sum_power: vec![0.0; plan.bins()],
            stored_power: Vec::new(),
            segments: 0,
            columns: ColumnStore::new(plan.layout.rows()),
            plan,
        }
    }

    /// The plan in use.
    pub fn plan(&self) -> &WelchPlan {
        &self.plan
    }

    /// Segments averaged so far.
    pub fn segments(&self) -> usize {
        self.segments
    }

    /// Feeds samples; each completed batch of segments is transformed at once. Allocates
    /// nothing (except, with median averaging, to store each segment's periodogram).
    ///
    /// # Errors
    /// [`AnalysisError::MedianTooLong`] when median averaging would store more than
    /// [`MEDIAN_MAX_VALUES`] values.
    pub fn push(&mut self, mut samples: &[f64]) -> Result<(), AnalysisError> {
        let batch_len = self.pending.len();
        while !samples.is_empty() {
            let take = (batch_len - self.filled).min(samples.len());
            self.pending[self.filled..self.filled + take].copy_from_slice(&samples[..take]);
            self.filled += take;
            samples = &samples[take..];
            if self.filled == batch_len {
                self.process_batch(self.batch_segments)?;
                let next_start = self.batch_segments * self.plan.step_len();
                self.pending.copy_within(next_start.., 0);
                self.filled = batch_len - next_start;
            }
        }
        Ok(())
    }

    /// Transforms the first `count` segments of `pending` and adds them to the sums.
    fn process_batch(&mut self, count: usize) -> Result<(), AnalysisError> {
        if count == 0 {
            return Ok(());
        }
        let bins = self.plan.bins();
        if self.plan.settings.average == Average::Median
            && self.stored_power.len() + count * bins > MEDIAN_MAX_VALUES
        {
            return Err(AnalysisError::MedianTooLong {
                segments: self.segments + count,
                bins,
                max_values: MEDIAN_MAX_VALUES,
            });
        }
        let half = count / 2;
        let plan = &self.plan;
        let samples = &self.pending[..];
        let (index, per_column) = (self.segments as u64, self.columns.per_column());
        let [first, second] = &mut self.workers;
        #[cfg(not(target_arch = "wasm32"))]
        {
            if count * plan.segment_len() >= THREAD_MIN_WORK {
                std::thread::scope(|scope| {
                    scope.spawn(|| second.run(plan, samples, half..count, index, per_column));
                    first.run(plan, samples, 0..half, index, per_column);
                });
            } else {
                first.run(plan, samples, 0..half, index, per_column);
                second.run(plan, samples, half..count, index, per_column);
            }
        }
        #[cfg(target_arch = "wasm32")]
        {
            first.run(plan, samples, 0..half, index, per_column);
            second.run(plan, samples, half..count, index, per_column);
        }
        for worker in &self.workers {
            for (acc, s) in self.sum_power.iter_mut().zip(&worker.sum_power) {
                *acc += s;
            }
            self.stored_power.extend_from_slice(&worker.stored_power);
            self.columns.add(&worker.columns);
        }
        self.segments += count;
        Ok(())
    }

    /// The averaged spectrum of the segments so far, scaled for `sample_rate_hz`.
    /// Returns `None` before the first whole segment. Leaves the estimator untouched, so
    /// pushing may continue (live use).
    pub fn finish(&self, sample_rate_hz: f64) -> Option<WelchResult> {
        self.finish_with_spectrogram(sample_rate_hz)
            .map(|(result, _)| result)
    }

    /// [`Welch::finish`] and the spectrogram of the same segments (see
    /// [`spectrogram`](super::spectrogram)).
    pub fn finish_with_spectrogram(
        &self,
        sample_rate_hz: f64,
    ) -> Option<(WelchResult, Spectrogram)> {
        let waiting = self.plan.segments_in(self.filled as u64) as usize;
        if waiting > 0 {
            let mut state = self.clone();
            // The cap was checked for whole batches; a partial one may not exceed it either.
            state.process_batch(waiting).ok()?;
            return state.finish_processed(sample_rate_hz);
        }
        self.finish_processed(sample_rate_hz)
    }

    fn finish_processed(&self, sample_rate_hz: f64) -> Option<(WelchResult, Spectrogram)> {
        if self.segments == 0 {
            return None;
        }
        let plan = &self.plan;
        let segment_len = plan.segment_len();
        let bins = plan.bins();
        let k = self.segments;
        let averaged: Vec<f64> = match plan.settings.average {
            Average::Mean => self.sum_power.iter().map(|s| s / k as f64).collect(),
            Average::Median => {
                let bias = median_bias(k);
                let mut column = vec![0.0; k];
                (0..bins)
                    .map(|bin| {
                        for (seg, value) in column.iter_mut().enumerate() {
                            *value = self.stored_power[seg * bins + bin];
                        }
                        median(&mut column) / bias
                    })
                    .collect()
            }
        };
        let figures = plan.figures;
        let density_scale = plan.density_scale(sample_rate_hz);
        let spectrum_scale = 1.0 / (figures.sum * figures.sum);
        let one_sided = |bin: usize| plan.one_sided_factor(bin);
        let density = averaged
            .iter()
            .enumerate()
            .map(|(bin, p)| p * density_scale * one_sided(bin))
            .collect();
        let power_spectrum = averaged
            .iter()
            .enumerate()
            .map(|(bin, p)| p * spectrum_scale * one_sided(bin))
            .collect();
        let bin_width_hz = sample_rate_hz / segment_len as f64;
        let spectrogram = self.columns.finish(
            &plan.layout,
            density_scale,
            bin_width_hz,
            plan.step_len() as f64 / sample_rate_hz,
            segment_len as f64 / sample_rate_hz,
        )?;
        let result = WelchResult {
            frequency_hz: (0..bins).map(|bin| bin as f64 * bin_width_hz).collect(),
            density,
            power_spectrum,
            bin_width_hz,
            enbw_bins: figures.enbw_bins,
            enbw_hz: figures.enbw_bins * bin_width_hz,
            segments: k,
            overlap_len: plan.overlap_len,
            dof: welch_dof(&plan.window, plan.step_len(), k),
        };
        Some((result, spectrogram))
    }
}

/// Bias of the median of K periodogram values relative to their mean (Allen et al. 2012,
/// App. B): 1 + Σ_{i=1}^{(K−1)/2} (1/(2i+1) − 1/(2i)) with integer division; 1 for K ≤ 2.
pub fn median_bias(segments: usize) -> f64 {
    let terms = segments.saturating_sub(1) / 2;
    1.0 + (1..=terms)
        .map(|i| {
            let two_i = 2.0 * i as f64;
            1.0 / (two_i + 1.0) - 1.0 / two_i
        })
        .sum::<f64>()
}

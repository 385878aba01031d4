//! Live spectrum: per-segment periodograms of a stream, averaged over a sliding window of
//! segments or exponentially, with a peak-hold trace and weighted per-segment powers.
//!
//! The whole-record Welch average of [`crate::spectral::Welch`] answers "what is the spectrum of
//! everything so far"; a live view needs "what is it now". [`LiveSpectrum`] cuts the stream into
//! the same segments as Welch (L samples every S = L − O samples, counted from the first sample
//! pushed), transforms each with the plan's detrend, window and FFT, and keeps:
//! - the current average: the mean of the last N periodograms ([`LiveAveraging::Linear`]) or an
//!   exponential mean with time constant τ ([`LiveAveraging::Exponential`]);
//! - a peak-hold trace: the per-bin maximum of every periodogram since [`LiveSpectrum::reset`];
//! - optionally, for each caller-supplied vector of per-bin power gains, the weighted power of
//!   every segment with the time its segment ends, in a bounded queue that the caller drains
//!   ([`LiveSpectrum::set_band_weights`], [`LiveSpectrum::drain_segment_powers`]); this is how a
//!   weighted level (Leq) can be tracked without callbacks.
//!
//! # Method
//! Segment j (j = 0, 1, …) covers samples jS … jS + L − 1 and ends at t_j = (jS + L)/f_s seconds
//! after the first sample pushed. Its periodogram is P_j[k] = |X_j[k]|² and its one-sided density
//! c_k·P_j[k]/(f_s Σw²), exactly as [`crate::spectral::welch`] scales a segment (c_k = 1 at DC and
//! Nyquist, else 2), so one segment's density equals `scipy.signal.welch` on that segment.
//! - Linear: Ḡ[k] = (1/K) Σ of the last K = min(N, segments since reset) periodograms, summed
//!   oldest first from a ring of N rows; once N segments have arrived it slides.
//! - Exponential: Ḡ ← P for the first segment after a reset, then Ḡ ← Ḡ + α(P − Ḡ) with
//!   α = 1 − exp(−S/(f_s τ)): the first-order (RC) averager with time constant τ sampled once per
//!   segment step, so after a step change of level the average has moved
//!   1 − (1 − α)^k = 1 − exp(−k·S/(f_s τ)) of the way after k segments (common practice; it is
//!   the step response of an RC low-pass at the segment instants).
//!
//! Degrees of freedom: any average Σ_i w_i P_i with weights summing to one, of periodograms of
//! Gaussian noise whose correlation between segments m steps apart is ρ²(m) (ρ the window's
//! overlap correlation), has ν = 2 / Σ_i Σ_l w_i w_l ρ²(|i − l|) (Welch 1967's variance argument;
//! equal weights 1/K give his eq. for ν, [`welch_dof`]). For the exponential weights this is
//! [`exponential_dof`], whose steady state without overlap is ν = 2(2 − α)/α, twice the usual
//! "equivalent number of averages" (2 − α)/α of exponential averaging (from memory).
//!
//! # Units
//! Densities in units²/Hz of the samples pushed; segment powers in units²; times in seconds.
//!
//! # References
//! - P. D. Welch, "The use of fast Fourier transform for the estimation of power spectra",
//!   IEEE Trans. Audio Electroacoust. AU-15(2), 70–73, 1967.
//! - D. B. Percival, A. T. Walden, *Spectral Analysis for Physical Applications*, Cambridge 1993,
//!   §6.17 and eq. (292b) on the degrees of freedom of overlapped averages (from memory).

use std::fmt;
use std::str::FromStr;

use serde::{Deserialize, Serialize};

use crate::error::{AnalysisError, SettingsError};
use crate::spectral::confidence::welch_dof;
use crate::spectral::welch::{SegmentTransform, WelchPlan};
use crate::spectral::Detrend;
use crate::window::{overlap_correlation, WindowKind};

/// Most periodogram values the linear ring may hold (segments × bins): 128 MiB of f64.
pub const LIVE_MAX_VALUES: usize = 16 << 20;
/// Default number of segments of the linear average (this crate's choice: at 4096-point
/// segments, 50 % overlap and 48 kHz, about 0.4 s of sound and 15 degrees of freedom for Hann).
pub const DEFAULT_LIVE_SEGMENTS: usize = 8;
/// Most band-weight vectors [`LiveSpectrum::set_band_weights`] accepts.
pub const MAX_BAND_WEIGHTS: usize = 64;
/// Longest segment-power queue, in segments (about 47 minutes of 4096-point segments at 50 %
/// overlap and 48 kHz).
pub const MAX_POWER_QUEUE_LEN: usize = 1 << 16;

/// How the live spectrum averages its segments' periodograms.
///
/// As text (`FromStr`/`Display`): `linear:N` or `exponential:SECONDS`, e.g. `linear:8`,
/// `exponential:0.5`.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(tag = "mode", rename_all = "kebab-case")]
pub enum LiveAveraging {
    /// Mean of the last `segments` periodograms (a sliding mean once that many have arrived).
    Linear {
        /// N, at least 1.
        segments: usize,
    },
    /// Exponential mean with time constant τ (first segment after a reset initialises it).
    Exponential {
        /// τ in seconds, finite and above 0.
        time_constant_s: f64,
    },
}

impl Default for LiveAveraging {
    fn default() -> Self {
        Self::Linear {
            segments: DEFAULT_LIVE_SEGMENTS,
        }
    }
}

impl fmt::Display for LiveAveraging {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Self::Linear { segments } => write!(f, "linear:{segments}"),
            Self::Exponential { time_constant_s } => write!(f, "exponential:{time_constant_s}"),
        }
    }
}

impl FromStr for LiveAveraging {
    type Err = SettingsError;

    /// Parses `linear:N` or `exponential:SECONDS` (case and surrounding spaces ignored). The
    /// values are checked by [`LiveSpectrum::new`].
    fn from_str(text: &str) -> Result<Self, Self::Err> {
        let unknown = || SettingsError::UnknownChoice {
            what: "live averaging",
            text: text.to_string(),
            choices: "linear:SEGMENTS exponential:SECONDS",
        };
        let lower = text.trim().to_ascii_lowercase();
        let (name, value) = lower.split_once(':').ok_or_else(unknown)?;
        match name.trim() {
            "linear" => Ok(Self::Linear {
                segments: value.trim().parse().map_err(|_| unknown())?,
            }),
            "exponential" => Ok(Self::Exponential {
                time_constant_s: value.trim().parse().map_err(|_| unknown())?,
            }),
            _ => Err(unknown()),
        }
    }
}

/// What the live view draws: plain data, in the units of the samples pushed.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LiveSnapshot {
    /// Sample rate f_s, Hz.
    pub sample_rate_hz: f64,
    /// Bin spacing f_s/L, Hz; bin k is at k × bin_width_hz (see [`LiveSnapshot::frequency_hz`]).
    pub bin_width_hz: f64,
    /// Window applied to each segment.
    pub window: WindowKind,
    /// Per-segment detrend.
    pub detrend: Detrend,
    /// Segment length L, samples.
    pub segment_len: usize,
    /// Overlap O, samples.
    pub overlap_len: usize,
    /// Equivalent noise bandwidth, bins.
    pub enbw_bins: f64,
    /// Equivalent noise bandwidth (resolution bandwidth, RBW), Hz.
    pub enbw_hz: f64,
    /// How the segments are averaged.
    pub averaging: LiveAveraging,
    /// Exponential weight α of each new segment (0 for linear averaging).
    pub alpha: f64,
    /// Averaged one-sided power spectral density, units²/Hz.
    pub density: Vec<f64>,
    /// Per-bin maximum of the segments' densities since the last reset, units²/Hz.
    pub peak_density: Vec<f64>,
    /// Segments in the average: linear, up to N; exponential, every segment since the reset.
    pub segments_averaged: u64,
    /// Equivalent degrees of freedom of `density` for interior bins (DC and Nyquist have half).
    pub dof: f64,
    /// End of the newest segment, s after the first sample pushed.
    pub newest_segment_end_s: f64,
    /// Segments transformed since the spectrum was built (resets do not clear it).
    pub segments_total: u64,
}

impl LiveSnapshot {
    /// Centre frequency of `bin`, Hz.
    pub fn frequency_hz(&self, bin: usize) -> f64 {
        bin as f64 * self.bin_width_hz
    }
}

/// One segment's weighted powers, as drained from the queue.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SegmentPower<'a> {
    /// End of the segment, s after the first sample pushed.
    pub end_time_s: f64,
    /// For each weight vector g: Σ_k g_k × density_k × bin width, units² (with g = 1 the
    /// segment's window-compensated mean square).
    pub power: &'a [f64],
}

/// Weighted per-segment powers in a bounded queue (oldest dropped when full).
#[derive(Debug, Clone, Default)]
struct BandPowers {
    /// For each weight vector, g_k × c_k (power gain times the one-sided factor), `bins` each.
    gains: Vec<f64>,
    /// Number of weight vectors.
    count: usize,
    /// Queue capacity in segments.
    capacity: usize,
    /// 1/(L Σw²): |X|² × this × c_k is density × bin width.
    scale: f64,
    times_s: Vec<f64>,
    powers: Vec<f64>,
    head: usize,
    len: usize,
    dropped: u64,
}

/// Draining iterator over the queued segment powers, oldest first. Each item is removed as it
/// is yielded; items not reached stay queued.
pub struct SegmentPowerDrain<'a> {
    times_s: &'a [f64],
    powers: &'a [f64],
    count: usize,
    capacity: usize,
    head: &'a mut usize,
    len: &'a mut usize,
}

impl<'a> Iterator for SegmentPowerDrain<'a> {
    type Item = SegmentPower<'a>;

    fn next(&mut self) -> Option<SegmentPower<'a>> {
        if *self.len == 0 {
            return None;
        }
        let slot = *self.head;
        *self.head = (slot + 1) % self.capacity;
        *self.len -= 1;
        let times_s: &'a [f64] = self.times_s;
        let powers: &'a [f64] = self.powers;
        Some(SegmentPower {
            end_time_s: times_s.get(slot).copied().unwrap_or(f64::NAN),
            power: powers
                .get(slot * self.count..(slot + 1) * self.count)
                .unwrap_or_default(),
        })
    }

    fn size_hint(&self) -> (usize, Option<usize>) {
        (*self.len, Some(*self.len))
    }
}

/// A streaming per-segment periodogram engine for live views. See the [module](self) docs.
///
/// ```
/// use noisesonde::live::{LiveAveraging, LiveSpectrum};
/// use noisesonde::spectral::{WelchPlan, WelchSettings};
/// // A cosine of amplitude 1 at bin 100 (f_s = 1024 Hz, L = 1024: 1 Hz bins), Hann window.
/// // Its density at the tone's bin is the mean square 1/2 over the ENBW of 1.5 Hz: 1/3 units²/Hz.
/// let plan = WelchPlan::new(&WelchSettings { segment_len: 1024, ..Default::default() }).unwrap();
/// let mut live = LiveSpectrum::new(plan, 1024.0, LiveAveraging::Exponential { time_constant_s: 0.5 }).unwrap();
/// let x: Vec<f64> = (0..8192).map(|n| (2.0 * std::f64::consts::PI * 100.0 * n as f64 / 1024.0).cos()).collect();
/// for block in x.chunks(128) {
///     live.push(block).unwrap();
/// }
/// let snap = live.snapshot().unwrap();
/// assert!((snap.density[100] - 1.0 / 3.0).abs() < 1e-12);
/// assert_eq!(snap.segments_averaged, 15); // (8192 − 512) / 512
/// ```
#[derive(Clone)]
pub struct LiveSpectrum {
    plan: WelchPlan,
    sample_rate_hz: f64,
    averaging: LiveAveraging,
    /// α of the exponential mean (0 for linear).
    alpha: f64,
    transform: SegmentTransform,
    /// Samples of the segment being filled; the first `filled` are valid.
    pending: Vec<f64>,
    filled: usize,
    /// |X[k]|² of the newest segment.
    current: Vec<f64>,
    /// Linear: a ring of N rows of |X[k]|²; exponential: one row, the running mean.
    average: Vec<f64>,
    /// Next row of the ring to write (linear).
    ring_next: usize,
    /// Valid rows of the ring (linear).
    ring_len: usize,
    /// Per-bin maximum of |X[k]|² since the reset.
    peak: Vec<f64>,
    segments_since_reset: u64,
    segments_total: u64,
    samples: u64,
    /// ρ²(m) for m = 1, 2, … while m·S < L.
    overlap_rho_sq: Vec<f64>,
    band: BandPowers,
}

impl fmt::Debug for LiveSpectrum {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.debug_struct("LiveSpectrum")
            .field("plan", &self.plan)
            .field("sample_rate_hz", &self.sample_rate_hz)
            .field("averaging", &self.averaging)
            .field("segments_total", &self.segments_total)
            .finish()
    }
}

impl LiveSpectrum {
    /// A live spectrum on `plan` for samples at `sample_rate_hz`. All memory is allocated here.
    /// The plan's `average` setting (mean or median) is not used: `averaging` replaces it.
    ///
    /// # Errors
    /// [`SettingsError::SampleRate`] for a rate that is not finite and positive,
    /// [`SettingsError::LiveSegments`] for N = 0 or a ring above [`LIVE_MAX_VALUES`] values,
    /// [`SettingsError::TimeConstant`] for τ not finite and positive.
    pub fn new(
        plan: WelchPlan,
        sample_rate_hz: f64,
        averaging: LiveAveraging,
    ) -> Result<Self, SettingsError> {
        if !(sample_rate_hz.is_finite() && sample_rate_hz > 0.0) {
            return Err(SettingsError::SampleRate { sample_rate_hz });
        }
        let bins = plan.bins();
        let (rows, alpha) = match averaging {
            LiveAveraging::Linear { segments } => {
                if segments == 0 || segments.saturating_mul(bins) > LIVE_MAX_VALUES {
                    return Err(SettingsError::LiveSegments {
                        segments,
                        bins,
                        max_values: LIVE_MAX_VALUES,
                    });
                }
                (segments, 0.0)
            }
            LiveAveraging::Exponential { time_constant_s } => {
                if !(time_constant_s.is_finite() && time_constant_s > 0.0) {
                    return Err(SettingsError::TimeConstant { time_constant_s });
                }
                let hop_s = plan.step_len() as f64 / sample_rate_hz;
                (1, -(-hop_s / time_constant_s).exp_m1())
            }
        };
        let step = plan.step_len();
        let overlap_rho_sq = (1..)
            .map(|m: usize| m.saturating_mul(step))
            .take_while(|&shift| shift < plan.segment_len())
            .map(|shift| overlap_correlation(plan.window(), shift).powi(2))
            .collect();
        Ok(Self {
            sample_rate_hz,
            averaging,
            alpha,
            transform: SegmentTransform::new(&plan),
            pending: vec![0.0; plan.segment_len()],
            filled: 0,
            current: vec![0.0; bins],
            average: vec![0.0; rows * bins],
            ring_next: 0,
            ring_len: 0,
            peak: vec![0.0; bins],
            segments_since_reset: 0,
            segments_total: 0,
            samples: 0,
            overlap_rho_sq,
            band: BandPowers::default(),
            plan,
        })
    }

    /// The plan in use.
    pub fn plan(&self) -> &WelchPlan {
        &self.plan
    }

    /// The averaging mode.
    pub fn averaging(&self) -> LiveAveraging {
        self.averaging
    }

    /// Weight α of each new segment in the exponential mean, 1 − exp(−S/(f_s τ)); 0 for linear.
    pub fn alpha(&self) -> f64 {
        self.alpha
    }

    /// Samples pushed since the spectrum was built.
    pub fn samples(&self) -> u64 {
        self.samples
    }

    /// Segments transformed since the spectrum was built.
    pub fn segments_total(&self) -> u64 {
        self.segments_total
    }

    /// Feeds samples; every segment they complete is transformed and averaged at once.
    /// Allocates nothing. Results do not depend on how the stream is cut into blocks.
    ///
    /// # Errors
    /// [`AnalysisError::NonFiniteSample`] at the first NaN or infinity; nothing of the block is
    /// used, so the averages stay valid and pushing may continue.
    pub fn push(&mut self, block: &[f64]) -> Result<(), AnalysisError> {
        if let Some(position) = block.iter().position(|x| !x.is_finite()) {
            let index = self.samples + position as u64;
            return Err(AnalysisError::NonFiniteSample {
                index,
                time_s: index as f64 / self.sample_rate_hz,
                value: block[position],
            });
        }
        let segment_len = self.plan.segment_len();
        let step = self.plan.step_len();
        let mut rest = block;
        while !rest.is_empty() {
            let take = (segment_len - self.filled).min(rest.len());
            let (now, later) = rest.split_at(take);
            self.pending[self.filled..self.filled + take].copy_from_slice(now);
            self.filled += take;
            rest = later;
            if self.filled == segment_len {
                self.process_segment();
                self.pending.copy_within(step.., 0);
                self.filled = segment_len - step;
            }
        }
        self.samples += block.len() as u64;
        Ok(())
    }

    /// Transforms the full `pending` segment and updates the average, the peak and the queue.
    fn process_segment(&mut self) {
        let spectrum = self.transform.spectrum(&self.plan, &self.pending);
        for (p, x) in self.current.iter_mut().zip(spectrum) {
            *p = x.norm_sqr();
        }
        let bins = self.current.len();
        let first = self.segments_since_reset == 0;
        match self.averaging {
            LiveAveraging::Linear { segments } => {
                let start = self.ring_next * bins;
                if let Some(row) = self.average.get_mut(start..start + bins) {
                    row.copy_from_slice(&self.current);
                }
                self.ring_next = (self.ring_next + 1) % segments;
                self.ring_len = (self.ring_len + 1).min(segments);
            }
            LiveAveraging::Exponential { .. } => {
                if first {
                    self.average.copy_from_slice(&self.current);
                } else {
                    let alpha = self.alpha;
                    for (mean, &p) in self.average.iter_mut().zip(&self.current) {
                        *mean += alpha * (p - *mean);
                    }
                }
            }
        }
        if first {
            self.peak.copy_from_slice(&self.current);
        } else {
            for (peak, &p) in self.peak.iter_mut().zip(&self.current) {
                *peak = peak.max(p);
            }
        }
        let end_sample =
            self.segments_total * self.plan.step_len() as u64 + self.plan.segment_len() as u64;
        self.segments_since_reset += 1;
        self.segments_total += 1;
        self.record_band_powers(end_sample as f64 / self.sample_rate_hz);
    }

    fn record_band_powers(&mut self, end_time_s: f64) {
        let band = &mut self.band;
        if band.count == 0 {
            return;
        }
        let slot = (band.head + band.len) % band.capacity;
        if band.len == band.capacity {
            band.head = (band.head + 1) % band.capacity;
            band.dropped += 1;
        } else {
            band.len += 1;
        }
        let bins = self.current.len();
        if let Some(out) = band
            .powers
            .get_mut(slot * band.count..(slot + 1) * band.count)
        {
            for (power, gains) in out.iter_mut().zip(band.gains.chunks_exact(bins)) {
                let weighted: f64 = gains.iter().zip(&self.current).map(|(g, p)| g * p).sum();
                *power = weighted * band.scale;
            }
        }
        if let Some(time) = band.times_s.get_mut(slot) {
            *time = end_time_s;
        }
    }

    /// Starts the average and the peak-hold trace afresh with the next segment. The stream's
    /// segmentation, its clock and the segment-power queue are untouched.
    pub fn reset(&mut self) {
        self.segments_since_reset = 0;
        self.ring_len = 0;
        self.ring_next = 0;
    }

    /// The current average and peak-hold trace, or `None` before the first segment since the
    /// construction or the last reset. Leaves the state untouched.
    ///
    /// # Method
    /// See the [module](self) docs; the linear mean is summed oldest segment first.
    pub fn snapshot(&self) -> Option<LiveSnapshot> {
        if self.segments_since_reset == 0 {
            return None;
        }
        let bins = self.plan.bins();
        let scale = self.plan.density_scale(self.sample_rate_hz);
        let plan = &self.plan;
        let to_density = |raw: &[f64]| -> Vec<f64> {
            raw.iter()
                .enumerate()
                .map(|(bin, p)| p * scale * plan.one_sided_factor(bin))
                .collect()
        };
        let (averaged, segments_averaged, dof) = match self.averaging {
            LiveAveraging::Linear { segments } => {
                let count = self.ring_len;
                let oldest = (self.ring_next + segments - count) % segments;
                let mut sum = vec![0.0; bins];
                for i in 0..count {
                    let row = (oldest + i) % segments;
                    if let Some(values) = self.average.get(row * bins..(row + 1) * bins) {
                        for (acc, v) in sum.iter_mut().zip(values) {
                            *acc += v;
                        }
                    }
                }
                for acc in &mut sum {
                    *acc /= count as f64;
                }
                let dof = welch_dof(plan.window(), plan.step_len(), count);
                (sum, count as u64, dof)
            }
            LiveAveraging::Exponential { .. } => {
                let dof = exponential_dof_with(
                    self.alpha,
                    self.segments_since_reset,
                    &self.overlap_rho_sq,
                );
                (self.average.clone(), self.segments_since_reset, dof)
            }
        };
        let figures = plan.figures();
        let bin_width_hz = self.sample_rate_hz / plan.segment_len() as f64;
        let newest_end =
            (self.segments_total - 1) * plan.step_len() as u64 + plan.segment_len() as u64;
        Some(LiveSnapshot {
            sample_rate_hz: self.sample_rate_hz,
            bin_width_hz,
            window: plan.settings().window,
            detrend: plan.settings().detrend,
            segment_len: plan.segment_len(),
            overlap_len: plan.overlap_len(),
            enbw_bins: figures.enbw_bins,
            enbw_hz: figures.enbw_bins * bin_width_hz,
            averaging: self.averaging,
            alpha: self.alpha,
            density: to_density(&averaged),
            peak_density: to_density(&self.peak),
            segments_averaged,
            dof,
            newest_segment_end_s: newest_end as f64 / self.sample_rate_hz,
            segments_total: self.segments_total,
        })
    }

    /// From the next segment on, records for every segment its power weighted by each of
    /// `weights` (one power gain per bin, e.g. the square of a weighting filter's magnitude at
    /// each bin frequency) into a queue of `queue_len` segments, oldest dropped when full
    /// ([`LiveSpectrum::segment_powers_dropped`] counts them). An empty `weights` stops
    /// recording. Clears the queue. Allocates here, never in [`LiveSpectrum::push`].
    ///
    /// # Method
    /// power_g = Σ_k g_k × density_k × f_s/L = Σ_k g_k c_k |X[k]|² / (L Σw²): with g = 1 this is
    /// the segment's windowed mean square divided by the window's mean square (Parseval). A level
    /// over time averages these powers; each sample then counts with the weight
    /// Σ_m w²[n − mS], which is constant when w² overlap-adds to a constant (rectangular at 0 %,
    /// Hann at 75 % overlap) and ripples otherwise (Hann at 50 %: sin⁴ + cos⁴, between 0.5 and 1
    /// around its mean 0.75), so short events are weighted by where they fall (derived here).
    ///
    /// # Errors
    /// [`SettingsError::BandWeightCount`] above [`MAX_BAND_WEIGHTS`] vectors,
    /// [`SettingsError::BandWeightLength`] for a vector whose length is not the plan's bins,
    /// [`SettingsError::BandWeightValue`] for a gain that is negative or not finite,
    /// [`SettingsError::PowerQueueLength`] for `queue_len` outside 1..=[`MAX_POWER_QUEUE_LEN`].
    /// On error nothing changes.
    pub fn set_band_weights(
        &mut self,
        weights: Vec<Vec<f64>>,
        queue_len: usize,
    ) -> Result<(), SettingsError> {
        let bins = self.plan.bins();
        if weights.is_empty() {
            self.band = BandPowers::default();
            return Ok(());
        }
        if weights.len() > MAX_BAND_WEIGHTS {
            return Err(SettingsError::BandWeightCount {
                count: weights.len(),
                max: MAX_BAND_WEIGHTS,
            });
        }
        if !(1..=MAX_POWER_QUEUE_LEN).contains(&queue_len) {
            return Err(SettingsError::PowerQueueLength {
                queue_len,
                max: MAX_POWER_QUEUE_LEN,
            });
        }
        for (index, gains) in weights.iter().enumerate() {
            if gains.len() != bins {
                return Err(SettingsError::BandWeightLength {
                    index,
                    len: gains.len(),
                    bins,
                });
            }
            if let Some((bin, &value)) = gains
                .iter()
                .enumerate()
                .find(|(_, g)| !(g.is_finite() && **g >= 0.0))
            {
                return Err(SettingsError::BandWeightValue { index, bin, value });
            }
        }
        let count = weights.len();
        let gains = weights
            .iter()
            .flat_map(|g| {
                g.iter()
                    .enumerate()
                    .map(|(bin, gain)| gain * self.plan.one_sided_factor(bin))
            })
            .collect();
        let scale = 1.0 / (self.plan.segment_len() as f64 * self.plan.figures().sum_of_squares);
        self.band = BandPowers {
            gains,
            count,
            capacity: queue_len,
            scale,
            times_s: vec![0.0; queue_len],
            powers: vec![0.0; queue_len * count],
            head: 0,
            len: 0,
            dropped: 0,
        };
        Ok(())
    }

    /// Number of band-weight vectors being recorded.
    pub fn band_weight_count(&self) -> usize {
        self.band.count
    }

    /// Segments waiting in the segment-power queue.
    pub fn segment_powers_queued(&self) -> usize {
        self.band.len
    }

    /// Segment powers dropped because the queue was full, since the weights were set.
    pub fn segment_powers_dropped(&self) -> u64 {
        self.band.dropped
    }

    /// The queued segment powers, oldest first, removed as they are read. Allocates nothing.
    pub fn drain_segment_powers(&mut self) -> SegmentPowerDrain<'_> {
        let band = &mut self.band;
        SegmentPowerDrain {
            times_s: &band.times_s,
            powers: &band.powers,
            count: band.count,
            capacity: band.capacity.max(1),
            head: &mut band.head,
            len: &mut band.len,
        }
    }
}

/// Equivalent degrees of freedom of the exponential mean after `segments` segments (the first
/// initialising it), for segments `step_len` apart under `window`.
///
/// # Method
/// The weights of the segments, newest first, are w_i = α(1 − α)^i for i < n = segments − 1 and
/// w_n = (1 − α)^n (the initialising segment); they sum to one. Then
/// ν = 2 / (S_0 + 2 Σ_{m≥1} ρ²(m) S_m) with S_m = Σ_i w_i w_{i+m} in closed form (geometric
/// sums) and ρ(m) the window's overlap correlation at a shift of m·step_len (Welch 1967's
/// variance argument with unequal weights; derived here). Limits: ν = 2 for one segment; as
/// segments → ∞ without overlap, ν → 2(2 − α)/α (from memory: the equivalent number of averages
/// of exponential averaging is (2 − α)/α).
///
/// Returns 0 for zero segments and NaN for α outside (0, 1].
pub fn exponential_dof(window: &[f64], step_len: usize, alpha: f64, segments: u64) -> f64 {
    let rho_sq: Vec<f64> = (1..)
        .map(|m: usize| m.saturating_mul(step_len))
        .take_while(|&shift| step_len > 0 && shift < window.len())
        .map(|shift| overlap_correlation(window, shift).powi(2))
        .collect();
    exponential_dof_with(alpha, segments, &rho_sq)
}

/// [`exponential_dof`] with the squared overlap correlations ρ²(1), ρ²(2), … given.
fn exponential_dof_with(alpha: f64, segments: u64, rho_sq: &[f64]) -> f64 {
    if segments == 0 {
        return 0.0;
    }
    if !(alpha > 0.0 && alpha <= 1.0) {
        return f64::NAN;
    }
    let n = segments - 1;
    let ln_beta = (-alpha).ln_1p();
    // β^j, with β^0 = 1 even when β = 0.
    let beta_pow = |j: u64| {
        if j == 0 {
            1.0
        } else {
            (j as f64 * ln_beta).exp()
        }
    };
    // Σ_{i=0}^{count−1} β^{2i} = (1 − β^{2·count}) / (1 − β²), with 1 − β² = α(2 − α).
    let geometric = |count: u64| {
        if count == 0 {
            0.0
        } else {
            -(2.0 * count as f64 * ln_beta).exp_m1() / (alpha * (2.0 - alpha))
        }
    };
    let a2 = alpha * alpha;
    let s0 = a2 * geometric(n) + beta_pow(2 * n);
    let mut cross = 0.0;
    for (m, &rho2) in (1u64..).zip(rho_sq) {
        if m > n {
            break;
        }
        let s_m = a2 * beta_pow(m) * geometric(n - m) + alpha * beta_pow(n - m) * beta_pow(n);
        cross += rho2 * s_m;
    }
    2.0 / (s0 + 2.0 * cross)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::spectral::WelchSettings;

    fn plan(segment_len: usize, overlap_frac: f64) -> WelchPlan {
        WelchPlan::new(&WelchSettings {
            segment_len,
            overlap_frac,
            ..Default::default()
        })
        .unwrap()
    }

    /// Deterministic noise for the unit tests (xorshift64, Marsaglia 2003).
    fn noise(n: usize, seed: u64) -> Vec<f64> {
        let mut s = seed.max(1);
        (0..n)
            .map(|_| {
                s ^= s << 13;
                s ^= s >> 7;
                s ^= s << 17;
                (s >> 11) as f64 / (1u64 << 53) as f64 - 0.5
            })
            .collect()
    }

    fn capacities(live: &LiveSpectrum) -> Vec<usize> {
        vec![
            live.pending.capacity(),
            live.current.capacity(),
            live.average.capacity(),
            live.peak.capacity(),
            live.overlap_rho_sq.capacity(),
            live.band.gains.capacity(),
            live.band.times_s.capacity(),
            live.band.powers.capacity(),
        ]
    }

    #[test]
    fn memory_stays_fixed_after_many_pushes() {
        for averaging in [
            LiveAveraging::Linear { segments: 5 },
            LiveAveraging::Exponential {
                time_constant_s: 0.1,
            },
        ] {
            let mut live = LiveSpectrum::new(plan(256, 0.5), 8000.0, averaging).unwrap();
            live.set_band_weights(vec![vec![1.0; 129], vec![0.5; 129]], 7)
                .unwrap();
            let before = capacities(&live);
            let x = noise(128, 3);
            for _ in 0..2000 {
                live.push(&x).unwrap();
            }
            assert_eq!(live.segments_total(), (2000 * 128 - 128) / 128);
            assert_eq!(capacities(&live), before, "{averaging}");
            assert_eq!(live.segment_powers_queued(), 7);
            assert_eq!(live.segment_powers_dropped(), live.segments_total() - 7);
        }
    }

    #[test]
    fn averaging_text_round_trips_and_rejects_nonsense() {
        for text in ["linear:8", "exponential:0.125"] {
            let parsed: LiveAveraging = text.parse().unwrap();
            assert_eq!(parsed.to_string(), text);
        }
        assert_eq!(
            " Linear : 3 ".parse::<LiveAveraging>().unwrap(),
            LiveAveraging::Linear { segments: 3 }
        );
        for bad in ["linear", "linear:-1", "exponential:x", "median:3", ""] {
            assert!(bad.parse::<LiveAveraging>().is_err(), "{bad}");
        }
    }

    #[test]
    fn bad_settings_are_typed_errors() {
        let err = |a| LiveSpectrum::new(plan(64, 0.5), 1000.0, a).unwrap_err();
        assert!(matches!(
            err(LiveAveraging::Linear { segments: 0 }),
            SettingsError::LiveSegments { .. }
        ));
        assert!(matches!(
            err(LiveAveraging::Linear {
                segments: usize::MAX
            }),
            SettingsError::LiveSegments { .. }
        ));
        for tau in [0.0, -1.0, f64::NAN, f64::INFINITY] {
            assert!(matches!(
                err(LiveAveraging::Exponential {
                    time_constant_s: tau
                }),
                SettingsError::TimeConstant { .. }
            ));
        }
        assert!(matches!(
            LiveSpectrum::new(plan(64, 0.5), f64::NAN, LiveAveraging::default()),
            Err(SettingsError::SampleRate { .. })
        ));
        let mut live = LiveSpectrum::new(plan(64, 0.5), 1000.0, LiveAveraging::default()).unwrap();
        assert!(matches!(
            live.set_band_weights(vec![vec![1.0; 32]], 4),
            Err(SettingsError::BandWeightLength {
                index: 0,
                len: 32,
                bins: 33
            })
        ));
        let mut bad = vec![1.0; 33];
        bad[5] = -0.5;
        assert!(matches!(
            live.set_band_weights(vec![vec![1.0; 33], bad], 4),
            Err(SettingsError::BandWeightValue {
                index: 1,
                bin: 5,
                ..
            })
        ));
        assert!(matches!(
            live.set_band_weights(vec![vec![1.0; 33]], 0),
            Err(SettingsError::PowerQueueLength { .. })
        ));
        assert!(matches!(
            live.set_band_weights(vec![vec![1.0; 33]; MAX_BAND_WEIGHTS + 1], 4),
            Err(SettingsError::BandWeightCount { .. })
        ));
        assert_eq!(live.band_weight_count(), 0);
    }

    #[test]
    fn non_finite_sample_is_rejected_and_the_block_unused() {
        let mut live = LiveSpectrum::new(plan(64, 0.5), 1000.0, LiveAveraging::default()).unwrap();
        live.push(&noise(100, 1)).unwrap();
        let mut block = noise(50, 2);
        block[7] = f64::NAN;
        let e = live.push(&block).unwrap_err();
        assert!(matches!(
            e,
            AnalysisError::NonFiniteSample { index: 107, .. }
        ));
        assert_eq!(live.samples(), 100);
    }

    #[test]
    fn reset_restarts_average_and_peak_but_not_the_clock() {
        let mut live = LiveSpectrum::new(plan(64, 0.5), 1000.0, LiveAveraging::default()).unwrap();
        live.push(&noise(64 * 10, 5)).unwrap();
        let before = live.snapshot().unwrap();
        live.reset();
        assert!(live.snapshot().is_none());
        live.push(&noise(32, 6)).unwrap();
        let after = live.snapshot().unwrap();
        assert_eq!(after.segments_averaged, 1);
        assert_eq!(after.segments_total, before.segments_total + 1);
        assert_eq!(after.density, after.peak_density);
        assert!((after.newest_segment_end_s - before.newest_segment_end_s - 0.032).abs() < 1e-15);
    }

    /// The closed-form sums against the weights summed directly (O(k²) double sum).
    #[test]
    fn exponential_dof_closed_form_equals_the_direct_double_sum() {
        let rho_sq = [0.3, 0.05, 0.001];
        for alpha in [0.02f64, 0.3, 0.9, 1.0] {
            for k in [1u64, 2, 3, 4, 7, 40] {
                let n = (k - 1) as usize;
                let w: Vec<f64> = (0..=n)
                    .map(|i| {
                        if i < n {
                            alpha * (1.0 - alpha).powi(i as i32)
                        } else {
                            (1.0 - alpha).powi(n as i32)
                        }
                    })
                    .collect();
                assert!((w.iter().sum::<f64>() - 1.0).abs() < 1e-12);
                let mut var = 0.0;
                for (i, wi) in w.iter().enumerate() {
                    for (l, wl) in w.iter().enumerate() {
                        let lag = i.abs_diff(l);
                        let r = if lag == 0 {
                            1.0
                        } else {
                            rho_sq.get(lag - 1).copied().unwrap_or(0.0)
                        };
                        var += wi * wl * r;
                    }
                }
                let direct = 2.0 / var;
                let closed = exponential_dof_with(alpha, k, &rho_sq);
                assert!(
                    (closed - direct).abs() < 1e-10 * direct,
                    "α={alpha} k={k}: {closed} vs {direct}"
                );
            }
        }
    }
}

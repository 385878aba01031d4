//! Live listening: blocks of captured audio → frames for a live view.
//!
//! A [`LiveSession`] feeds every block into the same [`Analyzer`] as a file (moments, ACF and
//! the whole-session Welch PSD since listening started) and into a [`LiveSpectrum`] (the
//! recent average the live plot shows, with its peak hold). Each segment's Z-, A- and
//! C-weighted power goes into a [`LevelHistory`] (equivalent continuous levels, max, min), and
//! the recent average gives octave and one-third-octave band levels, the strongest tone and
//! the noise floor. The last seconds of input are kept in a [`SampleRing`] for saving.
//!
//! Nothing here knows about browsers: the page's worker calls it through `src/web/`, and the
//! tests drive it natively.

use serde::{Deserialize, Serialize};

use crate::acoustics::{
    BandFraction, BandLevelPlan, BandLevels, LevelHistory, LevelReference, Weighting,
};
use crate::analysis::{Analyzer, Settings};
use crate::error::{AnalysisError, Error, SettingsError};
use crate::io::{write_wav_parts, SourceInfo, WavEncoding, WavSpec};
use crate::live::{LiveAveraging, LiveSnapshot, LiveSpectrum};
use crate::report::Report;
use crate::ring::SampleRing;
use crate::spectral::{WelchPlan, WelchResult};
use crate::tone::{find_tone, Tone, ToneSettings};

/// The weightings whose levels a session tracks, in the order of [`LiveFrame::levels`].
pub const WEIGHTINGS: [Weighting; 3] = [Weighting::Z, Weighting::A, Weighting::C];
/// Lowest frequency of the noise-floor band, Hz (above hum and the 1/f region of most audio
/// inputs: common practice).
pub const FLOOR_LOW_HZ: f64 = 100.0;
/// Highest frequency of the noise-floor band, Hz, and no more than [`FLOOR_HIGH_FRACTION`] of
/// the sample rate (below the anti-alias roll-off: common practice).
pub const FLOOR_HIGH_HZ: f64 = 10_000.0;
/// See [`FLOOR_HIGH_HZ`].
pub const FLOOR_HIGH_FRACTION: f64 = 0.4;
/// Bins at the bottom of the spectrum a tone search skips (DC and the window's leakage of it).
const TONE_SKIP_BINS: usize = 4;
/// A peak counts as a tone when its density stands this many times above the floor's.
pub const TONE_PROMINENCE: f64 = 10.0;
/// Search half-width around the expected calibrator frequency, as a fraction of it (calibrators
/// are specified to about ±1 %, IEC 60942 from memory; 10 % leaves room for a sound card's
/// clock).
pub const CALIBRATOR_SEARCH_FRACTION: f64 = 0.1;

/// How a live session averages and what it keeps; plain data with defaults.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct LiveSettings {
    /// Averaging of the live PSD.
    pub averaging: LiveAveraging,
    /// The recent window of the equivalent continuous level, s.
    pub recent_s: f64,
    /// Seconds of input kept for saving a recording.
    pub record_s: f64,
}

impl Default for LiveSettings {
    fn default() -> Self {
        Self {
            averaging: LiveAveraging::default(),
            recent_s: 10.0,
            record_s: 60.0,
        }
    }
}

/// The equivalent continuous levels of one weighting.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct WeightedLevels {
    /// `z`, `a` or `c`.
    pub weighting: Weighting,
    /// E.g. `A-weighted`.
    pub label: String,
    /// Leq over the whole session, dB re [`LiveFrame::level_reference`].
    pub leq_session_db: Option<f64>,
    /// Leq over the recent window, dB.
    pub leq_recent_db: Option<f64>,
    /// Highest per-segment level, dB.
    pub max_db: Option<f64>,
    /// Lowest per-segment level, dB.
    pub min_db: Option<f64>,
}

/// The noise floor: the median of the live density over a band, corrected for the median's
/// bias under the chi-square distribution of the estimate.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct NoiseFloor {
    /// Density, `unit`²/Hz.
    pub density: f64,
    /// Lower end of the band, Hz.
    pub f_lo_hz: f64,
    /// Upper end of the band, Hz.
    pub f_hi_hz: f64,
}

/// What a live view shows besides the report: levels, bands, tone, floor and counts.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LiveFrame {
    /// How the levels are referred, e.g. `dB SPL re 20 uPa`.
    pub level_unit: String,
    /// One line saying the level convention.
    pub level_convention: String,
    /// The reference of every level.
    pub level_reference: LevelReference,
    /// Z, A and C levels.
    pub levels: Vec<WeightedLevels>,
    /// Octave and third-octave band levels under each weighting, from the live average.
    pub bands: Vec<BandLevels>,
    /// The strongest tone of the live average, if one stands above the floor.
    pub tone: Option<ToneLevel>,
    /// The noise floor of the live average.
    pub floor: Option<NoiseFloor>,
    /// Captured frames lost before they reached the analysis (the capture fell behind).
    pub dropped_frames: u64,
    /// Whether any input sample since the previous frame was at or beyond full scale.
    pub overload: bool,
    /// Peak hold of the live PSD, `unit`²/Hz per bin.
    #[serde(skip)]
    pub peak_density: Vec<f64>,
}

/// A tone with its level.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ToneLevel {
    /// Frequency, Hz.
    pub frequency_hz: f64,
    /// RMS, `unit`.
    pub rms: f64,
    /// Level of its mean square, dB re [`LiveFrame::level_reference`].
    pub level_db: f64,
}

/// A calibrator's tone and the calibration factor it implies.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct CalibratorReading {
    /// Frequency found, Hz.
    pub frequency_hz: f64,
    /// Its RMS in the current unit.
    pub rms: f64,
    /// Reference RMS over measured RMS: multiply the current scale by this.
    pub factor: f64,
}

/// One listening session on one channel.
#[derive(Debug)]
pub struct LiveSession {
    source: SourceInfo,
    live: LiveSettings,
    scale: f64,
    analyzer: Analyzer,
    spectrum: LiveSpectrum,
    histories: Vec<LevelHistory>,
    band_plans: Vec<BandLevelPlan>,
    reference: LevelReference,
    ring: SampleRing,
    channel_block: Vec<f64>,
    scaled: Vec<f64>,
    dropped_frames: u64,
    overload: bool,
}

impl LiveSession {
    /// A session for blocks of `source.channels` interleaved-by-block channels (see
    /// [`LiveSession::push_block`]) at `source.sample_rate_hz`, analysing `source.channel`.
    ///
    /// # Errors
    /// The first setting that cannot be used.
    pub fn new(
        source: &SourceInfo,
        settings: &Settings,
        live: &LiveSettings,
    ) -> Result<Self, SettingsError> {
        if source.channel >= source.channels.max(1) {
            return Err(SettingsError::LiveChannel {
                channel: source.channel,
                channels: source.channels,
            });
        }
        let analyzer = Analyzer::new(settings, source)?;
        let fs = source.sample_rate_hz;
        let plan = WelchPlan::new(&settings.welch)?;
        let bins = plan.bins();
        let bin_width_hz = fs / plan.segment_len() as f64;
        let hop_s = plan.step_len() as f64 / fs;
        let mut spectrum = LiveSpectrum::new(plan, fs, live.averaging)?;
        let unit = settings.calibration.unit_for(source.full_scale);
        let reference = level_reference(&unit);
        let acoustics = |e: crate::acoustics::AcousticsError| SettingsError::Live {
            problem: e.to_string(),
        };
        let weights = WEIGHTINGS
            .iter()
            .map(|w| w.power_gains(bin_width_hz, bins))
            .collect();
        let queue_len = ((live.recent_s / hop_s).ceil() as usize).clamp(1, 4096);
        spectrum.set_band_weights(weights, queue_len)?;
        let histories = WEIGHTINGS
            .iter()
            .map(|_| LevelHistory::new(hop_s, live.recent_s, reference.clone()))
            .collect::<Result<Vec<_>, _>>()
            .map_err(acoustics)?;
        let mut band_plans = Vec::new();
        for fraction in [BandFraction::Third, BandFraction::Octave] {
            for weighting in WEIGHTINGS {
                band_plans.push(
                    BandLevelPlan::new(fraction, weighting, bin_width_hz, bins, reference.clone())
                        .map_err(acoustics)?,
                );
            }
        }
        let ring =
            SampleRing::with_duration(1, live.record_s, fs).map_err(|e| SettingsError::Live {
                problem: e.to_string(),
            })?;
        Ok(Self {
            source: source.clone(),
            live: live.clone(),
            scale: settings.calibration.scale_units_per_fs,
            analyzer,
            spectrum,
            histories,
            band_plans,
            reference,
            ring,
            channel_block: Vec::new(),
            scaled: Vec::new(),
            dropped_frames: 0,
            overload: false,
        })
    }

    /// The source this session reads.
    pub fn source(&self) -> &SourceInfo {
        &self.source
    }

    /// Feeds one captured block: `frames` frames of `channels` channels, one channel after the
    /// other (`block[c·frames .. (c+1)·frames]` is channel c), in full-scale units.
    /// `dropped_frames_total` is the capture's running count of frames it had to drop.
    ///
    /// # Errors
    /// [`AnalysisError::BlockShape`] when the block is shorter than `frames × channels` or the
    /// channel count changed; errors of the pipeline (a NaN sample, …).
    pub fn push_block(
        &mut self,
        block: &[f32],
        frames: usize,
        channels: usize,
        dropped_frames_total: u64,
    ) -> Result<(), Error> {
        let needed = frames.saturating_mul(channels);
        if channels != self.source.channels || block.len() < needed {
            return Err(AnalysisError::BlockShape {
                len: block.len(),
                frames,
                channels,
                expected_channels: self.source.channels,
            }
            .into());
        }
        let start = self.source.channel * frames;
        let samples = &block[start..start + frames];
        self.channel_block.clear();
        self.channel_block
            .extend(samples.iter().map(|&x| f64::from(x)));
        self.analyzer.push(&self.channel_block)?;
        self.overload |= self.channel_block.iter().any(|x| x.abs() >= 1.0);
        self.ring
            .push(&self.channel_block)
            .map_err(|e| AnalysisError::Live {
                problem: e.to_string(),
            })?;
        self.scaled.clear();
        let scale = self.scale;
        self.scaled
            .extend(self.channel_block.iter().map(|x| x * scale));
        self.spectrum.push(&self.scaled)?;
        for segment in self.spectrum.drain_segment_powers() {
            for (history, &power) in self.histories.iter_mut().zip(segment.power) {
                history
                    .push(segment.end_time_s, power)
                    .map_err(|e| AnalysisError::Live {
                        problem: e.to_string(),
                    })?;
            }
        }
        self.dropped_frames = dropped_frames_total;
        Ok(())
    }

    /// Starts the averages again (live PSD, peak hold, levels); the recording ring is kept.
    pub fn restart(&mut self) {
        self.spectrum.reset();
        for history in &mut self.histories {
            history.clear();
        }
    }

    /// [`LiveSession::peek`], then clears the overload flag (it says "since the previous
    /// frame").
    pub fn frame(&mut self) -> Option<(Report, LiveFrame)> {
        let frame = self.peek();
        self.overload = false;
        frame
    }

    /// The report of everything since listening started, with the PSD replaced by the live
    /// average, and the live extras. `None` before one whole segment.
    pub fn peek(&self) -> Option<(Report, LiveFrame)> {
        let snapshot = self.spectrum.snapshot()?;
        let bins = snapshot.density.len();
        let live_psd = WelchResult {
            frequency_hz: (0..bins).map(|k| snapshot.frequency_hz(k)).collect(),
            power_spectrum: snapshot
                .density
                .iter()
                .map(|p| p * snapshot.enbw_hz)
                .collect(),
            density: snapshot.density.clone(),
            bin_width_hz: snapshot.bin_width_hz,
            enbw_bins: snapshot.enbw_bins,
            enbw_hz: snapshot.enbw_hz,
            segments: snapshot.segments_averaged.try_into().unwrap_or(usize::MAX),
            overlap_len: snapshot.overlap_len,
            dof: snapshot.dof,
        };
        let mut report = self.analyzer.report_with(live_psd, None, &[]).ok()?;
        report.psd.unused_samples = 0;
        report.warnings.insert(
            0,
            format!(
                "Live: the PSD is the {} average ({} segments); moments, autocorrelation and \
                 checks cover the {:.1} s since listening started.",
                match snapshot.averaging {
                    LiveAveraging::Linear { .. } => "linear",
                    LiveAveraging::Exponential { .. } => "exponential",
                },
                snapshot.segments_averaged,
                report.duration_s
            ),
        );
        let floor = noise_floor(&snapshot, report.psd.dof);
        let tone = self.strongest_tone(&snapshot, floor.as_ref());
        let bands = self
            .band_plans
            .iter()
            .filter_map(|plan| plan.levels(&snapshot.density).ok())
            .collect();
        let levels = WEIGHTINGS
            .iter()
            .zip(&self.histories)
            .map(|(&weighting, history)| WeightedLevels {
                weighting,
                label: match weighting {
                    Weighting::Z => "Z (unweighted)".to_string(),
                    Weighting::A => "A-weighted".to_string(),
                    Weighting::C => "C-weighted".to_string(),
                },
                leq_session_db: history.session_leq_db(),
                leq_recent_db: history.recent_leq_db(),
                max_db: history.max_level_db(),
                min_db: history.min_level_db(),
            })
            .collect();
        let frame = LiveFrame {
            level_unit: level_unit(&self.reference),
            level_convention: level_convention(&self.reference),
            level_reference: self.reference.clone(),
            levels,
            bands,
            tone,
            floor,
            dropped_frames: self.dropped_frames,
            overload: self.overload,
            peak_density: snapshot.peak_density,
        };
        Some((report, frame))
    }

    fn strongest_tone(
        &self,
        snapshot: &LiveSnapshot,
        floor: Option<&NoiseFloor>,
    ) -> Option<ToneLevel> {
        let top_hz = snapshot.frequency_hz(snapshot.density.len().saturating_sub(1));
        let low_hz = snapshot.frequency_hz(TONE_SKIP_BINS);
        let tone = find_tone(
            &snapshot.density,
            snapshot.bin_width_hz,
            snapshot.enbw_bins,
            snapshot.dof,
            &ToneSettings {
                f_lo_hz: low_hz,
                f_hi_hz: top_hz,
                ..ToneSettings::default()
            },
        )
        .ok()?;
        if !stands_out(snapshot, &tone, floor) {
            return None;
        }
        Some(self.tone_level(&tone))
    }

    fn tone_level(&self, tone: &Tone) -> ToneLevel {
        ToneLevel {
            frequency_hz: tone.frequency_hz,
            rms: tone.rms,
            level_db: self.reference.level_db(tone.power),
        }
    }

    /// Finds the calibrator's tone within ±[`CALIBRATOR_SEARCH_FRACTION`] of `frequency_hz` in
    /// the live average and returns the factor that makes its RMS `reference_rms`.
    ///
    /// # Errors
    /// [`AnalysisError::NoCalibratorTone`] when nothing there stands [`TONE_PROMINENCE`] times
    /// above the noise floor, or before one whole segment.
    pub fn calibrator(
        &self,
        frequency_hz: f64,
        reference_rms: f64,
    ) -> Result<CalibratorReading, AnalysisError> {
        let none = || AnalysisError::NoCalibratorTone { frequency_hz };
        let usable = |v: f64| v.is_finite() && v > 0.0;
        if !(usable(frequency_hz) && usable(reference_rms)) {
            return Err(none());
        }
        let snapshot = self.spectrum.snapshot().ok_or_else(none)?;
        let span = CALIBRATOR_SEARCH_FRACTION * frequency_hz;
        let tone = find_tone(
            &snapshot.density,
            snapshot.bin_width_hz,
            snapshot.enbw_bins,
            snapshot.dof,
            &ToneSettings {
                f_lo_hz: frequency_hz - span,
                f_hi_hz: frequency_hz + span,
                ..ToneSettings::default()
            },
        )
        .map_err(|_| none())?;
        let floor = noise_floor(&snapshot, snapshot.dof);
        if tone.rms <= 0.0 || !stands_out(&snapshot, &tone, floor.as_ref()) {
            return Err(none());
        }
        Ok(CalibratorReading {
            frequency_hz: tone.frequency_hz,
            rms: tone.rms,
            factor: reference_rms / tone.rms,
        })
    }

    /// The last `seconds` of input (at most what the ring holds) as a WAV file.
    ///
    /// # Errors
    /// When nothing has been captured yet, or writing fails.
    pub fn recording(&self, seconds: f64, encoding: WavEncoding) -> Result<Vec<u8>, Error> {
        let failed = |problem: String| AnalysisError::Live { problem };
        let (older, newer) = self.ring.as_slices();
        let held = older.len() + newer.len();
        if held == 0 {
            return Err(failed("nothing has been captured yet".to_string()).into());
        }
        let wanted = if seconds.is_finite() && seconds > 0.0 {
            ((seconds * self.source.sample_rate_hz).round() as usize).min(held)
        } else {
            held
        };
        // The newest `wanted` samples: the tail of `older` (if needed) and then `newer`.
        let from_newer = wanted.min(newer.len());
        let from_older = wanted - from_newer;
        let parts: [&[f64]; 2] = [
            &older[older.len() - from_older..],
            &newer[newer.len() - from_newer..],
        ];
        let spec = WavSpec {
            sample_rate_hz: self.source.sample_rate_hz.round() as u32,
            channels: 1,
            encoding,
        };
        let mut bytes = Vec::new();
        write_wav_parts(&mut bytes, &spec, &parts)
            .map_err(|e| failed(format!("the recording could not be written: {e}")))?;
        Ok(bytes)
    }

    /// The live settings in use.
    pub fn live_settings(&self) -> &LiveSettings {
        &self.live
    }
}

/// Mean square of a sine whose peaks reach digital full scale, FS²: the 0 dBFS reference of
/// AES17 (REFERENCES §9: a full-scale sine is 0 dBFS).
pub const AES17_FULL_SCALE_POWER_FS2: f64 = 0.5;

/// The level reference for samples in `unit`: 20 µPa for pascals, AES17 full scale for
/// uncalibrated audio (a full-scale sine is 0 dBFS), 1 unit² otherwise.
pub fn level_reference(unit: &str) -> LevelReference {
    if unit == "FS" {
        LevelReference {
            unit: unit.to_string(),
            power: AES17_FULL_SCALE_POWER_FS2,
            label: "dBFS (AES17)".to_string(),
        }
    } else {
        LevelReference::for_unit(unit)
    }
}

/// Whether a tone's peak bin stands [`TONE_PROMINENCE`] times above the floor (the band's
/// floor where known, else the tone's own surroundings).
fn stands_out(snapshot: &LiveSnapshot, tone: &Tone, floor: Option<&NoiseFloor>) -> bool {
    let peak = snapshot.density.get(tone.peak_bin).copied().unwrap_or(0.0);
    let floor = floor.map_or(tone.floor_density, |f| f.density.max(tone.floor_density));
    peak > TONE_PROMINENCE * floor
}

fn level_unit(reference: &LevelReference) -> String {
    match reference.unit.as_str() {
        "Pa" => "dB SPL".to_string(),
        "FS" => "dBFS".to_string(),
        _ => reference.label.clone(),
    }
}

fn level_convention(reference: &LevelReference) -> String {
    match reference.unit.as_str() {
        "Pa" => "Levels in dB SPL re 20 µPa (calibrated).".to_string(),
        "FS" => "Uncalibrated: levels in dBFS after AES17, where a sine whose peaks reach \
                 digital full scale reads 0 dBFS (a full-scale square wave reads +3.01 dBFS)."
            .to_string(),
        unit => format!("Levels in dB re 1 {unit}² (calibrated in {unit}; not pascals)."),
    }
}

/// The median of the live density over [`FLOOR_LOW_HZ`, min([`FLOOR_HIGH_HZ`],
/// [`FLOOR_HIGH_FRACTION`]·f_s)], divided by the median of χ²_ν/ν (the median of an estimate
/// with ν degrees of freedom lies below its mean by that factor).
///
/// # References
/// The chi-square distribution of averaged periodogram values: Bendat & Piersol, *Random
/// Data*, 4th ed., §8.5.4 (from memory).
fn noise_floor(snapshot: &LiveSnapshot, dof: f64) -> Option<NoiseFloor> {
    let f_hi_hz = FLOOR_HIGH_HZ.min(FLOOR_HIGH_FRACTION * snapshot.sample_rate_hz);
    let lo = (FLOOR_LOW_HZ / snapshot.bin_width_hz).ceil() as usize;
    let hi = (f_hi_hz / snapshot.bin_width_hz).floor() as usize;
    let mut values: Vec<f64> = snapshot.density.get(lo..=hi)?.to_vec();
    if values.is_empty() {
        return None;
    }
    let median = crate::numeric::median(&mut values);
    let bias = crate::spectral::confidence::chi_square_median_over_dof(dof).unwrap_or(1.0);
    Some(NoiseFloor {
        density: median / bias,
        f_lo_hz: lo as f64 * snapshot.bin_width_hz,
        f_hi_hz: hi as f64 * snapshot.bin_width_hz,
    })
}

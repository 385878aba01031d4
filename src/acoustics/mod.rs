//! Acoustic quantities from a power spectral density: frequency weightings, octave and
//! one-third-octave bands, band levels, and equivalent continuous levels over time.
//!
//! Pure computation on slices of `f64`: no file system, clock or DOM. Powers are in the
//! calibrated unit squared (Pa² for a calibrated microphone); decibels are made only through
//! [`crate::units::power_db`], with the reference power named beside every level
//! ([`levels::LevelReference`]).
//!
//! - [`weighting`]: A, C and Z frequency weightings from the analytic definitions of
//!   IEC 61672-1:2013 Annex E.
//! - [`octave`]: octave and one-third-octave bands by the base-10 formulas of
//!   IEC 61260-1:2014, with ISO 266 nominal labels.
//! - [`levels`]: band powers and levels of a one-sided PSD, weighted per bin, integrated with
//!   [`crate::bands::band_power_of`].
//! - [`leq`]: a bounded history of per-segment powers giving the session and recent Leq.

pub mod leq;
pub mod levels;
pub mod octave;
pub mod weighting;

pub use leq::LevelHistory;
pub use levels::{band_levels, BandLevelPlan, BandLevels, BandPower, LevelReference};
pub use octave::{bands_between, Band, BandFraction};
pub use weighting::Weighting;

/// Reference frequency f_r = 1000 Hz: the frequency where every weighting is 0 dB
/// (IEC 61672-1:2013 Annex E) and the centre of band index 0 (IEC 61260-1:2014 clause 5).
pub const REFERENCE_FREQUENCY_HZ: f64 = 1000.0;

/// Caller data that the acoustic computations cannot use.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum AcousticsError {
    #[error("bin width {bin_width_hz} Hz is invalid: it must be a finite number above 0")]
    BinWidth { bin_width_hz: f64 },
    #[error("the spectrum has {bins} bins, fewer than {min}: band levels need a frequency grid")]
    TooFewBins { bins: usize, min: usize },
    #[error("the density has {given} values but the plan was made for {expected} bins")]
    DensityLength { expected: usize, given: usize },
    #[error("density value {value} at bin {index} ({frequency_hz} Hz) is invalid: a power density is finite and ≥ 0")]
    Density {
        index: usize,
        frequency_hz: f64,
        value: f64,
    },
    #[error("no {fraction} band fits between 0 and {highest_hz} Hz: use a higher sample rate")]
    NoBandFits {
        fraction: octave::BandFraction,
        highest_hz: f64,
    },
    #[error("reference power {power} is invalid: it must be a finite number above 0")]
    ReferencePower { power: f64 },
    #[error("{what} of {seconds} s is invalid: it must be a finite number of seconds above 0")]
    Duration { what: &'static str, seconds: f64 },
    #[error("a recent window of {recent_window_s} s at a hop of {hop_s} s needs {segments} segments, more than {max}: use a shorter window or a longer hop")]
    RecentWindowTooLong {
        recent_window_s: f64,
        hop_s: f64,
        segments: f64,
        max: usize,
    },
    #[error("segment time {time_s} s is invalid: it must be a finite number of seconds")]
    Time { time_s: f64 },
    #[error("segment time {time_s} s does not advance by a hop of {hop_s} s from the previous {previous_s} s: times must grow by at least one hop")]
    TimeNotAdvancing {
        time_s: f64,
        previous_s: f64,
        hop_s: f64,
    },
    #[error("segment at {time_s} s has power {power}: a mean square is finite and ≥ 0")]
    Power { time_s: f64, power: f64 },
}

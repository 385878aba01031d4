//! Acoustic quantities from a power spectral density: frequency weightings, octave and
//! one-third-octave bands, band levels, and equivalent continuous levels over time.
//!
//! Pure computation on slices of `f64`: no file system, clock or DOM.
//!
//! - [`weighting`]: A, C and Z frequency weightings from the analytic definitions of
//!   IEC 61672-1:2013 Annex E.
//! - [`octave`]: octave and one-third-octave bands by the base-10 formulas of
//!   IEC 61260-1:2014, with ISO 266 nominal labels.

pub mod octave;
pub mod weighting;

pub use octave::{bands_between, Band, BandFraction};
pub use weighting::Weighting;

/// Reference frequency f_r = 1000 Hz: the frequency where every weighting is 0 dB
/// (IEC 61672-1:2013 Annex E) and the centre of band index 0 (IEC 61260-1:2014 clause 5).
pub const REFERENCE_FREQUENCY_HZ: f64 = 1000.0;

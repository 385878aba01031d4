//! Spectral estimators: Welch's averaged periodogram, its confidence interval, and a bounded
//! spectrogram of the same segments.

pub mod confidence;
pub mod inverse;
pub mod spectrogram;
pub mod welch;

pub use confidence::ConfidenceFactors;
pub use spectrogram::Spectrogram;
pub use welch::{Average, Detrend, Welch, WelchPlan, WelchResult, WelchSettings};

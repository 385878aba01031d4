//! Spectral estimators: Welch's averaged periodogram and its confidence interval.

pub mod confidence;
pub mod inverse;
pub mod welch;

pub use confidence::ConfidenceFactors;
pub use welch::{Average, Detrend, Welch, WelchPlan, WelchResult, WelchSettings};

//! noisesonde: from a noise recording to numbers a lab can defend.
//!
//! One pipeline serves every front end: a [`io::SampleSource`] streams samples of one channel
//! into an [`analysis::Analyzer`] built from [`analysis::Settings`], which produces a
//! [`report::Report`]: moments with their meaning (DC level, total and AC power), a Welch PSD
//! with its resolution bandwidth and confidence interval, the autocorrelation, checks that
//! tie them together (Parseval, Wiener–Khinchin), and stationarity tests that say whether the
//! record's time averages stand for the process ([`stationarity`]). Several records of one
//! process go through [`ensemble_analysis`] to test ergodicity.
//!
//! The core does no file-system, DOM or clock access; SI units inside, decibels only at the edge.

pub mod acf;
pub mod acoustics;
pub mod analysis;
pub mod bands;
pub mod ensemble_analysis;
pub mod error;
pub mod export;
pub mod io;
pub mod listen;
pub mod live;
pub mod moments;
mod numeric;
pub mod plot;
pub mod report;
pub mod ring;
pub mod spectral;
pub mod stationarity;
pub mod tone;
pub mod units;
#[cfg(all(target_arch = "wasm32", feature = "web"))]
pub mod web;
pub mod window;

pub use analysis::{analyze, Analyzer, Settings};
pub use ensemble_analysis::{analyze_ensemble, EnsembleAnalyzer, EnsembleReport, EnsembleSettings};
pub use error::{AnalysisError, Error, SettingsError};
pub use report::Report;

//! Readers: turn bytes into blocks of `f64` samples of one chosen channel.
//!
//! Every reader is generic over [`std::io::Read`] (plus [`std::io::Seek`] where the container
//! format needs it), streams in constant memory in the length of the input, and never panics on
//! hostile bytes: each failure is a [`ReadError`] naming the problem and the values involved.
//!
//! Integer PCM is scaled to full scale (value / 2^(bits-1); 8-bit: (value-128)/128), so 1.0 is
//! full scale. Text columns are passed through in their own units. Calibration to physical units
//! happens later, in the pipeline.

pub mod csv;
pub mod raw;
pub mod wav;

use std::io::{Read, Seek};

use serde::Serialize;

pub use self::csv::{ColumnSelector, CsvOptions, CsvSource};
pub use self::raw::{RawFormat, RawOptions, RawSource};
pub use self::wav::WavSource;

/// What a reader found out about its input.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SourceInfo {
    /// File name or a short description of where the samples came from.
    pub name: String,
    /// Human-readable encoding, e.g. `"WAV, PCM 24-bit signed integer"`, `"CSV text"`, `"raw f32le"`.
    pub format: String,
    /// Number of interleaved channels (columns for text) in the input.
    pub channels: usize,
    /// The channel being read, 0-based.
    pub channel: usize,
    /// Name of the channel or column where the input has one (a CSV header).
    pub channel_name: Option<String>,
    /// Sample rate in hertz; finite and > 0 once a reader has been built.
    pub sample_rate_hz: f64,
    /// Bits per sample of the encoding, where it has one.
    pub bits_per_sample: Option<u32>,
    /// Whether samples are in full-scale units (1.0 = digital full scale). False for text.
    pub full_scale: bool,
    /// Largest positive value the encoding can hold, in full-scale units (for integer PCM
    /// (2^(b-1)-1)/2^(b-1); for float 1.0). `None` when there is no full scale (text).
    /// Samples at or above this, or at or below -1.0, count as clipped.
    pub clip_level_fs: Option<f64>,
    /// Frames (samples per channel) the header declares, where it declares any.
    pub declared_frames: Option<u64>,
}

/// A streaming source of samples of one channel.
pub trait SampleSource {
    /// Facts about the input, known once the reader is built.
    fn info(&self) -> &SourceInfo;
    /// Fills `out` from the start with up to `out.len()` samples of the chosen channel and
    /// returns how many were written; `Ok(0)` means the end of the input.
    fn read(&mut self, out: &mut [f64]) -> Result<usize, ReadError>;
    /// Warnings gathered so far (for example, a data chunk shorter than its header declares).
    fn warnings(&self) -> &[String];
}

/// How to interpret an input; plain data filled from the command line or the page.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct InputOptions {
    /// Channel (or data column for text) to read, 0-based. `None`: the first channel, or the
    /// first data column for text. For text this counts data columns only (the time column is
    /// not counted).
    pub channel: Option<usize>,
    /// Data column of a CSV by header name or 0-based index among all columns; overrides `channel`.
    pub column: Option<ColumnSelector>,
    /// Time column of a CSV by header name or index; `None` looks for a header named like
    /// `time`, `t`, `time_s`, `seconds`, `timestamp`.
    pub time_column: Option<ColumnSelector>,
    /// Sample rate in hertz: required for raw input and for text without a time column;
    /// for WAV/FLAC it overrides the header (with a warning).
    pub sample_rate_hz: Option<f64>,
    /// Raw binary layout; when set, the input is read as raw samples.
    pub raw: Option<RawFormat>,
    /// Interleaved channels of raw input (default 1).
    pub channels: Option<usize>,
}

/// Errors of the readers. Messages name the problem and, where one exists, the fix.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum ReadError {
    #[error("{name}: {message}")]
    Invalid { name: String, message: String },
    #[error("{name}: read failed: {source}")]
    Io {
        name: String,
        #[source]
        source: std::io::Error,
    },
}

/// Opens an input, choosing the reader from `options.raw` or from the first bytes
/// (RIFF/RF64 WAV, FLAC, else text).
pub fn open<R>(
    reader: R,
    name: &str,
    options: &InputOptions,
) -> Result<Box<dyn SampleSource + Send>, ReadError>
where
    R: Read + Seek + Send + Sync + 'static,
{
    let _ = (reader, name, options);
    Err(ReadError::Invalid {
        name: name.to_string(),
        message: "readers not written yet".to_string(),
    })
}

//! Raw binary reader: headerless interleaved frames of one sample encoding.
//!
//! Integers are scaled to full scale (i16: value / 2^15, i32: value / 2^31); floats are passed
//! through as they are (1.0 taken as full scale). The input is read in blocks of about
//! [`RAW_BLOCK_BYTES`] into one buffer that is reused, so memory does not grow with the input.

use std::fmt;
use std::io::Read;
use std::str::FromStr;

use super::{checked_sample_rate, io_error, read_full, ReadError, SampleSource, SourceInfo};

/// Size of the reused read buffer in bytes (rounded down to whole frames, at least one frame).
pub const RAW_BLOCK_BYTES: usize = 64 * 1024;

/// Most interleaved channels a raw input may declare (as many as a WAV header can hold).
pub const MAX_RAW_CHANNELS: usize = u16::MAX as usize;

/// Sample encodings of raw input: sample type and byte order.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RawFormat {
    /// Signed 16-bit integer, little-endian.
    I16Le,
    /// Signed 16-bit integer, big-endian.
    I16Be,
    /// Signed 32-bit integer, little-endian.
    I32Le,
    /// Signed 32-bit integer, big-endian.
    I32Be,
    /// IEEE 754 single precision, little-endian.
    F32Le,
    /// IEEE 754 single precision, big-endian.
    F32Be,
    /// IEEE 754 double precision, little-endian.
    F64Le,
    /// IEEE 754 double precision, big-endian.
    F64Be,
}

impl RawFormat {
    /// Every format, in the order of [`RawFormat::name`]s listed in messages.
    pub const ALL: [RawFormat; 8] = [
        RawFormat::I16Le,
        RawFormat::I16Be,
        RawFormat::I32Le,
        RawFormat::I32Be,
        RawFormat::F32Le,
        RawFormat::F32Be,
        RawFormat::F64Le,
        RawFormat::F64Be,
    ];

    /// The name used on the command line, e.g. `"f32le"`.
    pub fn name(self) -> &'static str {
        match self {
            RawFormat::I16Le => "i16le",
            RawFormat::I16Be => "i16be",
            RawFormat::I32Le => "i32le",
            RawFormat::I32Be => "i32be",
            RawFormat::F32Le => "f32le",
            RawFormat::F32Be => "f32be",
            RawFormat::F64Le => "f64le",
            RawFormat::F64Be => "f64be",
        }
    }

    /// Bytes per sample.
    pub fn bytes_per_sample(self) -> usize {
        match self {
            RawFormat::I16Le | RawFormat::I16Be => 2,
            RawFormat::I32Le | RawFormat::I32Be | RawFormat::F32Le | RawFormat::F32Be => 4,
            RawFormat::F64Le | RawFormat::F64Be => 8,
        }
    }

    /// Whether samples are integers (scaled to full scale) rather than floats.
    pub fn is_integer(self) -> bool {
        matches!(
            self,
            RawFormat::I16Le | RawFormat::I16Be | RawFormat::I32Le | RawFormat::I32Be
        )
    }

    /// Decodes one sample from exactly [`RawFormat::bytes_per_sample`] bytes; `None` if the
    /// slice has another length.
    fn decode(self, bytes: &[u8]) -> Option<f64> {
        /// 2^15, full scale of 16-bit integers.
        const I16_FULL_SCALE: f64 = 32_768.0;
        /// 2^31, full scale of 32-bit integers.
        const I32_FULL_SCALE: f64 = 2_147_483_648.0;
        Some(match self {
            RawFormat::I16Le => {
                f64::from(i16::from_le_bytes(bytes.try_into().ok()?)) / I16_FULL_SCALE
            }
            RawFormat::I16Be => {
                f64::from(i16::from_be_bytes(bytes.try_into().ok()?)) / I16_FULL_SCALE
            }
            RawFormat::I32Le => {
                f64::from(i32::from_le_bytes(bytes.try_into().ok()?)) / I32_FULL_SCALE
            }
            RawFormat::I32Be => {
                f64::from(i32::from_be_bytes(bytes.try_into().ok()?)) / I32_FULL_SCALE
            }
            RawFormat::F32Le => f64::from(f32::from_le_bytes(bytes.try_into().ok()?)),
            RawFormat::F32Be => f64::from(f32::from_be_bytes(bytes.try_into().ok()?)),
            RawFormat::F64Le => f64::from_le_bytes(bytes.try_into().ok()?),
            RawFormat::F64Be => f64::from_be_bytes(bytes.try_into().ok()?),
        })
    }
}

impl fmt::Display for RawFormat {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

/// The text given for a [`RawFormat`] names none of them.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error(
    "unknown raw format '{text}': expected one of i16le i16be i32le i32be f32le f32be f64le f64be \
     (sample type, then le for little-endian or be for big-endian byte order)"
)]
pub struct ParseRawFormatError {
    /// The text that was given.
    pub text: String,
}

impl FromStr for RawFormat {
    type Err = ParseRawFormatError;

    /// Parses `i16le i16be i32le i32be f32le f32be f64le f64be`, ignoring case and surrounding
    /// spaces.
    fn from_str(text: &str) -> Result<Self, Self::Err> {
        let wanted = text.trim();
        RawFormat::ALL
            .into_iter()
            .find(|format| format.name().eq_ignore_ascii_case(wanted))
            .ok_or_else(|| ParseRawFormatError {
                text: text.to_string(),
            })
    }
}

/// Layout of raw input. There is no `Default`: the format and the sample rate must be given.
#[derive(Debug, Clone, PartialEq)]
pub struct RawOptions {
    /// Encoding of each sample.
    pub format: RawFormat,
    /// Interleaved channels per frame, 1 to [`MAX_RAW_CHANNELS`].
    pub channels: usize,
    /// Channel to read, 0-based, below `channels`.
    pub channel: usize,
    /// Sample rate in hertz; finite and > 0.
    pub sample_rate_hz: f64,
}

impl RawOptions {
    /// One channel of `format` at `sample_rate_hz`; change `channels` and `channel` for
    /// interleaved input.
    pub fn new(format: RawFormat, sample_rate_hz: f64) -> Self {
        RawOptions {
            format,
            channels: 1,
            channel: 0,
            sample_rate_hz,
        }
    }
}

/// Streaming reader of one channel of interleaved raw samples.
///
/// # Example
/// ```
/// use noisesonde::io::{RawFormat, RawOptions, RawSource, SampleSource};
///
/// // Two interleaved i16le channels: frames (16384, -16384) and (-32768, 0).
/// let bytes: Vec<u8> = [16384i16, -16384, -32768, 0].iter().flat_map(|v| v.to_le_bytes()).collect();
/// let options = RawOptions { channels: 2, channel: 1, ..RawOptions::new(RawFormat::I16Le, 1000.0) };
/// let mut source = RawSource::new(std::io::Cursor::new(bytes), "probe.bin", &options)?;
/// let mut out = [0.0; 4];
/// assert_eq!(source.read(&mut out)?, 2);
/// assert_eq!(&out[..2], &[-0.5, 0.0]);
/// # Ok::<(), noisesonde::io::ReadError>(())
/// ```
pub struct RawSource {
    info: SourceInfo,
    warnings: Vec<String>,
    reader: Box<dyn Read + Send>,
    format: RawFormat,
    frame_bytes: usize,
    buffer: Vec<u8>,
    finished: bool,
}

impl RawSource {
    /// Builds a reader of `options.channel` of interleaved `options.format` samples.
    ///
    /// # Errors
    /// [`ReadError::InvalidSampleRate`] for a rate that is not finite and above 0 Hz,
    /// [`ReadError::InvalidOption`] for 0 or more than [`MAX_RAW_CHANNELS`] channels, and
    /// [`ReadError::ChannelOutOfRange`] for a channel that the frame does not have.
    pub fn new<R: Read + Send + 'static>(
        reader: R,
        name: &str,
        options: &RawOptions,
    ) -> Result<Self, ReadError> {
        let sample_rate_hz =
            checked_sample_rate(name, options.sample_rate_hz, "given with --sample-rate")?;
        if options.channels == 0 || options.channels > MAX_RAW_CHANNELS {
            return Err(ReadError::InvalidOption {
                name: name.to_string(),
                option: format!("--channels {}", options.channels),
                problem: format!(
                    "is out of range: raw input needs 1 to {MAX_RAW_CHANNELS} interleaved channels"
                ),
            });
        }
        if options.channel >= options.channels {
            return Err(ReadError::ChannelOutOfRange {
                name: name.to_string(),
                channel: options.channel,
                channels: options.channels,
            });
        }
        let format = options.format;
        // At most MAX_RAW_CHANNELS * 8 bytes, so no overflow.
        let frame_bytes = options.channels * format.bytes_per_sample();
        let block_frames = (RAW_BLOCK_BYTES / frame_bytes).max(1);
        let bits = 8 * format.bytes_per_sample() as u32;
        let clip_level_fs = if format.is_integer() {
            let full_scale = f64::from(bits - 1).exp2();
            (full_scale - 1.0) / full_scale
        } else {
            1.0
        };
        Ok(RawSource {
            info: SourceInfo {
                name: name.to_string(),
                format: format!("raw {format}"),
                channels: options.channels,
                channel: options.channel,
                channel_name: None,
                channel_names: Vec::new(),
                sample_rate_hz,
                bits_per_sample: Some(bits),
                full_scale: true,
                clip_level_fs: Some(clip_level_fs),
                declared_frames: None,
            },
            warnings: Vec::new(),
            reader: Box::new(reader),
            format,
            frame_bytes,
            buffer: vec![0; block_frames * frame_bytes],
            finished: false,
        })
    }

    pub(crate) fn push_warning(&mut self, warning: String) {
        self.warnings.push(warning);
    }
}

impl SampleSource for RawSource {
    fn info(&self) -> &SourceInfo {
        &self.info
    }

    fn read(&mut self, out: &mut [f64]) -> Result<usize, ReadError> {
        if self.finished || out.is_empty() {
            return Ok(0);
        }
        let frames_wanted = out.len().min(self.buffer.len() / self.frame_bytes);
        let wanted_bytes = frames_wanted * self.frame_bytes;
        let buffer = self.buffer.get_mut(..wanted_bytes).unwrap_or_default();
        let got = read_full(&mut self.reader, buffer).map_err(|e| io_error(&self.info.name, e))?;
        let frames = got / self.frame_bytes;
        let leftover = got % self.frame_bytes;
        if got < wanted_bytes {
            self.finished = true;
            if leftover > 0 {
                self.warnings.push(format!(
                    "the input ends with {leftover} byte(s) that do not make a whole frame \
                     ({} bytes: {} channel(s) of {}); they were ignored - check --raw and --channels",
                    self.frame_bytes, self.info.channels, self.format
                ));
            }
        }
        let sample_bytes = self.format.bytes_per_sample();
        let offset = self.info.channel * sample_bytes;
        let frames_bytes = self
            .buffer
            .get(..frames * self.frame_bytes)
            .unwrap_or_default();
        let mut written = 0;
        for (slot, frame) in out
            .iter_mut()
            .zip(frames_bytes.chunks_exact(self.frame_bytes))
        {
            let sample = frame
                .get(offset..offset + sample_bytes)
                .and_then(|bytes| self.format.decode(bytes));
            // Always Some: offset + sample_bytes <= frame_bytes because channel < channels.
            debug_assert!(sample.is_some());
            *slot = sample.unwrap_or(0.0);
            written += 1;
        }
        Ok(written)
    }

    fn warnings(&self) -> &[String] {
        &self.warnings
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_round_trip() {
        for format in RawFormat::ALL {
            assert_eq!(format.name().parse::<RawFormat>(), Ok(format));
        }
        assert_eq!(" F32LE ".parse::<RawFormat>(), Ok(RawFormat::F32Le));
        let err = "s16le".parse::<RawFormat>().unwrap_err().to_string();
        assert!(err.contains("'s16le'") && err.contains("i16le"), "{err}");
    }
}

//! Readers: turn bytes into blocks of `f64` samples of one chosen channel; and one writer,
//! [`wav_writer`], which turns full-scale samples back into a WAV file (to save recorded input).
//!
//! Every reader is generic over [`std::io::Read`] (plus [`std::io::Seek`] where the container
//! format needs it), streams in constant memory in the length of the input, and never panics on
//! hostile bytes: each failure is a [`ReadError`] naming the problem and the values involved.
//!
//! Integer PCM is scaled to full scale (value / 2^(bits-1); 8-bit: (value-128)/128), so 1.0 is
//! full scale. Text columns are passed through in their own units. Calibration to physical units
//! happens later, in the pipeline.
//!
//! | input | reader | chosen by |
//! | --- | --- | --- |
//! | WAV (RIFF, RF64), FLAC | [`WavSource`] | first bytes `RIFF`, `RF64`, `fLaC` |
//! | CSV / TSV text | [`CsvSource`] | first 4 KiB are UTF-8 without NUL bytes |
//! | headerless samples | [`RawSource`] | [`InputOptions::raw`] |
//!
//! # Example
//! ```
//! use std::io::Cursor;
//! use noisesonde::io::{open, InputOptions};
//!
//! let text = "time,volts\n0.000,0.5\n0.001,-0.5\n0.002,0.25\n";
//! let mut source = open(Cursor::new(text), "scope.csv", &InputOptions::default())?;
//! assert_eq!(source.info().sample_rate_hz.round(), 1000.0);
//! let mut block = [0.0; 8];
//! let n = source.read(&mut block)?;
//! assert_eq!(&block[..n], &[0.5, -0.5, 0.25]);
//! # Ok::<(), noisesonde::io::ReadError>(())
//! ```

pub mod csv;
pub mod raw;
pub mod wav;
pub mod wav_writer;

use std::io::{Read, Seek, SeekFrom};

use serde::{Deserialize, Serialize};

pub use self::csv::{ColumnSelector, CsvOptions, CsvSource, ParseColumnSelectorError};
pub use self::raw::{ParseRawFormatError, RawFormat, RawOptions, RawSource};
pub use self::wav::{WavOptions, WavSource};
pub use self::wav_writer::{
    write_wav, write_wav_parts, WavEncoding, WavSpec, WavWriteError, WavWritten,
};

/// What a reader found out about its input.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
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
    /// Names of all channels in order, where the input names them (a CSV header's data
    /// columns); empty otherwise. Lets a front end offer the channels by name.
    #[serde(default)]
    pub channel_names: Vec<String>,
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

/// Errors of the readers. Each message starts with the input's name, then says what is wrong,
/// with the values involved, and how to fix it.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum ReadError {
    /// The underlying reader failed.
    #[error("{name}: read failed: {source}")]
    Io {
        /// Input name.
        name: String,
        /// The I/O error.
        #[source]
        source: std::io::Error,
    },
    /// The input holds no bytes at all.
    #[error("{name}: file is empty (0 bytes); check that the recording was saved completely")]
    Empty {
        /// Input name.
        name: String,
    },
    /// The first bytes match no format this crate reads.
    #[error(
        "{name}: unknown file format: it starts with {}; for headerless samples pass \
         --raw FORMAT --sample-rate HZ (FORMAT: i16le i16be i32le i32be f32le f32be f64le f64be)",
        describe_magic(.first_bytes)
    )]
    UnknownFormat {
        /// Input name.
        name: String,
        /// Up to the first 12 bytes of the input.
        first_bytes: Vec<u8>,
    },
    /// A container or encoding this crate recognises but cannot read.
    #[error("{name}: unsupported encoding: {encoding}; {fix}")]
    UnsupportedEncoding {
        /// Input name.
        name: String,
        /// What the header declares, e.g. `"WAV format tag 0x0002 (Microsoft ADPCM)"`.
        encoding: String,
        /// What to do about it.
        fix: &'static str,
    },
    /// The header ends before it is complete.
    #[error(
        "{name}: header is truncated: the file ends at byte {file_len} inside the {part}; \
         the file was not written completely, so recover it from its source"
    )]
    TruncatedHeader {
        /// Input name.
        name: String,
        /// The part of the header that is cut off, e.g. `"fmt chunk"`.
        part: String,
        /// Length of the input in bytes.
        file_len: u64,
    },
    /// The header is present but inconsistent.
    #[error("{name}: damaged header: {problem}")]
    MalformedHeader {
        /// Input name.
        name: String,
        /// What is wrong, with the values involved.
        problem: String,
    },
    /// The header declares no channels.
    #[error(
        "{name}: the header declares 0 channels, so there is nothing to read; the file is damaged"
    )]
    ZeroChannels {
        /// Input name.
        name: String,
    },
    /// The header declares a sample rate of 0 Hz.
    #[error(
        "{name}: the header declares a sample rate of 0 Hz; pass the real rate with --sample-rate HZ"
    )]
    ZeroSampleRate {
        /// Input name.
        name: String,
    },
    /// A sample rate given by the caller or derived from the data is not finite and positive.
    #[error(
        "{name}: sample rate {sample_rate_hz} Hz ({origin}) is not usable: it must be a finite \
         number above 0 Hz, such as --sample-rate 48000"
    )]
    InvalidSampleRate {
        /// Input name.
        name: String,
        /// The offending rate in hertz.
        sample_rate_hz: f64,
        /// Where it came from, e.g. `"given with --sample-rate"`.
        origin: &'static str,
    },
    /// The input has no sample rate of its own and none was given.
    #[error("{name}: {what} has no sample rate; pass --sample-rate HZ{hint}")]
    MissingSampleRate {
        /// Input name.
        name: String,
        /// The kind of input, e.g. `"raw input"`.
        what: &'static str,
        /// Further advice (may be empty).
        hint: &'static str,
    },
    /// A caller-given sample rate disagrees with the one derived from the data.
    #[error(
        "{name}: --sample-rate {} Hz disagrees with {} Hz derived from the time column \
         '{time_column}' (relative difference above 1e-6); drop --sample-rate or fix the time column",
        significant(*.given_hz),
        significant(*.derived_hz)
    )]
    SampleRateMismatch {
        /// Input name.
        name: String,
        /// Rate given by the caller, in hertz.
        given_hz: f64,
        /// Rate fitted to the time column, in hertz.
        derived_hz: f64,
        /// Name (or index) of the time column.
        time_column: String,
    },
    /// The chosen channel does not exist.
    #[error(
        "{name}: channel {channel} does not exist: the input has {channels} channel(s), numbered \
         0 to {}; choose one of those",
        .channels.saturating_sub(1)
    )]
    ChannelOutOfRange {
        /// Input name.
        name: String,
        /// The requested channel, 0-based.
        channel: usize,
        /// How many channels (data columns for text) the input has.
        channels: usize,
    },
    /// An option does not fit the input.
    #[error("{name}: {option} {problem}")]
    InvalidOption {
        /// Input name.
        name: String,
        /// The option, e.g. `"--channels 0"`.
        option: String,
        /// What is wrong and what to do.
        problem: String,
    },
    /// The decoder of a compressed or packed encoding failed.
    #[error("{name}: {format} data could not be decoded at frame {frame}: {detail}; the file is damaged")]
    Decode {
        /// Input name.
        name: String,
        /// The encoding, e.g. `"FLAC"`.
        format: &'static str,
        /// Frames (per channel) decoded before the failure.
        frame: u64,
        /// The decoder's own message.
        detail: String,
    },
    /// A text field that should be a number is not one.
    #[error("{name}: line {line}: '{text}' is not a number{}", not_a_number_hint(.text))]
    NotANumber {
        /// Input name.
        name: String,
        /// 1-based line number.
        line: u64,
        /// The field, shortened if long.
        text: String,
    },
    /// A text field is NaN or infinite.
    #[error("{name}: line {line}: non-finite value '{text}'; replace or remove it (gaps are not filled in)")]
    NonFinite {
        /// Input name.
        name: String,
        /// 1-based line number.
        line: u64,
        /// The field as written.
        text: String,
    },
    /// A row has fewer fields than the chosen column needs.
    #[error(
        "{name}: line {line}: the row has {fields} field(s) but column {column} (0-based) was \
         chosen; complete the row or delete it"
    )]
    MissingField {
        /// Input name.
        name: String,
        /// 1-based line number.
        line: u64,
        /// Fields found on the row.
        fields: usize,
        /// The 0-based column needed.
        column: usize,
    },
    /// A column asked for by name or index is not there.
    #[error("{name}: {role} column {wanted} not found; the columns are: {available}")]
    ColumnNotFound {
        /// Input name.
        name: String,
        /// `"data"` or `"time"`.
        role: &'static str,
        /// The selector as given (`'volts'` or `7`).
        wanted: String,
        /// The columns that exist (header names or indices).
        available: String,
    },
    /// The text input has no data to read.
    #[error("{name}: no data: {problem}")]
    NoData {
        /// Input name.
        name: String,
        /// What is missing.
        problem: String,
    },
    /// The time column cannot give a sample rate.
    #[error("{name}: time column '{time_column}': {problem}")]
    BadTimeColumn {
        /// Input name.
        name: String,
        /// Name (or index) of the time column.
        time_column: String,
        /// What is wrong, with the values involved.
        problem: String,
    },
    /// A time stamp is off the evenly spaced grid fitted to the time column.
    #[error(
        "{name}: line {line}: time {} s is {offset_periods:.2} sample periods away from {} s \
         expected for evenly spaced samples at {} Hz (tolerance 0.5); the samples are not evenly \
         spaced: resample them first, or fix the time column",
        significant(*.time_s),
        significant(*.expected_s),
        significant(*.sample_rate_hz)
    )]
    UnevenTime {
        /// Input name.
        name: String,
        /// 1-based line number.
        line: u64,
        /// Time found on the line, in seconds.
        time_s: f64,
        /// Time expected from the fitted line, in seconds.
        expected_s: f64,
        /// Deviation in sample periods (signed).
        offset_periods: f64,
        /// Fitted sample rate in hertz.
        sample_rate_hz: f64,
    },
    /// A text line is longer than the reader accepts.
    #[error(
        "{name}: line {line} is longer than {limit_bytes} bytes without a line break; this is not \
         a column-per-line text file (binary data? pass --raw FORMAT --sample-rate HZ)"
    )]
    LineTooLong {
        /// Input name.
        name: String,
        /// 1-based line number.
        line: u64,
        /// The limit in bytes.
        limit_bytes: usize,
    },
    /// The CSV parser failed.
    #[error("{name}: line {line}: CSV could not be parsed: {detail}")]
    Csv {
        /// Input name.
        name: String,
        /// 1-based line number (0 when unknown).
        line: u64,
        /// The parser's message.
        detail: String,
    },
}

/// Renders the first bytes of an unknown input as hex and ASCII, with a guess at what it is.
fn describe_magic(bytes: &[u8]) -> String {
    let hex: Vec<String> = bytes.iter().map(|b| format!("{b:02X}")).collect();
    let ascii: String = bytes
        .iter()
        .map(|&b| {
            if (b.is_ascii_graphic() && b != b'"' && b != b'\\') || b == b' ' {
                b as char
            } else {
                '.'
            }
        })
        .collect();
    let guess = if bytes.get(8..12) == Some(b"WAVE") {
        ": a WAV file whose RIFF marker is damaged".to_string()
    } else {
        KNOWN_MAGIC
            .iter()
            .find(|(magic, _)| bytes.starts_with(magic))
            .map(|(_, what)| format!(": {what}"))
            .unwrap_or_default()
    };
    format!("{} (\"{ascii}\"){guess}", hex.join(" "))
}

impl ReadError {
    /// Whether this is an input without a recognisable header that could be headerless samples
    /// (an [`ReadError::UnknownFormat`] whose first bytes match no known file type): a front
    /// end may then ask for the raw layout instead of only showing the message.
    pub fn could_be_raw(&self) -> bool {
        match self {
            ReadError::UnknownFormat { first_bytes, .. } => {
                first_bytes.get(8..12) != Some(b"WAVE")
                    && !KNOWN_MAGIC
                        .iter()
                        .any(|(magic, _)| first_bytes.starts_with(magic))
            }
            _ => false,
        }
    }
}

/// Signatures of common non-audio or unsupported files, to name them in [`ReadError::UnknownFormat`].
/// Sources: the format specifications (PKWARE APPNOTE, RFC 1952, ISO 32000, RFC 3533, ID3v2,
/// EA IFF 85, HDF5, NumPy NEP 1, MAT-file v5, Apple CAF, MS-CFB).
const KNOWN_MAGIC: &[(&[u8], &str)] = &[
    (
        b"PK\x03\x04",
        "a ZIP archive (an .xlsx or .docx file?) - export the data as CSV or WAV",
    ),
    (b"\x1f\x8b", "a gzip archive - decompress it first"),
    (b"%PDF", "a PDF document"),
    (
        b"OggS",
        "an Ogg stream (Vorbis/Opus) - convert it to WAV or FLAC",
    ),
    (b"ID3", "an MP3 file - lossy audio; use WAV or FLAC"),
    (b"\xff\xfb", "an MP3 frame - lossy audio; use WAV or FLAC"),
    (b"FORM", "an IFF/AIFF file - convert it to WAV"),
    (
        b"\x89HDF",
        "an HDF5 file - export the channel as raw or CSV",
    ),
    (
        b"\x93NUMPY",
        "a NumPy .npy array - save it with tofile() and pass --raw",
    ),
    (
        b"MATLAB",
        "a MATLAB .mat file - export the channel as raw or CSV",
    ),
    (b"caff", "an Apple CAF file - convert it to WAV"),
    (
        b"\xd0\xcf\x11\xe0",
        "an old Microsoft Office file (.xls?) - export the data as CSV",
    ),
    (b"\xff\xfe", "UTF-16 text - save it as UTF-8"),
    (b"\xfe\xff", "UTF-16 text - save it as UTF-8"),
];

/// Formats a measured value with at most [`SIGNIFICANT_DIGITS`] significant digits, so that a
/// fitted 999.9999999999998 Hz reads as 1000.
fn significant(value: f64) -> String {
    if !value.is_finite() || value == 0.0 {
        return value.to_string();
    }
    let magnitude = value.abs().log10().floor();
    let decimals = (f64::from(SIGNIFICANT_DIGITS) - 1.0 - magnitude).clamp(0.0, 17.0) as usize;
    let text = format!("{value:.decimals$}");
    if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text
    }
}

/// Significant digits of measured values (times, fitted rates) in messages.
const SIGNIFICANT_DIGITS: u32 = 10;

/// A hint appended to [`ReadError::NotANumber`] when the text looks like a decimal comma.
fn not_a_number_hint(text: &str) -> &'static str {
    let looks_decimal_comma =
        text.contains(',') && !text.contains('.') && text.replace(',', ".").parse::<f64>().is_ok();
    if looks_decimal_comma {
        " (decimal comma? write the decimal point as '.')"
    } else {
        "; fix the value or turn the line into a comment with '#'"
    }
}

/// Checks that a sample rate is finite and above zero.
pub(crate) fn checked_sample_rate(
    name: &str,
    sample_rate_hz: f64,
    origin: &'static str,
) -> Result<f64, ReadError> {
    if sample_rate_hz.is_finite() && sample_rate_hz > 0.0 {
        Ok(sample_rate_hz)
    } else {
        Err(ReadError::InvalidSampleRate {
            name: name.to_string(),
            sample_rate_hz,
            origin,
        })
    }
}

/// Wraps an I/O error with the input's name.
pub(crate) fn io_error(name: &str, source: std::io::Error) -> ReadError {
    ReadError::Io {
        name: name.to_string(),
        source,
    }
}

/// Reads until `buf` is full or the input ends, retrying interrupted reads; returns the bytes read.
pub(crate) fn read_full<R: Read + ?Sized>(
    reader: &mut R,
    buf: &mut [u8],
) -> std::io::Result<usize> {
    let mut filled = 0;
    while filled < buf.len() {
        let rest = buf.get_mut(filled..).unwrap_or_default();
        match reader.read(rest) {
            Ok(0) => break,
            Ok(n) => filled += n,
            Err(e) if e.kind() == std::io::ErrorKind::Interrupted => {}
            Err(e) => return Err(e),
        }
    }
    Ok(filled)
}

/// Bytes of an unknown input shown in [`ReadError::UnknownFormat`]: enough for a RIFF form type.
pub(crate) const MAGIC_SHOWN_LEN: usize = 12;

/// Bytes looked at to choose a reader: enough for any magic number and for a text check.
const SNIFF_LEN: usize = 4096;

/// What the first bytes of an input say it is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Sniffed {
    Empty,
    Wav,
    Flac,
    BigEndianRiff,
    Text,
    Unknown,
}

fn sniff(head: &[u8]) -> Sniffed {
    if head.is_empty() {
        return Sniffed::Empty;
    }
    if head.starts_with(b"RIFF") || head.starts_with(b"RF64") {
        return Sniffed::Wav;
    }
    if head.starts_with(b"RIFX") {
        return Sniffed::BigEndianRiff;
    }
    if head.starts_with(b"fLaC") {
        return Sniffed::Flac;
    }
    if looks_like_text(head) {
        return Sniffed::Text;
    }
    Sniffed::Unknown
}

/// Valid UTF-8 without NUL bytes; a multi-byte character cut off at the end of `head` is allowed.
fn looks_like_text(head: &[u8]) -> bool {
    if head.contains(&0) {
        return false;
    }
    match std::str::from_utf8(head) {
        Ok(_) => true,
        // error_len() == None: the input ends inside a character, which the sniff length can cause.
        Err(e) => e.error_len().is_none() && head.len() == SNIFF_LEN,
    }
}

/// Opens an input, choosing the reader from `options.raw` or from the first bytes
/// (RIFF/RF64 WAV, FLAC, else text).
///
/// The input is read from the reader's current position, which counts as the start of the file.
///
/// # Errors
/// [`ReadError::Empty`] for an empty input, [`ReadError::UnknownFormat`] for bytes that are not
/// WAV, FLAC or UTF-8 text (with a guess at what they are), [`ReadError::UnsupportedEncoding`]
/// for big-endian RIFX, [`ReadError::InvalidSampleRate`] for a sample rate that is not finite and
/// positive, and every error of the chosen reader.
pub fn open<R>(
    mut reader: R,
    name: &str,
    options: &InputOptions,
) -> Result<Box<dyn SampleSource + Send>, ReadError>
where
    R: Read + Seek + Send + Sync + 'static,
{
    if let Some(hz) = options.sample_rate_hz {
        checked_sample_rate(name, hz, "given with --sample-rate")?;
    }

    let start = reader.stream_position().map_err(|e| io_error(name, e))?;
    let mut head = [0u8; SNIFF_LEN];
    let head_len = read_full(&mut reader, &mut head).map_err(|e| io_error(name, e))?;
    reader
        .seek(SeekFrom::Start(start))
        .map_err(|e| io_error(name, e))?;
    let head = head.get(..head_len).unwrap_or_default();
    let kind = sniff(head);

    if let Some(format) = options.raw {
        let sample_rate_hz =
            options
                .sample_rate_hz
                .ok_or_else(|| ReadError::MissingSampleRate {
                    name: name.to_string(),
                    what: "raw input",
                    hint: "",
                })?;
        let raw_options = RawOptions {
            format,
            channels: options.channels.unwrap_or(1),
            channel: options.channel.unwrap_or(0),
            sample_rate_hz,
        };
        let mut source = RawSource::new(reader, name, &raw_options)?;
        match kind {
            Sniffed::Wav | Sniffed::Flac => source.push_warning(format!(
                "the file starts like a {} file, but it is read as raw {format} as asked; \
                 drop --raw to read its header",
                if kind == Sniffed::Wav { "WAV" } else { "FLAC" }
            )),
            _ => {}
        }
        warn_text_only_options(options, &mut |w| source.push_warning(w));
        return Ok(Box::new(source));
    }

    match kind {
        Sniffed::Empty => Err(ReadError::Empty {
            name: name.to_string(),
        }),
        Sniffed::BigEndianRiff => Err(ReadError::UnsupportedEncoding {
            name: name.to_string(),
            encoding: "big-endian RIFX WAV".to_string(),
            fix: "convert it to a little-endian RIFF WAV or FLAC",
        }),
        Sniffed::Wav | Sniffed::Flac => {
            let wav_options = WavOptions {
                channel: options.channel.unwrap_or(0),
                sample_rate_hz: options.sample_rate_hz,
            };
            let mut source = WavSource::new(reader, name, &wav_options)?;
            if let Some(channels) = options.channels {
                if channels != source.info().channels {
                    let header_channels = source.info().channels;
                    source.push_warning(format!(
                        "--channels {channels} ignored: the header declares {header_channels}"
                    ));
                }
            }
            warn_text_only_options(options, &mut |w| source.push_warning(w));
            Ok(Box::new(source))
        }
        Sniffed::Text => {
            let csv_options = CsvOptions {
                channel: options.channel,
                column: options.column.clone(),
                time_column: options.time_column.clone(),
                sample_rate_hz: options.sample_rate_hz,
                delimiter: None,
            };
            let mut source = CsvSource::new(reader, name, &csv_options)?;
            if options.channels.is_some() {
                source.push_warning(
                    "--channels ignored: it applies to raw input only; text columns are counted from the file"
                        .to_string(),
                );
            }
            Ok(Box::new(source))
        }
        Sniffed::Unknown => Err(ReadError::UnknownFormat {
            name: name.to_string(),
            first_bytes: head.iter().take(MAGIC_SHOWN_LEN).copied().collect(),
        }),
    }
}

/// Adds a warning for each text-only option set on a binary input.
fn warn_text_only_options(options: &InputOptions, push: &mut dyn FnMut(String)) {
    if options.column.is_some() {
        push("--column ignored: it applies to text input only (use --channel)".to_string());
    }
    if options.time_column.is_some() {
        push("--time-column ignored: it applies to text input only".to_string());
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sniff_tells_formats_apart() {
        assert_eq!(sniff(b""), Sniffed::Empty);
        assert_eq!(sniff(b"RIFF\x24\x00\x00\x00WAVE"), Sniffed::Wav);
        assert_eq!(sniff(b"RF64\xff\xff\xff\xffWAVE"), Sniffed::Wav);
        assert_eq!(sniff(b"RIFX"), Sniffed::BigEndianRiff);
        assert_eq!(sniff(b"fLaC\x00"), Sniffed::Flac);
        assert_eq!(sniff(b"t,v\n0,1\n"), Sniffed::Text);
        assert_eq!(sniff(b"PK\x03\x04\x14\x00"), Sniffed::Unknown);
        assert_eq!(sniff(b"a\x00b"), Sniffed::Unknown);
    }

    #[test]
    fn magic_description_names_zip() {
        let text = describe_magic(b"PK\x03\x04\x14\x00\x06\x00");
        assert!(
            text.starts_with("50 4B 03 04 14 00 06 00 (\"PK......\")"),
            "{text}"
        );
        assert!(text.contains("ZIP archive"), "{text}");
        let text = describe_magic(b"RI\x00F\x24\x00\x00\x00WAVE");
        assert!(text.contains("RIFF marker is damaged"), "{text}");
    }

    #[test]
    fn significant_digits() {
        assert_eq!(significant(999.9999999999998), "1000");
        assert_eq!(significant(0.0012345678901), "0.00123456789");
        assert_eq!(significant(48000.0), "48000");
        assert_eq!(significant(-2.5), "-2.5");
        assert_eq!(significant(f64::NAN), "NaN");
    }

    #[test]
    fn decimal_comma_hint() {
        assert!(not_a_number_hint("0,5").contains("decimal comma"));
        assert!(!not_a_number_hint("three").contains("decimal comma"));
    }
}

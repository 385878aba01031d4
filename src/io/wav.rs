//! WAV and FLAC reader built on `symphonia`.
//!
//! # What reads what
//! - **FLAC**: symphonia's `FlacReader` demuxes and its `FlacDecoder` decodes, with MD5
//!   verification on; its errors are wrapped into [`ReadError`]s.
//! - **WAV** (RIFF and RF64): a small bounded walk over the RIFF chunk headers (`parse_riff`)
//!   finds `fmt ` and `data`, and symphonia's `PcmDecoder` decodes the sample bytes.
//!
//! Why not symphonia's `WavReader` for WAV: symphonia 0.6.1, fed this crate's fixtures and
//! damaged copies of them, rejects files this crate must read and cannot name the problem in
//! others:
//! - an odd-sized `LIST` chunk before `data` fails with "riff: chunk length exceeds parent
//!   (list) chunk length" (its source skips the pad byte twice: in the list reader and in the
//!   chunk reader);
//! - a `data` chunk that declares more bytes than the RIFF size allows (a recorder stopped
//!   mid-write) fails with the same message instead of yielding the samples present;
//! - RF64 gives "no suitable format reader found";
//! - a header with 0 channels gives "riff: invalid channel count"; one with 0 Hz is accepted;
//! - a WAVE_FORMAT_EXTENSIBLE channel mask with bit 31 set and fewer bits than channels panics
//!   with "attempt to shift left with overflow" in debug builds (`fix_wave_channel_mask`);
//! - by its source, a `LIST`/`INFO` chunk is read whole into memory.
//!
//! The walk reads only chunk headers and the `fmt `/`ds64` bodies (at most 40 bytes each),
//! seeks over everything else, and stops after [`MAX_CHUNKS_BEFORE_DATA`] chunks.
//!
//! # Scaling
//! Integer samples are divided by 2^(b-1) where b is the bit depth of the stored sample: the
//! container size from the WAV header, or the FLAC stream's bits per sample. symphonia's FLAC
//! decoder returns every depth as `i32` shifted left to the top bits (`decoder.rs`: `sample <<
//! (32 - bits_per_sample)`), so such samples are shifted back by 32 - b first. 8-bit WAV is
//! unsigned: (v - 128) / 128. Floats pass through unchanged.

use std::io::{Read, Seek, SeekFrom};

use symphonia::core::audio::{Audio, Channels, GenericAudioBufferRef};
use symphonia::core::codecs::audio::well_known::{
    CODEC_ID_PCM_F32LE, CODEC_ID_PCM_F64LE, CODEC_ID_PCM_S16LE, CODEC_ID_PCM_S24LE,
    CODEC_ID_PCM_S32LE, CODEC_ID_PCM_U8,
};
use symphonia::core::codecs::audio::{AudioCodecParameters, AudioDecoder, AudioDecoderOptions};
use symphonia::core::errors::Error as SymphoniaError;
use symphonia::core::formats::{FormatOptions, FormatReader};
use symphonia::core::io::{MediaSource, MediaSourceStream};
use symphonia::core::packet::PacketRef;
use symphonia::core::units::{Duration, Timestamp};
use symphonia::default::codecs::{FlacDecoder, PcmDecoder};
use symphonia::default::formats::FlacReader;

use super::{checked_sample_rate, io_error, read_full, ReadError, SampleSource, SourceInfo};

/// Target size in bytes of one block of WAV sample data read and decoded at a time.
pub const WAV_BLOCK_BYTES: usize = 64 * 1024;

/// Chunks the RIFF walk visits before giving up on finding `data`.
pub const MAX_CHUNKS_BEFORE_DATA: usize = 1024;

/// Bytes of a `fmt ` chunk read at most: WAVE_FORMAT_EXTENSIBLE is 40 bytes.
const FMT_MAX_BYTES: usize = 40;
/// Bytes of a plain `fmt ` chunk (WAVEFORMAT plus wBitsPerSample).
const FMT_MIN_BYTES: usize = 16;
/// Bytes of an RF64 `ds64` chunk read: RIFF size, data size, sample count (EBU Tech 3306).
const DS64_BYTES: usize = 24;

/// `wFormatTag` values, from Microsoft's mmreg.h.
const WAVE_FORMAT_PCM: u16 = 0x0001;
const WAVE_FORMAT_IEEE_FLOAT: u16 = 0x0003;
const WAVE_FORMAT_EXTENSIBLE: u16 = 0xFFFE;

/// Bytes 2..16 shared by the KSDATAFORMAT_SUBTYPE_* GUIDs of ksmedia.h (the first two bytes
/// hold the format tag).
const KSDATAFORMAT_GUID_TAIL: [u8; 14] = [
    0x00, 0x00, 0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xAA, 0x00, 0x38, 0x9B, 0x71,
];

/// Options of the WAV/FLAC reader.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct WavOptions {
    /// Channel to read, 0-based.
    pub channel: usize,
    /// Sample rate in hertz that replaces the header's (a warning says so); `None` keeps the
    /// header's. Needed for a header that declares 0 Hz.
    pub sample_rate_hz: Option<f64>,
}

/// Streaming reader of one channel of a WAV (RIFF or RF64) or FLAC file.
///
/// Reads PCM 8-bit unsigned, 16/24/32-bit signed and 32/64-bit float WAV, plain or
/// WAVE_FORMAT_EXTENSIBLE, with any number of channels and any chunks before `data`, and FLAC.
///
/// # Example
/// ```
/// use noisesonde::io::{SampleSource, WavOptions, WavSource};
///
/// // A 16-bit mono WAV at 8 kHz holding the samples 16384 and -32768.
/// let mut wav = Vec::new();
/// wav.extend_from_slice(b"RIFF");
/// wav.extend_from_slice(&40u32.to_le_bytes());
/// wav.extend_from_slice(b"WAVEfmt ");
/// wav.extend_from_slice(&16u32.to_le_bytes());
/// for field in [1u16, 1] { wav.extend_from_slice(&field.to_le_bytes()); } // PCM, 1 channel
/// wav.extend_from_slice(&8000u32.to_le_bytes());
/// wav.extend_from_slice(&16000u32.to_le_bytes());
/// for field in [2u16, 16] { wav.extend_from_slice(&field.to_le_bytes()); } // block align, bits
/// wav.extend_from_slice(b"data");
/// wav.extend_from_slice(&4u32.to_le_bytes());
/// for sample in [16384i16, -32768] { wav.extend_from_slice(&sample.to_le_bytes()); }
///
/// let mut source = WavSource::new(std::io::Cursor::new(wav), "tone.wav", &WavOptions::default())?;
/// assert_eq!(source.info().format, "WAV, PCM 16-bit signed integer");
/// let mut out = [0.0; 4];
/// assert_eq!(source.read(&mut out)?, 2);
/// assert_eq!(&out[..2], &[0.5, -1.0]);
/// # Ok::<(), noisesonde::io::ReadError>(())
/// ```
pub struct WavSource {
    info: SourceInfo,
    warnings: Vec<String>,
    body: Body,
}

enum Body {
    Pcm(Box<PcmBody>),
    Flac(Box<FlacBody>),
}

impl WavSource {
    /// Reads the header of a WAV or FLAC file and prepares to stream `options.channel`.
    ///
    /// The reader's current position counts as the start of the file.
    ///
    /// # Errors
    /// [`ReadError::Empty`], [`ReadError::TruncatedHeader`], [`ReadError::MalformedHeader`],
    /// [`ReadError::ZeroChannels`], [`ReadError::ZeroSampleRate`] (unless
    /// `options.sample_rate_hz` is given), [`ReadError::UnsupportedEncoding`] (naming the
    /// encoding), [`ReadError::ChannelOutOfRange`], [`ReadError::InvalidSampleRate`],
    /// [`ReadError::UnknownFormat`] for a file that is neither WAV nor FLAC, and
    /// [`ReadError::Io`].
    pub fn new<R>(mut reader: R, name: &str, options: &WavOptions) -> Result<Self, ReadError>
    where
        R: Read + Seek + Send + Sync + 'static,
    {
        if let Some(hz) = options.sample_rate_hz {
            checked_sample_rate(name, hz, "given with --sample-rate")?;
        }
        let base = reader.stream_position().map_err(|e| io_error(name, e))?;
        let mut magic = [0u8; super::MAGIC_SHOWN_LEN];
        let got = read_full(&mut reader, &mut magic).map_err(|e| io_error(name, e))?;
        reader
            .seek(SeekFrom::Start(base))
            .map_err(|e| io_error(name, e))?;
        let magic = magic.get(..got).unwrap_or_default();
        if magic.is_empty() {
            return Err(ReadError::Empty {
                name: name.to_string(),
            });
        }
        if magic.starts_with(b"fLaC") {
            return open_flac(reader, name, options);
        }
        if magic.starts_with(b"RIFX") {
            return Err(ReadError::UnsupportedEncoding {
                name: name.to_string(),
                encoding: "big-endian RIFX WAV".to_string(),
                fix: "convert it to a little-endian RIFF WAV or FLAC",
            });
        }
        if !(magic.starts_with(b"RIFF") || magic.starts_with(b"RF64")) {
            if magic.len() < 4 && (b"RIFF".starts_with(magic) || b"RF64".starts_with(magic)) {
                return Err(ReadError::TruncatedHeader {
                    name: name.to_string(),
                    part: "RIFF header".to_string(),
                    file_len: magic.len() as u64,
                });
            }
            return Err(ReadError::UnknownFormat {
                name: name.to_string(),
                first_bytes: magic.to_vec(),
            });
        }
        open_wav(reader, base, name, options)
    }

    pub(crate) fn push_warning(&mut self, warning: String) {
        self.warnings.push(warning);
    }
}

impl SampleSource for WavSource {
    fn info(&self) -> &SourceInfo {
        &self.info
    }

    fn read(&mut self, out: &mut [f64]) -> Result<usize, ReadError> {
        match &mut self.body {
            Body::Pcm(pcm) => pcm.read(out, &self.info.name, &mut self.warnings),
            Body::Flac(flac) => flac.read(out, &self.info.name, &mut self.warnings),
        }
    }

    fn warnings(&self) -> &[String] {
        &self.warnings
    }
}

/// Sample encodings of WAV data that this reader decodes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum WavEncoding {
    /// Integer PCM: unsigned for 8 bits, signed otherwise.
    Pcm,
    /// IEEE 754 float.
    Float,
}

/// What the RIFF walk found.
#[derive(Debug, Clone)]
struct WavHeader {
    rf64: bool,
    extensible: bool,
    encoding: WavEncoding,
    channels: u16,
    sample_rate: u32,
    /// Bits per stored sample (the container): 8, 16, 24, 32 or 64.
    container_bits: u16,
    /// Bits that carry signal (WAVE_FORMAT_EXTENSIBLE's wValidBitsPerSample), <= container_bits.
    valid_bits: u16,
    /// Offset of the first sample byte from the start of the file.
    data_start: u64,
    /// Bytes the data chunk declares; `None` when it is left unset (0xFFFFFFFF) by a streaming writer.
    data_bytes: Option<u64>,
    /// Length of the whole file in bytes.
    file_len: u64,
    warnings: Vec<String>,
}

/// Reads `buf.len()` bytes at `pos` (from `base`); returns how many were there.
fn read_at<R: Read + Seek>(
    reader: &mut R,
    base: u64,
    pos: u64,
    buf: &mut [u8],
) -> std::io::Result<usize> {
    reader.seek(SeekFrom::Start(base.saturating_add(pos)))?;
    read_full(reader, buf)
}

fn u16_at(bytes: &[u8], at: usize) -> u16 {
    let mut le = [0u8; 2];
    if let Some(src) = bytes.get(at..at + 2) {
        le.copy_from_slice(src);
    }
    u16::from_le_bytes(le)
}

fn u32_at(bytes: &[u8], at: usize) -> u32 {
    let mut le = [0u8; 4];
    if let Some(src) = bytes.get(at..at + 4) {
        le.copy_from_slice(src);
    }
    u32::from_le_bytes(le)
}

fn u64_at(bytes: &[u8], at: usize) -> u64 {
    let mut le = [0u8; 8];
    if let Some(src) = bytes.get(at..at + 8) {
        le.copy_from_slice(src);
    }
    u64::from_le_bytes(le)
}

/// A chunk id for messages: printable ASCII kept, other bytes as `.`.
fn tag_text(tag: &[u8]) -> String {
    tag.iter()
        .map(|&b| {
            if b.is_ascii_graphic() || b == b' ' {
                b as char
            } else {
                '.'
            }
        })
        .collect()
}

/// Walks the RIFF chunk headers up to `data` (see the module docs for why this is not left to
/// symphonia). Reads at most 40 bytes of any chunk body and leaves the reader at an unspecified
/// position.
fn parse_riff<R: Read + Seek>(
    reader: &mut R,
    base: u64,
    name: &str,
    sample_rate_given: bool,
) -> Result<WavHeader, ReadError> {
    let io = |e| io_error(name, e);
    let truncated = |part: String, file_len: u64| ReadError::TruncatedHeader {
        name: name.to_string(),
        part,
        file_len,
    };
    let malformed = |problem: String| ReadError::MalformedHeader {
        name: name.to_string(),
        problem,
    };

    let end = reader.seek(SeekFrom::End(0)).map_err(io)?;
    let file_len = end.saturating_sub(base);

    let mut riff = [0u8; 12];
    let got = read_at(reader, base, 0, &mut riff).map_err(io)?;
    if got < riff.len() {
        return Err(truncated("RIFF header".to_string(), file_len));
    }
    let rf64 = riff.starts_with(b"RF64");
    let form = riff.get(8..12).unwrap_or_default();
    if form != b"WAVE" {
        return Err(ReadError::UnsupportedEncoding {
            name: name.to_string(),
            encoding: format!("RIFF form '{}' (not WAVE)", tag_text(form)),
            fix: "only WAVE files are read; convert it to WAV or FLAC",
        });
    }

    let mut pos: u64 = 12;
    let mut fmt: Option<WavHeader> = None;
    let mut ds64_data_bytes: Option<u64> = None;
    let mut last_chunk: Option<(String, u64, u32)> = None;
    for _ in 0..MAX_CHUNKS_BEFORE_DATA {
        let mut head = [0u8; 8];
        let got = read_at(reader, base, pos, &mut head).map_err(io)?;
        if got < head.len() {
            let part = match &last_chunk {
                Some((tag, at, len)) if pos > file_len => format!(
                    "'{tag}' chunk at byte {at}, which declares {len} bytes, before any data chunk"
                ),
                _ if fmt.is_none() => "chunk list, before any fmt or data chunk".to_string(),
                _ => "chunk list, before any data chunk".to_string(),
            };
            return Err(truncated(part, file_len));
        }
        let tag = head.get(..4).unwrap_or_default();
        let len = u32_at(&head, 4);
        let body = pos + 8;
        match tag {
            b"fmt " => {
                let mut bytes = [0u8; FMT_MAX_BYTES];
                let wanted = (len as usize).min(FMT_MAX_BYTES);
                if wanted < FMT_MIN_BYTES {
                    return Err(malformed(format!(
                        "the fmt chunk is {len} bytes long; a format chunk needs at least {FMT_MIN_BYTES}"
                    )));
                }
                let bytes = bytes.get_mut(..wanted).unwrap_or_default();
                let got = read_at(reader, base, body, bytes).map_err(io)?;
                if got < wanted {
                    return Err(truncated("fmt chunk".to_string(), file_len));
                }
                fmt = Some(parse_fmt(
                    bytes,
                    len,
                    name,
                    sample_rate_given,
                    rf64,
                    file_len,
                )?);
            }
            b"ds64" if rf64 => {
                if (len as usize) < DS64_BYTES {
                    return Err(malformed(format!(
                        "the RF64 ds64 chunk is {len} bytes long; it needs at least {DS64_BYTES}"
                    )));
                }
                let mut bytes = [0u8; DS64_BYTES];
                let got = read_at(reader, base, body, &mut bytes).map_err(io)?;
                if got < DS64_BYTES {
                    return Err(truncated("ds64 chunk".to_string(), file_len));
                }
                ds64_data_bytes = Some(u64_at(&bytes, 8));
            }
            b"data" => {
                let Some(mut header) = fmt else {
                    return Err(malformed(format!(
                        "the data chunk at byte {pos} comes before any fmt chunk, so the sample \
                         format is unknown"
                    )));
                };
                header.data_start = body;
                header.data_bytes = if len != u32::MAX {
                    Some(u64::from(len))
                } else if rf64 {
                    Some(ds64_data_bytes.ok_or_else(|| {
                        malformed(
                            "the RF64 file has no ds64 chunk before its data chunk, so the data \
                             size is unknown"
                                .to_string(),
                        )
                    })?)
                } else {
                    None
                };
                return Ok(header);
            }
            _ => {}
        }
        last_chunk = Some((tag_text(tag), pos, len));
        // Chunks are padded to an even length (RIFF, Microsoft Multimedia Programming
        // Interface and Data Specifications 1.0, 1991).
        pos = body + u64::from(len) + u64::from(len & 1);
    }
    Err(malformed(format!(
        "no data chunk among the first {MAX_CHUNKS_BEFORE_DATA} chunks"
    )))
}

/// Names a WAV format tag for messages.
fn format_tag_name(tag: u16) -> String {
    let known = match tag {
        0x0000 => "unknown",
        0x0002 => "Microsoft ADPCM",
        0x0006 => "A-law",
        0x0007 => "mu-law",
        0x0011 => "IMA ADPCM",
        0x0031 => "GSM 6.10",
        0x0050 => "MPEG",
        0x0055 => "MPEG Layer 3",
        0x0161..=0x0163 => "Windows Media Audio",
        _ => "",
    };
    if known.is_empty() {
        format!("WAV format tag 0x{tag:04X}")
    } else {
        format!("WAV format tag 0x{tag:04X} ({known})")
    }
}

const CONVERT_FIX: &str =
    "convert it to PCM (8/16/24/32-bit integer) or IEEE float (32/64-bit) WAV, or to FLAC";

fn parse_fmt(
    bytes: &[u8],
    len: u32,
    name: &str,
    sample_rate_given: bool,
    rf64: bool,
    file_len: u64,
) -> Result<WavHeader, ReadError> {
    let unsupported = |encoding: String| ReadError::UnsupportedEncoding {
        name: name.to_string(),
        encoding,
        fix: CONVERT_FIX,
    };
    let tag = u16_at(bytes, 0);
    let channels = u16_at(bytes, 2);
    let sample_rate = u32_at(bytes, 4);
    let block_align = u16_at(bytes, 12);
    let container_bits = u16_at(bytes, 14);
    let mut warnings = Vec::new();

    let extensible = tag == WAVE_FORMAT_EXTENSIBLE;
    let (effective_tag, valid_bits) = if extensible {
        if bytes.len() < FMT_MAX_BYTES {
            return Err(ReadError::MalformedHeader {
                name: name.to_string(),
                problem: format!(
                    "the fmt chunk is {len} bytes long, but WAVE_FORMAT_EXTENSIBLE needs {FMT_MAX_BYTES}"
                ),
            });
        }
        let guid = bytes.get(24..40).unwrap_or_default();
        if guid.get(2..) != Some(&KSDATAFORMAT_GUID_TAIL[..]) {
            let hex: Vec<String> = guid.iter().map(|b| format!("{b:02X}")).collect();
            return Err(unsupported(format!(
                "WAVE_FORMAT_EXTENSIBLE sub-format GUID {}",
                hex.join("")
            )));
        }
        let valid = u16_at(bytes, 18);
        (
            u16_at(guid, 0),
            if valid == 0 { container_bits } else { valid },
        )
    } else {
        (tag, container_bits)
    };

    if channels == 0 {
        return Err(ReadError::ZeroChannels {
            name: name.to_string(),
        });
    }
    let encoding = match effective_tag {
        WAVE_FORMAT_PCM => {
            if !matches!(container_bits, 8 | 16 | 24 | 32) {
                return Err(unsupported(format!(
                    "PCM with {container_bits} bits per sample (8, 16, 24 and 32 are read)"
                )));
            }
            WavEncoding::Pcm
        }
        WAVE_FORMAT_IEEE_FLOAT => {
            if !matches!(container_bits, 32 | 64) {
                return Err(unsupported(format!(
                    "IEEE float with {container_bits} bits per sample (32 and 64 are read)"
                )));
            }
            WavEncoding::Float
        }
        other => return Err(unsupported(format_tag_name(other))),
    };
    if valid_bits > container_bits {
        return Err(ReadError::MalformedHeader {
            name: name.to_string(),
            problem: format!(
                "{valid_bits} valid bits per sample do not fit in {container_bits}-bit samples"
            ),
        });
    }
    if sample_rate == 0 && !sample_rate_given {
        return Err(ReadError::ZeroSampleRate {
            name: name.to_string(),
        });
    }
    let frame_bytes = u32::from(channels) * u32::from(container_bits / 8);
    if u32::from(block_align) != frame_bytes {
        warnings.push(format!(
            "the header's block align is {block_align} bytes, but {channels} channel(s) of \
             {container_bits}-bit samples make {frame_bytes}-byte frames; {frame_bytes} was used"
        ));
    }
    Ok(WavHeader {
        rf64,
        extensible,
        encoding,
        channels,
        sample_rate,
        container_bits,
        valid_bits: if encoding == WavEncoding::Float {
            container_bits
        } else {
            valid_bits
        },
        data_start: 0,
        data_bytes: None,
        file_len,
        warnings,
    })
}

/// Largest positive sample of a `bits`-bit signed integer, in full-scale units.
fn integer_clip_level(bits: u32) -> f64 {
    let full_scale = f64::from(bits.saturating_sub(1)).exp2();
    (full_scale - 1.0) / full_scale
}

/// Applies a caller's sample rate over the header's, with a warning.
fn choose_sample_rate(
    name: &str,
    header_hz: f64,
    options: &WavOptions,
    warnings: &mut Vec<String>,
) -> Result<f64, ReadError> {
    match options.sample_rate_hz {
        Some(hz) => {
            let hz = checked_sample_rate(name, hz, "given with --sample-rate")?;
            warnings.push(format!(
                "the sample rate {hz} Hz given with --sample-rate overrides the header's {header_hz} Hz"
            ));
            Ok(hz)
        }
        None => checked_sample_rate(name, header_hz, "from the header"),
    }
}

fn open_wav<R>(
    mut reader: R,
    base: u64,
    name: &str,
    options: &WavOptions,
) -> Result<WavSource, ReadError>
where
    R: Read + Seek + Send + 'static,
{
    let header = parse_riff(&mut reader, base, name, options.sample_rate_hz.is_some())?;
    let channels = usize::from(header.channels);
    if options.channel >= channels {
        return Err(ReadError::ChannelOutOfRange {
            name: name.to_string(),
            channel: options.channel,
            channels,
        });
    }
    let mut warnings = header.warnings.clone();
    let sample_rate_hz =
        choose_sample_rate(name, f64::from(header.sample_rate), options, &mut warnings)?;

    let sample_bytes = usize::from(header.container_bits / 8);
    // channels <= 65535 and sample_bytes <= 8: at most 524280 bytes, never 0.
    let frame_bytes = channels * sample_bytes;
    let block_frames = (WAV_BLOCK_BYTES / frame_bytes).max(1);

    let codec = match (header.encoding, header.container_bits) {
        (WavEncoding::Pcm, 8) => CODEC_ID_PCM_U8,
        (WavEncoding::Pcm, 16) => CODEC_ID_PCM_S16LE,
        (WavEncoding::Pcm, 24) => CODEC_ID_PCM_S24LE,
        (WavEncoding::Pcm, _) => CODEC_ID_PCM_S32LE,
        (WavEncoding::Float, 32) => CODEC_ID_PCM_F32LE,
        (WavEncoding::Float, _) => CODEC_ID_PCM_F64LE,
    };
    let mut params = AudioCodecParameters::new();
    params
        .for_codec(codec)
        .with_sample_rate(header.sample_rate)
        .with_channels(Channels::Discrete(header.channels))
        .with_max_frames_per_packet(block_frames as u64);
    if header.encoding == WavEncoding::Pcm {
        // Coded and decoded widths equal: symphonia applies no shift, so samples stay at the
        // container's scale (valid bits are left-justified in the container).
        params
            .with_bits_per_sample(u32::from(header.container_bits))
            .with_bits_per_coded_sample(u32::from(header.container_bits));
    }
    let decoder = PcmDecoder::try_new(&params, &AudioDecoderOptions::default()).map_err(|e| {
        ReadError::Decode {
            name: name.to_string(),
            format: "WAV",
            frame: 0,
            detail: e.to_string(),
        }
    })?;

    let present_bytes = header.file_len.saturating_sub(header.data_start);
    if header.data_bytes.is_none() {
        warnings.push(
            "the data chunk size is unset (0xFFFFFFFF, as left by a streaming writer); samples \
             are read to the end of the file"
                .to_string(),
        );
    }
    if header.data_bytes == Some(0) && present_bytes > 0 {
        warnings.push(format!(
            "the data chunk declares 0 bytes but {present_bytes} bytes follow it; if the \
             recording was interrupted, read those bytes with --raw FORMAT --sample-rate HZ"
        ));
    }
    let declared_frames = header.data_bytes.map(|bytes| bytes / frame_bytes as u64);
    if let Some(bytes) = header.data_bytes {
        let odd = bytes % frame_bytes as u64;
        if odd != 0 {
            warnings.push(format!(
                "the data chunk declares {bytes} bytes, not a whole number of {frame_bytes}-byte \
                 frames; the last {odd} byte(s) are ignored"
            ));
        }
    }

    reader
        .seek(SeekFrom::Start(base.saturating_add(header.data_start)))
        .map_err(|e| io_error(name, e))?;

    let signedness = if header.container_bits == 8 {
        "unsigned"
    } else {
        "signed"
    };
    let kind = if header.rf64 { "RF64 WAV" } else { "WAV" };
    let kind = if header.extensible {
        format!("{kind} (extensible)")
    } else {
        kind.to_string()
    };
    let format = match header.encoding {
        WavEncoding::Float => format!("{kind}, IEEE float {}-bit", header.container_bits),
        WavEncoding::Pcm if header.valid_bits < header.container_bits => format!(
            "{kind}, PCM {}-bit {signedness} integer in {}-bit containers",
            header.valid_bits, header.container_bits
        ),
        WavEncoding::Pcm => format!(
            "{kind}, PCM {}-bit {signedness} integer",
            header.container_bits
        ),
    };
    let clip_level_fs = match header.encoding {
        WavEncoding::Float => 1.0,
        WavEncoding::Pcm => integer_clip_level(u32::from(header.valid_bits)),
    };

    Ok(WavSource {
        info: SourceInfo {
            name: name.to_string(),
            format,
            channels,
            channel: options.channel,
            channel_name: None,
            channel_names: Vec::new(),
            sample_rate_hz,
            bits_per_sample: Some(u32::from(header.valid_bits)),
            full_scale: true,
            clip_level_fs: Some(clip_level_fs),
            declared_frames,
        },
        warnings,
        body: Body::Pcm(Box::new(PcmBody {
            reader: Box::new(reader),
            decoder,
            frame_bytes,
            buffer: vec![0; block_frames * frame_bytes],
            frames_left: declared_frames.unwrap_or(u64::MAX),
            frames_read: 0,
            declared_frames,
            depth_bits: u32::from(header.container_bits),
            channel: options.channel,
            finished: false,
        })),
    })
}

/// Streams the data chunk of a WAV through symphonia's PCM decoder.
struct PcmBody {
    reader: Box<dyn Read + Send>,
    decoder: PcmDecoder,
    frame_bytes: usize,
    /// Reused buffer of whole frames.
    buffer: Vec<u8>,
    frames_left: u64,
    frames_read: u64,
    declared_frames: Option<u64>,
    depth_bits: u32,
    channel: usize,
    finished: bool,
}

impl PcmBody {
    fn read(
        &mut self,
        out: &mut [f64],
        name: &str,
        warnings: &mut Vec<String>,
    ) -> Result<usize, ReadError> {
        if self.finished || out.is_empty() {
            return Ok(0);
        }
        let buffer_frames = self.buffer.len() / self.frame_bytes;
        let frames = u64::try_from(out.len().min(buffer_frames))
            .unwrap_or(u64::MAX)
            .min(self.frames_left);
        if frames == 0 {
            self.finish(0, warnings);
            return Ok(0);
        }
        // frames <= buffer_frames, so this fits in usize and in the buffer.
        let wanted = frames as usize * self.frame_bytes;
        let bytes = self.buffer.get_mut(..wanted).unwrap_or_default();
        let got = read_full(&mut self.reader, bytes).map_err(|e| io_error(name, e))?;
        let whole = got / self.frame_bytes;
        let mut written = 0;
        if whole > 0 {
            let data = self
                .buffer
                .get(..whole * self.frame_bytes)
                .unwrap_or_default();
            let packet = PacketRef::new(
                0,
                Timestamp::new(i64::try_from(self.frames_read).unwrap_or(i64::MAX)),
                Duration::from(whole as u64),
                data,
            );
            let decoded = self
                .decoder
                .decode_ref(&packet)
                .map_err(|e| ReadError::Decode {
                    name: name.to_string(),
                    format: "WAV",
                    frame: self.frames_read,
                    detail: e.to_string(),
                })?;
            written =
                copy_channel(&decoded, self.channel, self.depth_bits, out).ok_or_else(|| {
                    ReadError::Decode {
                        name: name.to_string(),
                        format: "WAV",
                        frame: self.frames_read,
                        detail: format!("the decoder returned no channel {}", self.channel),
                    }
                })?;
            self.frames_read += written as u64;
            self.frames_left = self.frames_left.saturating_sub(written as u64);
        }
        if got < wanted {
            self.finish(got % self.frame_bytes, warnings);
        }
        Ok(written)
    }

    /// Marks the end of the data and records what fell short of the header.
    fn finish(&mut self, partial_bytes: usize, warnings: &mut Vec<String>) {
        if self.finished {
            return;
        }
        self.finished = true;
        if let Some(declared) = self.declared_frames {
            if self.frames_read < declared {
                warnings.push(format!(
                    "the data chunk declares {declared} frames but the file ends after {} frames; \
                     {} frames were read (the recording may have been cut short)",
                    self.frames_read, self.frames_read
                ));
            }
        }
        if partial_bytes > 0 {
            warnings.push(format!(
                "the file ends inside a frame: {partial_bytes} byte(s) of a {}-byte frame were ignored",
                self.frame_bytes
            ));
        }
    }
}

/// Copies channel `channel` of a decoded buffer into `out` in full-scale units; returns the
/// samples written, or `None` if the buffer has no such channel.
///
/// `depth_bits` is the bit depth of the stored integer samples; samples in a wider type are
/// taken to be shifted left to its top bits and are shifted back (see the module docs).
fn copy_channel(
    buffer: &GenericAudioBufferRef<'_>,
    channel: usize,
    depth_bits: u32,
    out: &mut [f64],
) -> Option<usize> {
    /// Shift and factor turning a signed integer of `width` bits holding a `depth`-bit sample
    /// into full-scale units.
    fn signed(width: u32, depth: u32) -> (u32, f64) {
        let depth = depth.clamp(1, width);
        (width - depth, (-f64::from(depth - 1)).exp2())
    }
    fn fill<S: Copy>(plane: &[S], out: &mut [f64], convert: impl Fn(S) -> f64) -> usize {
        let mut written = 0;
        for (slot, &sample) in out.iter_mut().zip(plane) {
            *slot = convert(sample);
            written += 1;
        }
        written
    }
    Some(match buffer {
        GenericAudioBufferRef::U8(b) => {
            fill(b.plane(channel)?, out, |v| (f64::from(v) - 128.0) / 128.0)
        }
        GenericAudioBufferRef::S8(b) => {
            let (shift, factor) = signed(8, depth_bits);
            fill(b.plane(channel)?, out, |v| f64::from(v >> shift) * factor)
        }
        GenericAudioBufferRef::S16(b) => {
            let (shift, factor) = signed(16, depth_bits);
            fill(b.plane(channel)?, out, |v| f64::from(v >> shift) * factor)
        }
        GenericAudioBufferRef::S24(b) => {
            let (shift, factor) = signed(24, depth_bits);
            fill(b.plane(channel)?, out, |v| {
                f64::from(v.inner() >> shift) * factor
            })
        }
        GenericAudioBufferRef::S32(b) => {
            let (shift, factor) = signed(32, depth_bits);
            fill(b.plane(channel)?, out, |v| f64::from(v >> shift) * factor)
        }
        GenericAudioBufferRef::U16(b) => fill(b.plane(channel)?, out, |v| {
            (f64::from(v) - 32_768.0) / 32_768.0
        }),
        GenericAudioBufferRef::U24(b) => fill(b.plane(channel)?, out, |v| {
            (f64::from(v.inner()) - 8_388_608.0) / 8_388_608.0
        }),
        GenericAudioBufferRef::U32(b) => fill(b.plane(channel)?, out, |v| {
            (f64::from(v) - 2_147_483_648.0) / 2_147_483_648.0
        }),
        GenericAudioBufferRef::F32(b) => fill(b.plane(channel)?, out, f64::from),
        GenericAudioBufferRef::F64(b) => fill(b.plane(channel)?, out, |v| v),
    })
}

/// Gives symphonia a [`MediaSource`] over any `Read + Seek`.
struct MediaAdapter<R> {
    inner: R,
}

impl<R: Read> Read for MediaAdapter<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        self.inner.read(buf)
    }
}

impl<R: Seek> Seek for MediaAdapter<R> {
    fn seek(&mut self, pos: SeekFrom) -> std::io::Result<u64> {
        self.inner.seek(pos)
    }
}

impl<R: Read + Seek + Send + Sync> MediaSource for MediaAdapter<R> {
    fn is_seekable(&self) -> bool {
        true
    }

    fn byte_len(&self) -> Option<u64> {
        None
    }
}

/// Turns an error of symphonia's FLAC demuxer at open time into a [`ReadError`].
fn flac_open_error(name: &str, error: SymphoniaError, file_len: u64) -> ReadError {
    match error {
        SymphoniaError::IoError(e) if e.kind() == std::io::ErrorKind::UnexpectedEof => {
            ReadError::TruncatedHeader {
                name: name.to_string(),
                part: "FLAC metadata".to_string(),
                file_len,
            }
        }
        SymphoniaError::IoError(e) => io_error(name, e),
        SymphoniaError::Unsupported(what) => ReadError::UnsupportedEncoding {
            name: name.to_string(),
            encoding: format!("FLAC feature ({what})"),
            fix: "re-encode it with a standard FLAC encoder, or convert it to WAV",
        },
        other => ReadError::MalformedHeader {
            name: name.to_string(),
            problem: format!("the FLAC header could not be read ({other})"),
        },
    }
}

fn open_flac<R>(mut reader: R, name: &str, options: &WavOptions) -> Result<WavSource, ReadError>
where
    R: Read + Seek + Send + Sync + 'static,
{
    let start = reader.stream_position().map_err(|e| io_error(name, e))?;
    let end = reader
        .seek(SeekFrom::End(0))
        .map_err(|e| io_error(name, e))?;
    reader
        .seek(SeekFrom::Start(start))
        .map_err(|e| io_error(name, e))?;
    let file_len = end.saturating_sub(start);
    let stream =
        MediaSourceStream::new(Box::new(MediaAdapter { inner: reader }), Default::default());
    let demuxer = FlacReader::try_new(stream, FormatOptions::default())
        .map_err(|e| flac_open_error(name, e, file_len))?;
    let no_info = || ReadError::MalformedHeader {
        name: name.to_string(),
        problem: "the FLAC stream has no usable stream info".to_string(),
    };
    let track = demuxer.tracks().first().ok_or_else(no_info)?;
    let params = track
        .codec_params
        .as_ref()
        .and_then(|p| p.audio())
        .ok_or_else(no_info)?
        .clone();
    let declared_frames = track.num_frames;
    let channels = params.channels.as_ref().map(|c| c.count()).unwrap_or(0);
    if channels == 0 {
        return Err(ReadError::ZeroChannels {
            name: name.to_string(),
        });
    }
    let header_rate = params.sample_rate.unwrap_or(0);
    if header_rate == 0 && options.sample_rate_hz.is_none() {
        return Err(ReadError::ZeroSampleRate {
            name: name.to_string(),
        });
    }
    let bits = params.bits_per_sample.ok_or_else(no_info)?;
    if options.channel >= channels {
        return Err(ReadError::ChannelOutOfRange {
            name: name.to_string(),
            channel: options.channel,
            channels,
        });
    }
    let mut warnings = Vec::new();
    let sample_rate_hz = choose_sample_rate(name, f64::from(header_rate), options, &mut warnings)?;
    let decoder = FlacDecoder::try_new(&params, &AudioDecoderOptions::default().verify(true))
        .map_err(|e| flac_open_error(name, e, file_len))?;

    Ok(WavSource {
        info: SourceInfo {
            name: name.to_string(),
            format: format!("FLAC, {bits}-bit signed integer"),
            channels,
            channel: options.channel,
            channel_name: None,
            channel_names: Vec::new(),
            sample_rate_hz,
            bits_per_sample: Some(bits),
            full_scale: true,
            clip_level_fs: Some(integer_clip_level(bits)),
            declared_frames,
        },
        warnings,
        body: Body::Flac(Box::new(FlacBody {
            demuxer,
            decoder,
            pending: Vec::new(),
            pending_pos: 0,
            channel: options.channel,
            depth_bits: bits,
            frames_read: 0,
            declared_frames,
            finished: false,
        })),
    })
}

/// Streams FLAC frames through symphonia's demuxer and decoder.
struct FlacBody {
    demuxer: FlacReader<'static>,
    decoder: FlacDecoder,
    /// Decoded samples of the chosen channel not yet handed out; at most one FLAC block
    /// (65535 frames), reused.
    pending: Vec<f64>,
    pending_pos: usize,
    channel: usize,
    depth_bits: u32,
    frames_read: u64,
    declared_frames: Option<u64>,
    finished: bool,
}

impl FlacBody {
    fn read(
        &mut self,
        out: &mut [f64],
        name: &str,
        warnings: &mut Vec<String>,
    ) -> Result<usize, ReadError> {
        loop {
            let pending = self.pending.get(self.pending_pos..).unwrap_or_default();
            if !pending.is_empty() {
                let n = pending.len().min(out.len());
                if let (Some(dst), Some(src)) = (out.get_mut(..n), pending.get(..n)) {
                    dst.copy_from_slice(src);
                }
                self.pending_pos += n;
                return Ok(n);
            }
            if self.finished || out.is_empty() {
                return Ok(0);
            }
            let decode_error = |frame: u64, detail: String| ReadError::Decode {
                name: name.to_string(),
                format: "FLAC",
                frame,
                detail,
            };
            match self.demuxer.next_packet() {
                Ok(Some(packet)) => {
                    let decoded = self
                        .decoder
                        .decode(&packet)
                        .map_err(|e| decode_error(self.frames_read, e.to_string()))?;
                    self.pending.clear();
                    self.pending.resize(decoded.frames(), 0.0);
                    let n =
                        copy_channel(&decoded, self.channel, self.depth_bits, &mut self.pending)
                            .ok_or_else(|| {
                                decode_error(
                                    self.frames_read,
                                    format!("no channel {} in the frame", self.channel),
                                )
                            })?;
                    self.pending.truncate(n);
                    self.pending_pos = 0;
                    self.frames_read += n as u64;
                }
                Ok(None) => self.finish(false, warnings),
                Err(SymphoniaError::IoError(e))
                    if e.kind() == std::io::ErrorKind::UnexpectedEof =>
                {
                    self.finish(true, warnings)
                }
                Err(SymphoniaError::IoError(e)) => return Err(io_error(name, e)),
                Err(e) => return Err(decode_error(self.frames_read, e.to_string())),
            }
        }
    }

    fn finish(&mut self, cut_short: bool, warnings: &mut Vec<String>) {
        self.finished = true;
        let read = self.frames_read;
        match self.declared_frames {
            Some(declared) if read != declared => warnings.push(format!(
                "the FLAC stream info declares {declared} frames but {read} frames were read{}",
                if cut_short {
                    " (the file ends inside a frame: cut short?)"
                } else {
                    ""
                }
            )),
            None if cut_short => warnings.push(format!(
                "the file ends inside a FLAC frame; {read} frames were read (cut short?)"
            )),
            _ => {}
        }
        // A stream read short fails the checksum anyway; the warning above says why.
        let complete = !cut_short && self.declared_frames.is_none_or(|declared| read == declared);
        if complete && self.decoder.finalize().verify_ok == Some(false) {
            warnings.push(
                "the MD5 checksum of the decoded samples does not match the FLAC header: \
                 the audio data is damaged"
                    .to_string(),
            );
        }
    }
}

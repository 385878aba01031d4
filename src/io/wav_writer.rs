//! WAV writer: f64 samples in full-scale units → a RIFF/WAVE file in any [`std::io::Write`].
//!
//! # Format
//! - `RIFF` size `WAVE`, then `fmt `, then (float only) `fact`, then `data` (padded to an even
//!   length, as RIFF chunks are).
//! - 24-bit PCM: `wFormatTag` 1 (WAVE_FORMAT_PCM), a 16-byte `fmt `, samples as 3-byte
//!   little-endian two's complement. Each sample is round(x·2^23), rounding ties to even, then
//!   clipped to [−2^23, 2^23 − 1]; clipped samples are counted ([`WavWritten::clipped_samples`]).
//! - 32-bit float: `wFormatTag` 3 (WAVE_FORMAT_IEEE_FLOAT), an 18-byte `fmt ` with `cbSize` = 0
//!   and a `fact` chunk holding the frame count, as non-PCM formats require; samples are x
//!   rounded to the nearest f32.
//! - The plain `fmt ` layout is written for every channel count (no WAVE_FORMAT_EXTENSIBLE and
//!   so no speaker mask): Python's `wave` module (before 3.12) reads only that layout, and every
//!   reader of WAVE_FORMAT_EXTENSIBLE also reads it.
//!
//! Every sample is checked before the first byte is written, so bad samples never leave a half
//! file behind; an I/O error can. The frame count is known in advance, so the header is written
//! once and no `Seek` is needed (which is why `hound` 3.5, whose writer needs `Seek` and writes
//! no `fact` chunk, is not used).
//!
//! # References
//! - Microsoft, "Multimedia Programming Interface and Data Specifications 1.0", 1991 (RIFF,
//!   WAVE `fmt `/`fact`/`data`, word alignment of chunks).
//! - Microsoft, mmreg.h (`WAVE_FORMAT_PCM` = 1, `WAVE_FORMAT_IEEE_FLOAT` = 3) and the
//!   WAVEFORMATEX documentation (`cbSize` for non-PCM formats).

use std::fmt;
use std::io::Write;
use std::str::FromStr;

use serde::{Deserialize, Serialize};

use crate::error::SettingsError;

/// `wFormatTag` of integer PCM (mmreg.h).
const WAVE_FORMAT_PCM: u16 = 0x0001;
/// `wFormatTag` of IEEE float (mmreg.h).
const WAVE_FORMAT_IEEE_FLOAT: u16 = 0x0003;
/// 2^23: the magnitude of 24-bit full scale.
const PCM24_FULL_SCALE: f64 = 8_388_608.0;
/// Largest 24-bit code, 2^23 − 1.
const PCM24_MAX: f64 = 8_388_607.0;
/// Bytes of sample data converted at a time (a multiple of 3 and 4).
const CHUNK_BYTES: usize = 48 * 1024;

/// How samples are stored.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum WavEncoding {
    /// 32-bit IEEE float: full resolution, no clipping, values beyond ±1 kept.
    #[default]
    Float32,
    /// 24-bit integer PCM: rounded to 2^−23 of full scale, clipped to full scale.
    Pcm24,
}

impl WavEncoding {
    /// Bytes per sample.
    pub fn bytes_per_sample(self) -> u16 {
        match self {
            Self::Float32 => 4,
            Self::Pcm24 => 3,
        }
    }
}

impl fmt::Display for WavEncoding {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            Self::Float32 => "float32",
            Self::Pcm24 => "pcm24",
        })
    }
}

impl FromStr for WavEncoding {
    type Err = SettingsError;

    /// `float32` (or `f32`) and `pcm24` (or `s24`), case and surrounding spaces ignored.
    fn from_str(text: &str) -> Result<Self, Self::Err> {
        match text.trim().to_ascii_lowercase().as_str() {
            "float32" | "f32" => Ok(Self::Float32),
            "pcm24" | "s24" => Ok(Self::Pcm24),
            _ => Err(SettingsError::UnknownChoice {
                what: "WAV encoding",
                text: text.to_string(),
                choices: "float32 pcm24",
            }),
        }
    }
}

/// What to write.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct WavSpec {
    /// Frames per second (WAV stores a whole number), at least 1.
    pub sample_rate_hz: u32,
    /// Interleaved channels, at least 1.
    pub channels: u16,
    /// Sample encoding.
    pub encoding: WavEncoding,
}

/// What was written.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct WavWritten {
    /// Frames (samples per channel).
    pub frames: u64,
    /// Bytes of the whole file.
    pub file_bytes: u64,
    /// Samples clipped to 24-bit full scale (always 0 for float).
    pub clipped_samples: u64,
}

/// Why a WAV file could not be written.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum WavWriteError {
    /// The writer failed.
    #[error("writing the WAV file failed: {source}")]
    Io {
        /// The I/O error.
        #[source]
        source: std::io::Error,
    },
    /// A WAV file needs at least one channel.
    #[error("a WAV file needs at least 1 channel, got 0")]
    ZeroChannels,
    /// A WAV file needs a sample rate above 0 Hz.
    #[error("a WAV file needs a sample rate of at least 1 Hz, got 0")]
    ZeroSampleRate,
    /// The interleaved samples do not fill whole frames.
    #[error("{samples} interleaved samples do not make whole frames of {channels} channels; give a multiple of {channels}")]
    PartialFrame {
        /// Samples given.
        samples: u64,
        /// Channels per frame.
        channels: u16,
    },
    /// A sample is NaN or infinite.
    #[error("sample {index} is {value}: only finite values can be written; nothing was written")]
    NonFiniteSample {
        /// 0-based index among the interleaved samples.
        index: u64,
        /// The value.
        value: f64,
    },
    /// A sample is beyond the range of a 32-bit float.
    #[error("sample {index} is {value}, beyond the range of a 32-bit float (±3.4e38); use 24-bit PCM (which clips) or scale the samples; nothing was written")]
    NotRepresentable {
        /// 0-based index among the interleaved samples.
        index: u64,
        /// The value.
        value: f64,
    },
    /// The frame size or the byte rate does not fit the header's fields.
    #[error("{channels} channels at {sample_rate_hz} Hz do not fit a WAV header (at most 65535 bytes per frame and 4294967295 bytes per second)")]
    LayoutTooLarge {
        /// The rate asked for.
        sample_rate_hz: u32,
        /// The channels asked for.
        channels: u16,
    },
    /// The file would exceed the 4 GiB a RIFF size field can describe.
    #[error("{data_bytes} bytes of samples do not fit in a WAV file (at most {max_data_bytes}); save a shorter stretch")]
    TooLarge {
        /// Bytes of sample data asked for.
        data_bytes: u64,
        /// Most sample data bytes that fit.
        max_data_bytes: u64,
    },
}

/// Writes `interleaved` samples (full scale: ±1.0) as a WAV file into `out`.
///
/// # Method
/// See the [module](self) docs: 24-bit PCM stores round_ties_even(x·2^23) clipped to
/// [−2^23, 2^23 − 1]; float stores x as the nearest f32.
///
/// # Units
/// Samples in full-scale units; the rate in frames per second.
///
/// # Errors
/// [`WavWriteError::ZeroChannels`], [`WavWriteError::ZeroSampleRate`],
/// [`WavWriteError::PartialFrame`], [`WavWriteError::NonFiniteSample`],
/// [`WavWriteError::NotRepresentable`] (float), [`WavWriteError::LayoutTooLarge`],
/// [`WavWriteError::TooLarge`] before anything is written; [`WavWriteError::Io`] from `out`.
///
/// # References
/// Microsoft RIFF/WAVE specification 1991; mmreg.h.
///
/// ```
/// use noisesonde::io::wav_writer::{write_wav, WavEncoding, WavSpec};
/// let spec = WavSpec { sample_rate_hz: 48_000, channels: 1, encoding: WavEncoding::Pcm24 };
/// let mut file = Vec::new();
/// let written = write_wav(&mut file, &spec, &[0.5, -1.0, 1.0])?;
/// // 0.5 → 0x400000; −1.0 → −2^23 = 0x800000; 1.0 clips to 2^23 − 1 = 0x7FFFFF.
/// assert_eq!(&file[44..53], &[0x00, 0x00, 0x40, 0x00, 0x00, 0x80, 0xFF, 0xFF, 0x7F]);
/// assert_eq!(written.clipped_samples, 1);
/// assert_eq!(file.len(), 44 + 9 + 1); // odd data length: one pad byte
/// # Ok::<(), noisesonde::io::wav_writer::WavWriteError>(())
/// ```
pub fn write_wav<W: Write>(
    out: W,
    spec: &WavSpec,
    interleaved: &[f64],
) -> Result<WavWritten, WavWriteError> {
    write_wav_parts(out, spec, &[interleaved])
}

/// [`write_wav`] for samples held in several consecutive pieces (e.g. the two halves of a ring
/// buffer): the file holds `parts` one after the other. Frames may straddle the pieces.
///
/// # Errors
/// As [`write_wav`]; indices in errors count across the pieces.
pub fn write_wav_parts<W: Write>(
    mut out: W,
    spec: &WavSpec,
    parts: &[&[f64]],
) -> Result<WavWritten, WavWriteError> {
    if spec.channels == 0 {
        return Err(WavWriteError::ZeroChannels);
    }
    if spec.sample_rate_hz == 0 {
        return Err(WavWriteError::ZeroSampleRate);
    }
    let samples: u64 = parts.iter().map(|p| p.len() as u64).sum();
    let channels = u64::from(spec.channels);
    if !samples.is_multiple_of(channels) {
        return Err(WavWriteError::PartialFrame {
            samples,
            channels: spec.channels,
        });
    }
    let frames = samples / channels;

    let bytes_per_sample = u64::from(spec.encoding.bytes_per_sample());
    let block_align = channels * bytes_per_sample;
    let byte_rate = u64::from(spec.sample_rate_hz) * block_align;
    let data_bytes = samples * bytes_per_sample;
    let pad = data_bytes % 2;
    let (fmt_len, fact_len): (u64, u64) = match spec.encoding {
        WavEncoding::Pcm24 => (16, 0),
        WavEncoding::Float32 => (18, 12),
    };
    // "WAVE" + fmt chunk + fact chunk + data chunk header, before the data.
    let overhead = 4 + (8 + fmt_len) + fact_len + 8;
    let max_data_bytes = u64::from(u32::MAX) - overhead - 1;
    let riff_len = overhead + data_bytes + pad;
    let (Ok(byte_rate32), Ok(block_align16)) =
        (u32::try_from(byte_rate), u16::try_from(block_align))
    else {
        return Err(WavWriteError::LayoutTooLarge {
            sample_rate_hz: spec.sample_rate_hz,
            channels: spec.channels,
        });
    };
    let (Ok(riff_len32), Ok(data_len32), Ok(frames32)) = (
        u32::try_from(riff_len),
        u32::try_from(data_bytes),
        u32::try_from(frames),
    ) else {
        return Err(WavWriteError::TooLarge {
            data_bytes,
            max_data_bytes,
        });
    };

    check_samples(spec.encoding, parts)?;

    let mut header = Vec::with_capacity(64);
    header.extend_from_slice(b"RIFF");
    header.extend_from_slice(&riff_len32.to_le_bytes());
    header.extend_from_slice(b"WAVEfmt ");
    header.extend_from_slice(&(fmt_len as u32).to_le_bytes());
    let (tag, bits) = match spec.encoding {
        WavEncoding::Pcm24 => (WAVE_FORMAT_PCM, 24u16),
        WavEncoding::Float32 => (WAVE_FORMAT_IEEE_FLOAT, 32u16),
    };
    header.extend_from_slice(&tag.to_le_bytes());
    header.extend_from_slice(&spec.channels.to_le_bytes());
    header.extend_from_slice(&spec.sample_rate_hz.to_le_bytes());
    header.extend_from_slice(&byte_rate32.to_le_bytes());
    header.extend_from_slice(&block_align16.to_le_bytes());
    header.extend_from_slice(&bits.to_le_bytes());
    if spec.encoding == WavEncoding::Float32 {
        header.extend_from_slice(&0u16.to_le_bytes()); // cbSize
        header.extend_from_slice(b"fact");
        header.extend_from_slice(&4u32.to_le_bytes());
        header.extend_from_slice(&frames32.to_le_bytes());
    }
    header.extend_from_slice(b"data");
    header.extend_from_slice(&data_len32.to_le_bytes());
    let io = |source| WavWriteError::Io { source };
    out.write_all(&header).map_err(io)?;

    let mut clipped_samples = 0u64;
    let mut buffer = vec![0u8; CHUNK_BYTES];
    let per_chunk = CHUNK_BYTES / bytes_per_sample as usize;
    for part in parts {
        for chunk in part.chunks(per_chunk) {
            let used = match spec.encoding {
                WavEncoding::Float32 => {
                    for (bytes, &x) in buffer.chunks_exact_mut(4).zip(chunk) {
                        bytes.copy_from_slice(&(x as f32).to_le_bytes());
                    }
                    chunk.len() * 4
                }
                WavEncoding::Pcm24 => {
                    for (bytes, &x) in buffer.chunks_exact_mut(3).zip(chunk) {
                        let (code, clipped) = pcm24_code(x);
                        clipped_samples += u64::from(clipped);
                        bytes.copy_from_slice(&code.to_le_bytes()[..3]);
                    }
                    chunk.len() * 3
                }
            };
            out.write_all(&buffer[..used]).map_err(io)?;
        }
    }
    if pad == 1 {
        out.write_all(&[0]).map_err(io)?;
    }
    out.flush().map_err(io)?;
    Ok(WavWritten {
        frames,
        file_bytes: 8 + riff_len,
        clipped_samples,
    })
}

/// The 24-bit code of a full-scale sample and whether it was clipped.
fn pcm24_code(x: f64) -> (i32, bool) {
    let scaled = (x * PCM24_FULL_SCALE).round_ties_even();
    let code = scaled.clamp(-PCM24_FULL_SCALE, PCM24_MAX);
    (code as i32, code != scaled)
}

/// Checks every sample before anything is written.
fn check_samples(encoding: WavEncoding, parts: &[&[f64]]) -> Result<(), WavWriteError> {
    let mut index = 0u64;
    for part in parts {
        for &value in *part {
            if !value.is_finite() {
                return Err(WavWriteError::NonFiniteSample { index, value });
            }
            if encoding == WavEncoding::Float32 && !(value as f32).is_finite() {
                return Err(WavWriteError::NotRepresentable { index, value });
            }
            index += 1;
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn pcm24_rounds_ties_to_even_and_clips() {
        let lsb = 1.0 / PCM24_FULL_SCALE;
        assert_eq!(pcm24_code(0.5 * lsb), (0, false));
        assert_eq!(pcm24_code(1.5 * lsb), (2, false));
        assert_eq!(pcm24_code(-2.5 * lsb), (-2, false));
        assert_eq!(pcm24_code(-1.0), (-8_388_608, false));
        assert_eq!(pcm24_code(1.0), (8_388_607, true));
        assert_eq!(pcm24_code(1.0 - 0.4 * lsb), (8_388_607, true));
        assert_eq!(pcm24_code(1.0 - 0.6 * lsb), (8_388_607, false));
        assert_eq!(pcm24_code(-1.0 - 0.6 * lsb), (-8_388_608, true));
        assert_eq!(pcm24_code(1e300), (8_388_607, true));
    }

    #[test]
    fn bad_samples_write_nothing() {
        let spec = WavSpec {
            sample_rate_hz: 8000,
            channels: 2,
            encoding: WavEncoding::Float32,
        };
        let mut out = Vec::new();
        let e = write_wav_parts(&mut out, &spec, &[&[0.0, 1.0, 2.0], &[f64::NAN]]).unwrap_err();
        assert!(matches!(e, WavWriteError::NonFiniteSample { index: 3, .. }));
        let e = write_wav(&mut out, &spec, &[0.0, 1e39]).unwrap_err();
        assert!(matches!(
            e,
            WavWriteError::NotRepresentable { index: 1, .. }
        ));
        let e = write_wav(&mut out, &spec, &[0.0, 1.0, 2.0]).unwrap_err();
        assert!(matches!(
            e,
            WavWriteError::PartialFrame {
                samples: 3,
                channels: 2
            }
        ));
        let zero = WavSpec {
            channels: 0,
            ..spec
        };
        assert!(matches!(
            write_wav(&mut out, &zero, &[]),
            Err(WavWriteError::ZeroChannels)
        ));
        let zero = WavSpec {
            sample_rate_hz: 0,
            ..spec
        };
        assert!(matches!(
            write_wav(&mut out, &zero, &[]),
            Err(WavWriteError::ZeroSampleRate)
        ));
        assert!(out.is_empty());
    }

    #[test]
    fn header_field_overflows_are_errors() {
        let spec = WavSpec {
            sample_rate_hz: u32::MAX,
            channels: u16::MAX,
            encoding: WavEncoding::Float32,
        };
        let mut out = Vec::new();
        assert!(matches!(
            write_wav(&mut out, &spec, &[]),
            Err(WavWriteError::LayoutTooLarge { .. })
        ));
        // 2^30 float samples (4 GiB of data) do not fit; 1024 views of one 8 MiB buffer stand
        // for them, and the size is refused before any sample is looked at.
        let block = vec![0.0; 1 << 20];
        let parts: Vec<&[f64]> = (0..1024).map(|_| block.as_slice()).collect();
        let mono = WavSpec {
            sample_rate_hz: 48_000,
            channels: 1,
            encoding: WavEncoding::Float32,
        };
        assert!(matches!(
            write_wav_parts(&mut out, &mono, &parts),
            Err(WavWriteError::TooLarge { .. })
        ));
        assert!(out.is_empty());
    }

    #[test]
    fn encoding_text_round_trips() {
        for e in [WavEncoding::Float32, WavEncoding::Pcm24] {
            assert_eq!(e.to_string().parse::<WavEncoding>().unwrap(), e);
        }
        assert!("pcm16".parse::<WavEncoding>().is_err());
    }
}

//! Bad and hostile input: every failure is a `ReadError` whose message names the key fact, and
//! no input makes a reader panic or hang.
//!
//! Damaged files are made here from the committed fixtures (see `tests/fixtures/make_fixtures.py`)
//! by editing bytes at the offsets of the canonical 44-byte WAV header that Python's `wave`
//! module writes: channels at 22, sample rate at 24, data size at 40, samples from 44.

use std::io::Cursor;
use std::path::PathBuf;

use noisesonde::io::{
    open, CsvOptions, CsvSource, InputOptions, RawFormat, RawOptions, RawSource, ReadError,
    SampleSource, WavOptions, WavSource,
};

fn fixture(file: &str) -> Vec<u8> {
    let path = PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures")
        .join(file);
    std::fs::read(path).expect("fixture")
}

/// 64 frames of 16-bit mono at 44100 Hz with the canonical 44-byte header (Python's wave module).
const S16: &str = "wav-s16-44100hz-mono.wav";
const S16_FRAMES: u64 = 64;

fn put_u16(bytes: &mut [u8], at: usize, value: u16) {
    bytes[at..at + 2].copy_from_slice(&value.to_le_bytes());
}

fn put_u32(bytes: &mut [u8], at: usize, value: u32) {
    bytes[at..at + 4].copy_from_slice(&value.to_le_bytes());
}

fn open_bytes(
    bytes: Vec<u8>,
    options: &InputOptions,
) -> Result<Box<dyn SampleSource + Send>, ReadError> {
    open(Cursor::new(bytes), "bad.wav", options)
}

fn open_err(bytes: Vec<u8>, options: &InputOptions) -> ReadError {
    match open_bytes(bytes, options) {
        Ok(source) => panic!("expected an error, got a source: {:?}", source.info()),
        Err(e) => e,
    }
}

/// Reads to the end, with a bound on the samples so that a reader that never ends fails the test.
fn read_to_end(source: &mut dyn SampleSource) -> Result<u64, ReadError> {
    const MAX_SAMPLES: u64 = 50_000_000;
    let mut block = [0.0; 333];
    let mut total = 0u64;
    loop {
        let n = source.read(&mut block)?;
        if n == 0 {
            return Ok(total);
        }
        total += n as u64;
        assert!(total <= MAX_SAMPLES, "reader does not end");
    }
}

fn assert_mentions(error: &ReadError, parts: &[&str]) {
    let message = error.to_string();
    for part in parts {
        assert!(message.contains(part), "'{part}' missing from: {message}");
    }
}

#[test]
fn empty_file() {
    let err = open_err(Vec::new(), &InputOptions::default());
    assert!(matches!(err, ReadError::Empty { .. }));
    assert_mentions(&err, &["bad.wav: file is empty"]);
    let err = WavSource::new(Cursor::new(Vec::new()), "bad.wav", &WavOptions::default())
        .err()
        .unwrap();
    assert!(matches!(err, ReadError::Empty { .. }));
}

#[test]
fn zero_channels() {
    let mut bytes = fixture(S16);
    put_u16(&mut bytes, 22, 0);
    let err = open_err(bytes, &InputOptions::default());
    assert!(matches!(err, ReadError::ZeroChannels { .. }));
    assert_mentions(&err, &["declares 0 channels"]);
}

#[test]
fn zero_sample_rate_and_its_override() {
    let mut bytes = fixture(S16);
    put_u32(&mut bytes, 24, 0);
    let err = open_err(bytes.clone(), &InputOptions::default());
    assert!(matches!(err, ReadError::ZeroSampleRate { .. }));
    assert_mentions(&err, &["0 Hz", "--sample-rate HZ"]);

    let options = InputOptions {
        sample_rate_hz: Some(44100.0),
        ..InputOptions::default()
    };
    let mut source = open_bytes(bytes, &options).unwrap();
    assert_eq!(source.info().sample_rate_hz, 44100.0);
    assert!(source
        .warnings()
        .join(" ")
        .contains("overrides the header's 0 Hz"));
    assert_eq!(read_to_end(source.as_mut()).unwrap(), S16_FRAMES);
}

#[test]
fn truncated_header() {
    let bytes = fixture(S16);
    // Cut inside the RIFF header, inside the fmt chunk and before the data chunk header.
    for (len, part) in [
        (10, "RIFF header"),
        (30, "fmt chunk"),
        (40, "before any data chunk"),
    ] {
        let err = open_err(bytes[..len].to_vec(), &InputOptions::default());
        assert!(
            matches!(err, ReadError::TruncatedHeader { .. }),
            "{len}: {err}"
        );
        assert_mentions(
            &err,
            &["header is truncated", &format!("ends at byte {len}"), part],
        );
    }
}

#[test]
fn data_size_larger_than_file_reads_what_is_there() {
    // The data chunk claims 1000 frames; the RIFF size still matches the real file.
    let mut bytes = fixture(S16);
    put_u32(&mut bytes, 40, 2000);
    let mut source = open_bytes(bytes, &InputOptions::default()).unwrap();
    assert_eq!(source.info().declared_frames, Some(1000));
    assert_eq!(read_to_end(source.as_mut()).unwrap(), S16_FRAMES);
    let warnings = source.warnings().join("\n");
    assert!(
        warnings.contains("declares 1000 frames") && warnings.contains("64 frames were read"),
        "{warnings}"
    );
}

#[test]
fn file_cut_inside_a_frame() {
    // 128 data bytes cut by 5: 61 whole frames and 1 stray byte.
    let bytes = fixture(S16);
    let cut = bytes[..bytes.len() - 5].to_vec();
    let mut source = open_bytes(cut, &InputOptions::default()).unwrap();
    assert_eq!(read_to_end(source.as_mut()).unwrap(), 61);
    let warnings = source.warnings().join("\n");
    assert!(
        warnings.contains("declares 64 frames") && warnings.contains("61 frames were read"),
        "{warnings}"
    );
    assert!(
        warnings.contains("1 byte(s) of a 2-byte frame"),
        "{warnings}"
    );
}

#[test]
fn zero_data_size_with_samples_behind_it_warns() {
    let mut bytes = fixture(S16);
    put_u32(&mut bytes, 40, 0);
    let mut source = open_bytes(bytes, &InputOptions::default()).unwrap();
    assert_eq!(read_to_end(source.as_mut()).unwrap(), 0);
    assert!(source
        .warnings()
        .join(" ")
        .contains("declares 0 bytes but 128 bytes follow"));
}

#[test]
fn extensible_channel_mask_is_not_trusted() {
    // Channel mask 0x80000000 with 3 channels: symphonia 0.6.1's WavReader panics on this
    // ("attempt to shift left with overflow"); the mask says only where speakers stand, so
    // it is ignored here. The fmt body starts 8 bytes after "fmt "; the mask is at +20.
    let mut bytes = fixture("wav-extensible-s24-48000hz-3ch.wav");
    let fmt = bytes.windows(4).position(|w| w == b"fmt ").unwrap();
    put_u32(&mut bytes, fmt + 8 + 20, 0x8000_0000);
    let mut source = open_bytes(bytes, &InputOptions::default()).unwrap();
    assert_eq!(source.info().channels, 3);
    assert_eq!(read_to_end(source.as_mut()).unwrap(), 40);
}

#[test]
fn zip_archive() {
    let bytes = b"PK\x03\x04\x14\x00\x06\x00\x08\x00\x00\x00!\x00".to_vec();
    let err = open_err(bytes, &InputOptions::default());
    assert!(matches!(err, ReadError::UnknownFormat { .. }));
    assert_mentions(
        &err,
        &[
            "starts with 50 4B 03 04",
            "\"PK",
            "ZIP archive",
            "--raw FORMAT --sample-rate HZ",
        ],
    );
    assert!(
        !err.could_be_raw(),
        "a ZIP archive is not headerless samples"
    );
}

/// Bytes that match no file type (here the first bytes of an i16 sine) could be raw samples:
/// the page then asks for the layout. A damaged WAV marker or a known other format could not.
#[test]
fn headerless_bytes_could_be_raw_but_known_formats_could_not() {
    let samples: Vec<u8> = (0..64i16)
        .flat_map(|n| (n * 300 - 9000).to_le_bytes())
        .collect();
    let err = open_err(samples, &InputOptions::default());
    assert!(matches!(err, ReadError::UnknownFormat { .. }));
    assert!(err.could_be_raw());
    let mut damaged = fixture(S16);
    damaged[..4].copy_from_slice(b"RIFQ");
    let err = open_err(damaged, &InputOptions::default());
    assert!(matches!(err, ReadError::UnknownFormat { .. }), "{err}");
    assert!(!err.could_be_raw());
    for magic in [&b"%PDF-1.7 xxxxx"[..], b"OggS\0\x02xxxxxxxx"] {
        let err = open_err(magic.to_vec(), &InputOptions::default());
        assert!(!err.could_be_raw(), "{err}");
    }
}

#[test]
fn big_endian_rifx() {
    let mut bytes = fixture(S16);
    bytes[..4].copy_from_slice(b"RIFX");
    let err = open_err(bytes, &InputOptions::default());
    assert_mentions(&err, &["RIFX", "little-endian"]);
}

#[test]
fn unsupported_encodings_are_named() {
    let mut adpcm = fixture(S16);
    put_u16(&mut adpcm, 20, 0x0002);
    assert_mentions(
        &open_err(adpcm, &InputOptions::default()),
        &["unsupported encoding", "0x0002 (Microsoft ADPCM)"],
    );

    let mut float16 = fixture(S16);
    put_u16(&mut float16, 20, 0x0003);
    assert_mentions(
        &open_err(float16, &InputOptions::default()),
        &["IEEE float with 16 bits per sample"],
    );

    let mut pcm12 = fixture(S16);
    put_u16(&mut pcm12, 34, 12);
    assert_mentions(
        &open_err(pcm12, &InputOptions::default()),
        &["PCM with 12 bits per sample"],
    );

    let mut avi = fixture(S16);
    avi[8..12].copy_from_slice(b"AVI ");
    assert_mentions(
        &open_err(avi, &InputOptions::default()),
        &["RIFF form 'AVI '"],
    );
}

#[test]
fn channel_out_of_range() {
    let options = InputOptions {
        channel: Some(4),
        ..InputOptions::default()
    };
    let err = open_err(fixture("wav-s16-8000hz-4ch.wav"), &options);
    assert!(matches!(
        err,
        ReadError::ChannelOutOfRange {
            channel: 4,
            channels: 4,
            ..
        }
    ));
    assert_mentions(
        &err,
        &["channel 4 does not exist", "4 channel(s), numbered 0 to 3"],
    );

    let err = open(
        Cursor::new(fixture("flac-s16-44100hz-stereo.flac")),
        "x.flac",
        &options,
    )
    .err()
    .unwrap();
    assert_mentions(&err, &["channel 4 does not exist", "2 channel(s)"]);

    let raw = RawOptions {
        channels: 2,
        channel: 2,
        ..RawOptions::new(RawFormat::F32Le, 10.0)
    };
    let err = RawSource::new(Cursor::new(vec![0u8; 16]), "x.bin", &raw)
        .err()
        .unwrap();
    assert_mentions(&err, &["channel 2 does not exist", "2 channel(s)"]);

    let csv_options = CsvOptions {
        channel: Some(5),
        sample_rate_hz: Some(1.0),
        ..CsvOptions::default()
    };
    let err = CsvSource::new(Cursor::new("t,a,b\n0,1,2\n"), "x.csv", &csv_options)
        .err()
        .unwrap();
    // The time column t is not counted: a and b are channels 0 and 1.
    assert_mentions(&err, &["channel 5 does not exist", "2 channel(s)"]);
}

#[test]
fn nan_in_csv() {
    let options = CsvOptions {
        sample_rate_hz: Some(1.0),
        ..CsvOptions::default()
    };
    let mut source = CsvSource::new(Cursor::new("v\n1\nnan\n"), "x.csv", &options).unwrap();
    let err = read_to_end(&mut source).err().unwrap();
    assert!(matches!(err, ReadError::NonFinite { line: 3, .. }));
    assert_mentions(&err, &["line 3: non-finite value 'nan'"]);

    let err = CsvSource::new(
        Cursor::new("t,v\n0,1\ninf,2\n"),
        "x.csv",
        &CsvOptions::default(),
    )
    .err()
    .unwrap();
    assert_mentions(&err, &["line 3: non-finite value 'inf'"]);
}

#[test]
fn raw_sample_rate_must_be_finite_and_positive() {
    for (rate, shown) in [
        (0.0, "0 Hz"),
        (f64::NAN, "NaN Hz"),
        (-48000.0, "-48000 Hz"),
        (f64::INFINITY, "inf Hz"),
    ] {
        let options = RawOptions::new(RawFormat::I16Le, rate);
        let err = RawSource::new(Cursor::new(vec![0u8; 4]), "x.bin", &options)
            .err()
            .unwrap();
        assert!(matches!(err, ReadError::InvalidSampleRate { .. }), "{err}");
        assert_mentions(&err, &[shown, "finite number above 0 Hz"]);

        let options = InputOptions {
            raw: Some(RawFormat::I16Le),
            sample_rate_hz: Some(rate),
            ..InputOptions::default()
        };
        assert_mentions(&open_err(vec![0u8; 4], &options), &[shown]);
    }
    let options = InputOptions {
        raw: Some(RawFormat::I16Le),
        ..InputOptions::default()
    };
    let err = open_err(vec![0u8; 4], &options);
    assert!(matches!(err, ReadError::MissingSampleRate { .. }));
    assert_mentions(&err, &["raw input has no sample rate", "--sample-rate HZ"]);
}

#[test]
fn raw_channel_count_zero() {
    let options = RawOptions {
        channels: 0,
        ..RawOptions::new(RawFormat::I16Le, 1.0)
    };
    let err = RawSource::new(Cursor::new(vec![0u8; 4]), "x.bin", &options)
        .err()
        .unwrap();
    assert_mentions(&err, &["--channels 0", "1 to 65535"]);
}

#[test]
fn csv_without_rows_or_with_a_long_line() {
    let options = CsvOptions {
        sample_rate_hz: Some(1.0),
        ..CsvOptions::default()
    };
    let err = CsvSource::new(Cursor::new("# only\n\n# comments\n"), "x.csv", &options)
        .err()
        .unwrap();
    assert_mentions(&err, &["no data", "only comments or blank lines"]);
    let err = CsvSource::new(Cursor::new("volts\n"), "x.csv", &options)
        .err()
        .unwrap();
    assert_mentions(&err, &["header row but no rows of numbers"]);
    let err = CsvSource::new(Cursor::new("time\n0\n1\n"), "x.csv", &options)
        .err()
        .unwrap();
    assert_mentions(&err, &["only column is the time column time"]);

    let long = "1".repeat(2 << 20);
    let err = open(Cursor::new(long), "x.csv", &InputOptions::default())
        .err()
        .unwrap();
    assert!(
        matches!(err, ReadError::LineTooLong { line: 1, .. }),
        "{err}"
    );
}

#[test]
fn too_many_chunks_before_data() {
    // RIFF header, fmt, then 2000 empty chunks: the walk stops after 1024.
    let bytes = fixture(S16);
    let mut wav = bytes[..36].to_vec();
    for _ in 0..2000 {
        wav.extend_from_slice(b"junk\0\0\0\0");
    }
    wav.extend_from_slice(&bytes[36..]);
    let err = open_err(wav, &InputOptions::default());
    assert_mentions(&err, &["no data chunk among the first 1024 chunks"]);
}

#[test]
fn chunk_claiming_more_than_the_file() {
    let bytes = fixture(S16);
    let mut wav = bytes[..36].to_vec();
    wav.extend_from_slice(b"LIST");
    wav.extend_from_slice(&u32::MAX.to_le_bytes());
    wav.extend_from_slice(&bytes[36..]);
    let err = open_err(wav, &InputOptions::default());
    assert_mentions(
        &err,
        &["'LIST' chunk at byte 36, which declares 4294967295 bytes"],
    );
}

/// How damaged inputs fared: each open and read ends in samples or in a `ReadError`.
#[derive(Debug, Default)]
struct Outcomes {
    read_to_end: u32,
    failed: u32,
}

/// Opens and reads a damaged input; Ok or a ReadError are both fine, a panic fails the test.
fn survives(bytes: &[u8], outcomes: &mut Outcomes) {
    for options in [
        InputOptions::default(),
        InputOptions {
            channel: Some(1),
            sample_rate_hz: Some(1000.0),
            ..InputOptions::default()
        },
    ] {
        let result = open(Cursor::new(bytes.to_vec()), "fuzz", &options)
            .and_then(|mut source| read_to_end(source.as_mut()));
        match result {
            Ok(_) => outcomes.read_to_end += 1,
            Err(_) => outcomes.failed += 1,
        }
    }
}

/// Every prefix, then each byte at the given positions replaced by 0x00, 0xFF and its
/// complement. Both outcomes must occur, so that the damage reaches the decoder.
fn hostile_variants(file: &str, flip_positions: impl Iterator<Item = usize>) {
    let bytes = fixture(file);
    let mut outcomes = Outcomes::default();
    for len in 0..=bytes.len() {
        survives(&bytes[..len], &mut outcomes);
    }
    for at in flip_positions.filter(|&at| at < bytes.len()) {
        for value in [0x00, 0xFF, !bytes[at]] {
            let mut damaged = bytes.clone();
            damaged[at] = value;
            survives(&damaged, &mut outcomes);
        }
    }
    assert!(
        outcomes.read_to_end > 0 && outcomes.failed > 0,
        "{file}: {outcomes:?}"
    );
}

#[test]
fn hostile_wav_never_panics() {
    for file in [
        "wav-u8-8000hz-mono.wav",
        "wav-s16-44100hz-mono.wav",
        "wav-s16-oddlist-8000hz-mono.wav",
        "wav-extensible-s24-48000hz-3ch.wav",
        "wav-extensible-s20in24-48000hz-mono.wav",
        "rf64-f32-48000hz-stereo.wav",
    ] {
        hostile_variants(file, 0..200);
    }
}

#[test]
fn hostile_flac_never_panics() {
    hostile_variants("flac-s24-48000hz-mono.flac", 0..400);
    // The 7 KB stereo file: the header densely, the frames sparsely.
    hostile_variants(
        "flac-s16-44100hz-stereo.flac",
        (0..120).chain((120..8000).step_by(97)),
    );
}

#[test]
fn hostile_text_and_raw_never_panic() {
    let text = "# c\ntime,volts\n0,1\n0.5,2\n1.0,3\n".as_bytes();
    let mut outcomes = Outcomes::default();
    for len in 0..=text.len() {
        survives(&text[..len], &mut outcomes);
        let mut damaged = text.to_vec();
        damaged[len.min(text.len() - 1)] = b',';
        survives(&damaged, &mut outcomes);
    }
    assert!(
        outcomes.read_to_end > 0 && outcomes.failed > 0,
        "{outcomes:?}"
    );
    let options = InputOptions {
        raw: Some(RawFormat::F64Be),
        channels: Some(3),
        channel: Some(2),
        sample_rate_hz: Some(1.0),
        ..InputOptions::default()
    };
    for len in 0..100 {
        let mut source = open(Cursor::new(vec![0xA5u8; len]), "raw", &options).unwrap();
        assert_eq!(read_to_end(source.as_mut()).unwrap(), (len / 24) as u64);
    }
}

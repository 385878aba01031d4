//! The readers against outside truth.
//!
//! Audio and raw fixtures in `tests/fixtures/` are written by tools other than noisesonde and
//! read back by outside readers; `tests/fixtures/expected.json` holds what those readers
//! returned. Both come from `tests/fixtures/make_fixtures.py` (see its header for the tools and
//! versions). Each test names the writer and reader of its fixture beside the check.

use std::fs::File;
use std::io::Cursor;
use std::path::PathBuf;

use noisesonde::io::{
    open, ColumnSelector, CsvOptions, CsvSource, InputOptions, RawFormat, ReadError, SampleSource,
};
use serde_json::Value;

/// Block sizes used to read: an odd small one (crosses every internal boundary) and a large one.
const SMALL_BLOCK_LEN: usize = 7;
const LARGE_BLOCK_LEN: usize = 100_000;

fn fixture_path(file: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures")
        .join(file)
}

fn expectations() -> Value {
    let text = std::fs::read_to_string(fixture_path("expected.json")).expect("expected.json");
    serde_json::from_str(&text).expect("expected.json parses")
}

fn entry(section: &str, file: &str) -> Value {
    expectations()[section]
        .as_array()
        .expect("section is a list")
        .iter()
        .find(|e| e["file"] == file)
        .unwrap_or_else(|| panic!("{file} not in expected.json"))
        .clone()
}

/// The expected full-scale samples of a fixture entry: either integers with their full-scale
/// rule, (int - offset) / divisor (exact: the divisors are powers of two), or f64 bit patterns.
fn expected_samples(entry: &Value) -> Vec<f64> {
    if let Some(ints) = entry.get("expected_ints") {
        let offset = ints["offset"].as_f64().unwrap();
        let divisor = ints["divisor"].as_f64().unwrap();
        ints["ints"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| (v.as_i64().unwrap() as f64 - offset) / divisor)
            .collect()
    } else {
        entry["expected_bits"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| f64::from_bits(v.as_u64().unwrap()))
            .collect()
    }
}

fn read_all(source: &mut dyn SampleSource, block_len: usize) -> Result<Vec<f64>, ReadError> {
    let mut all = Vec::new();
    let mut block = vec![0.0; block_len];
    loop {
        let n = source.read(&mut block)?;
        if n == 0 {
            return Ok(all);
        }
        all.extend_from_slice(&block[..n]);
    }
}

fn open_fixture(file: &str, options: &InputOptions) -> Box<dyn SampleSource + Send> {
    let handle = File::open(fixture_path(file)).expect("fixture file");
    open(handle, file, options).unwrap_or_else(|e| panic!("{file}: {e}"))
}

fn assert_same_samples(file: &str, got: &[f64], expected: &[f64]) {
    assert_eq!(got.len(), expected.len(), "{file}: sample count");
    for (i, (g, e)) in got.iter().zip(expected).enumerate() {
        assert_eq!(
            g.to_bits(),
            e.to_bits(),
            "{file}: sample {i}: got {g}, expected {e}"
        );
    }
}

/// Opens an audio fixture, checks the header facts the generator recorded and compares every
/// sample exactly with what the outside reader returned.
fn check_audio_fixture(file: &str) {
    let entry = entry("audio", file);
    let channel = entry["channel"].as_u64().unwrap() as usize;
    let options = InputOptions {
        channel: Some(channel),
        ..InputOptions::default()
    };
    let expected = expected_samples(&entry);
    for block_len in [SMALL_BLOCK_LEN, LARGE_BLOCK_LEN] {
        let mut source = open_fixture(file, &options);
        let info = source.info().clone();
        assert_eq!(
            info.format,
            entry["format"].as_str().unwrap(),
            "{file}: format"
        );
        assert_eq!(
            info.sample_rate_hz,
            entry["sample_rate_hz"].as_f64().unwrap(),
            "{file}"
        );
        assert_eq!(
            info.channels as u64,
            entry["channels"].as_u64().unwrap(),
            "{file}"
        );
        assert_eq!(info.channel, channel, "{file}");
        assert_eq!(
            info.bits_per_sample.map(u64::from),
            entry["bits_per_sample"].as_u64(),
            "{file}: bits"
        );
        assert_eq!(
            info.clip_level_fs.map(f64::to_bits),
            entry["clip_level_fs_bits"].as_u64(),
            "{file}: clip level"
        );
        assert_eq!(
            info.declared_frames,
            entry["declared_frames"].as_u64(),
            "{file}"
        );
        assert!(info.full_scale);
        let got = read_all(source.as_mut(), block_len).unwrap_or_else(|e| panic!("{e}"));
        assert_same_samples(file, &got, &expected);
        assert!(
            source.warnings().is_empty(),
            "{file}: {:?}",
            source.warnings()
        );
        // The end stays the end.
        assert_eq!(source.read(&mut [0.0; 4]).unwrap(), 0);
    }
}

// Written by Python's wave module, expected values from scipy.io.wavfile.read.
#[test]
fn wav_pcm_8bit_unsigned() {
    check_audio_fixture("wav-u8-8000hz-mono.wav");
}

// Written by Python's wave module, expected values from scipy.io.wavfile.read.
#[test]
fn wav_pcm_16bit() {
    check_audio_fixture("wav-s16-44100hz-mono.wav");
}

// Written by Python's wave module, expected values from scipy.io.wavfile.read (which returns
// 24-bit samples left-justified in int32, hence divisor 2^31).
#[test]
fn wav_pcm_24bit() {
    check_audio_fixture("wav-s24-48000hz-mono.wav");
}

// Written and read back by scipy.io.wavfile.
#[test]
fn wav_pcm_32bit() {
    check_audio_fixture("wav-s32-48000hz-mono.wav");
}

// Written and read back by scipy.io.wavfile; includes 1.25 and -1.5, past full scale.
#[test]
fn wav_float_32bit() {
    check_audio_fixture("wav-f32-48000hz-mono.wav");
}

// Written and read back by scipy.io.wavfile.
#[test]
fn wav_float_64bit() {
    check_audio_fixture("wav-f64-96000hz-mono.wav");
}

// Written by libsndfile (soundfile, format WAVEX), expected values from scipy.io.wavfile.read.
#[test]
fn wav_extensible_24bit_three_channels() {
    check_audio_fixture("wav-extensible-s24-48000hz-3ch.wav");
}

// Hand-assembled WAVE_FORMAT_EXTENSIBLE with 20 valid bits in 24-bit containers, expected values
// from soundfile.read (libsndfile).
#[test]
fn wav_extensible_20_valid_bits() {
    check_audio_fixture("wav-extensible-s20in24-48000hz-mono.wav");
}

// Written by Python's wave module with 4 channels; channel 2 from scipy.io.wavfile.read.
#[test]
fn wav_multichannel_selects_channel() {
    check_audio_fixture("wav-s16-8000hz-4ch.wav");
}

// Hand-assembled: an odd-sized LIST/INFO chunk, an odd unknown chunk and a fact chunk before
// data; expected values from scipy.io.wavfile.read and soundfile.read, which agree.
#[test]
fn wav_odd_chunks_before_data() {
    check_audio_fixture("wav-s16-oddlist-8000hz-mono.wav");
}

// Written by libsndfile (soundfile, format RF64), expected values from soundfile.read.
#[test]
fn rf64_float_stereo() {
    check_audio_fixture("rf64-f32-48000hz-stereo.wav");
}

// Written by libsndfile (soundfile, FLAC PCM_16), expected values from soundfile.read; 4200
// frames span two FLAC blocks.
#[test]
fn flac_16bit_stereo() {
    check_audio_fixture("flac-s16-44100hz-stereo.flac");
}

// Written by libsndfile (soundfile, FLAC PCM_24), expected values from soundfile.read (int32,
// left-justified). symphonia hands 24-bit FLAC back as i32 shifted left by 8: this checks the
// scaling by the stream's real depth.
#[test]
fn flac_24bit_full_range() {
    check_audio_fixture("flac-s24-48000hz-mono.flac");
}

#[test]
fn every_audio_fixture_has_a_test() {
    let tested = [
        "wav-u8-8000hz-mono.wav",
        "wav-s16-44100hz-mono.wav",
        "wav-s24-48000hz-mono.wav",
        "wav-s32-48000hz-mono.wav",
        "wav-f32-48000hz-mono.wav",
        "wav-f64-96000hz-mono.wav",
        "wav-extensible-s24-48000hz-3ch.wav",
        "wav-extensible-s20in24-48000hz-mono.wav",
        "wav-s16-8000hz-4ch.wav",
        "wav-s16-oddlist-8000hz-mono.wav",
        "rf64-f32-48000hz-stereo.wav",
        "flac-s16-44100hz-stereo.flac",
        "flac-s24-48000hz-mono.flac",
    ];
    for e in expectations()["audio"].as_array().unwrap() {
        assert!(
            tested.contains(&e["file"].as_str().unwrap()),
            "{}",
            e["file"]
        );
    }
}

#[test]
fn wav_sample_rate_override_warns() {
    let options = InputOptions {
        sample_rate_hz: Some(8192.0),
        ..InputOptions::default()
    };
    let mut source = open_fixture("wav-s16-44100hz-mono.wav", &options);
    assert_eq!(source.info().sample_rate_hz, 8192.0);
    let warnings = source.warnings().join("\n");
    assert!(
        warnings.contains("8192 Hz") && warnings.contains("44100 Hz"),
        "{warnings}"
    );
    assert_eq!(read_all(source.as_mut(), 64).unwrap().len(), 64);
}

// --- raw ---------------------------------------------------------------------------------------

// Written by numpy.ndarray.tofile in each byte order; channel 1 of 2, values from numpy.
#[test]
fn raw_every_format_two_channels() {
    let raw = expectations()["raw"].as_array().unwrap().clone();
    assert_eq!(raw.len(), 8);
    for entry in raw {
        let file = entry["file"].as_str().unwrap();
        let format: RawFormat = entry["format"].as_str().unwrap().parse().unwrap();
        let options = InputOptions {
            raw: Some(format),
            channels: Some(2),
            channel: Some(1),
            sample_rate_hz: Some(250.0),
            ..InputOptions::default()
        };
        let source = open_fixture(file, &options);
        assert_eq!(source.info().format, format!("raw {format}"));
        assert_eq!(source.info().sample_rate_hz, 250.0);
        assert_eq!(source.info().channels, 2);
        let expected = expected_samples(&entry);
        for block_len in [SMALL_BLOCK_LEN, LARGE_BLOCK_LEN] {
            let mut source = open_fixture(file, &options);
            let got = read_all(source.as_mut(), block_len).unwrap();
            assert_same_samples(file, &got, &expected);
            assert!(source.warnings().is_empty(), "{:?}", source.warnings());
        }
    }
}

#[test]
fn raw_clip_levels() {
    let bytes = vec![0u8; 8];
    for (format, clip) in [
        (RawFormat::I16Le, 32767.0 / 32768.0),
        (RawFormat::I32Be, 2147483647.0 / 2147483648.0),
        (RawFormat::F32Le, 1.0),
        (RawFormat::F64Be, 1.0),
    ] {
        let options = InputOptions {
            raw: Some(format),
            sample_rate_hz: Some(1.0),
            ..InputOptions::default()
        };
        let source = open(Cursor::new(bytes.clone()), "zeros.bin", &options).unwrap();
        assert_eq!(source.info().clip_level_fs, Some(clip), "{format}");
        assert!(source.info().full_scale);
    }
}

#[test]
fn raw_partial_frame_warns() {
    // Three frames of 2 x i16le (12 bytes) plus 3 stray bytes.
    let mut bytes: Vec<u8> = [1i16, 2, 3, 4, 5, 6]
        .iter()
        .flat_map(|v| v.to_le_bytes())
        .collect();
    bytes.extend_from_slice(&[9, 9, 9]);
    let options = InputOptions {
        raw: Some(RawFormat::I16Le),
        channels: Some(2),
        sample_rate_hz: Some(100.0),
        ..InputOptions::default()
    };
    let mut source = open(Cursor::new(bytes), "probe.bin", &options).unwrap();
    let got = read_all(source.as_mut(), 2).unwrap();
    // 1, 3, 5 over 2^15 by hand.
    assert_eq!(got, vec![1.0 / 32768.0, 3.0 / 32768.0, 5.0 / 32768.0]);
    let warnings = source.warnings().join("\n");
    assert!(
        warnings.contains("3 byte(s)") && warnings.contains("whole frame"),
        "{warnings}"
    );
}

#[test]
fn raw_format_names_parse() {
    for (text, format) in [
        ("i16le", RawFormat::I16Le),
        ("i16be", RawFormat::I16Be),
        ("i32le", RawFormat::I32Le),
        ("i32be", RawFormat::I32Be),
        ("f32le", RawFormat::F32Le),
        ("f32be", RawFormat::F32Be),
        ("f64le", RawFormat::F64Le),
        ("f64be", RawFormat::F64Be),
    ] {
        assert_eq!(text.parse::<RawFormat>().unwrap(), format);
        assert_eq!(format.to_string(), text);
    }
    let message = "pcm16".parse::<RawFormat>().unwrap_err().to_string();
    assert!(
        message.contains("'pcm16'") && message.contains("i16le i16be"),
        "{message}"
    );
}

// --- CSV ---------------------------------------------------------------------------------------

fn csv(text: &str, options: &CsvOptions) -> Result<(CsvSource, Vec<f64>), ReadError> {
    let mut source = CsvSource::new(Cursor::new(text.to_string()), "bench.csv", options)?;
    let values = read_all(&mut source, SMALL_BLOCK_LEN)?;
    Ok((source, values))
}

fn with_rate(sample_rate_hz: f64) -> CsvOptions {
    CsvOptions {
        sample_rate_hz: Some(sample_rate_hz),
        ..CsvOptions::default()
    }
}

// Written by numpy.savetxt (time_s column at 1000 Hz, 6 decimals); expected values parsed by
// Python's csv module and float().
#[test]
fn csv_fixture_time_column_gives_sample_rate() {
    let entry = entry("csv", "csv-time-1000hz.csv");
    let options = InputOptions {
        column: Some(ColumnSelector::Name("amps".to_string())),
        ..InputOptions::default()
    };
    let mut source = open_fixture("csv-time-1000hz.csv", &options);
    let info = source.info().clone();
    assert_eq!(info.format, "CSV text (comma-separated)");
    assert_eq!(info.channel_name.as_deref(), Some("amps"));
    assert_eq!(
        info.channel_names,
        ["volts", "amps"],
        "the data columns, time left out"
    );
    assert_eq!(
        info.channels, 2,
        "volts and amps; time is not a data column"
    );
    assert_eq!(info.channel, 1);
    assert!(!info.full_scale);
    assert_eq!(info.clip_level_fs, None);
    // Times are i/1000 printed with 6 decimals: the fit recovers 1000 Hz to rounding error.
    let rate = info.sample_rate_hz;
    assert!((rate - 1000.0).abs() < 1e-9 * 1000.0, "{rate}");
    let got = read_all(source.as_mut(), SMALL_BLOCK_LEN).unwrap();
    assert_same_samples("csv-time-1000hz.csv", &got, &expected_samples(&entry));
}

#[test]
fn csv_header_selects_column_by_channel_name_and_index() {
    let text = "volts,amps,ohms\n1,2,3\n4,5,6\n";
    let (source, values) = csv(
        text,
        &CsvOptions {
            channel: Some(1),
            ..with_rate(10.0)
        },
    )
    .unwrap();
    assert_eq!(values, vec![2.0, 5.0]);
    assert_eq!(source.info().channel_name.as_deref(), Some("amps"));
    assert_eq!(source.info().channel_names, ["volts", "amps", "ohms"]);
    assert_eq!(source.info().channels, 3);
    assert_eq!(source.info().sample_rate_hz, 10.0);

    for selector in ["OHMS", "2"] {
        let (source, values) = csv(
            text,
            &CsvOptions {
                column: Some(selector.parse().unwrap()),
                ..with_rate(10.0)
            },
        )
        .unwrap();
        assert_eq!(values, vec![3.0, 6.0], "{selector}");
        assert_eq!(source.info().channel, 2);
    }
}

#[test]
fn csv_without_header() {
    let (source, values) = csv("1.5,-2\n3e-3,4\n-0.25,6\n", &with_rate(2.0)).unwrap();
    assert_eq!(values, vec![1.5, 3e-3, -0.25]);
    assert_eq!(source.info().channel_name, None);
    assert!(source.info().channel_names.is_empty());
    assert_eq!(source.info().channels, 2);
}

#[test]
fn csv_tab_and_semicolon_are_sniffed() {
    let (source, values) = csv("a\tb\n1\t2\n3\t4\n", &with_rate(1.0)).unwrap();
    assert_eq!(values, vec![1.0, 3.0]);
    assert_eq!(source.info().format, "TSV text (tab-separated)");

    let (source, values) = csv(
        "a;b\n1;2\n3;4\n",
        &CsvOptions {
            channel: Some(1),
            ..with_rate(1.0)
        },
    )
    .unwrap();
    assert_eq!(values, vec![2.0, 4.0]);
    assert_eq!(source.info().format, "CSV text (semicolon-separated)");
}

#[test]
fn csv_comments_blank_lines_and_crlf() {
    let text = "\u{feff}# logger export\r\n\r\n# units: s, V\r\nt,v\r\n# mid-file note\r\n0.0,1\r\n\r\n  \r\n0.5,2\r\n  # indented note\r\n1.0,3\r\n";
    let (source, values) = csv(text, &CsvOptions::default()).unwrap();
    assert_eq!(values, vec![1.0, 2.0, 3.0]);
    // Times 0, 0.5, 1.0 s: a period of 0.5 s is 2 Hz.
    assert_eq!(source.info().sample_rate_hz, 2.0);
    assert_eq!(source.info().channel_name.as_deref(), Some("v"));
}

#[test]
fn csv_time_column_by_index_without_header() {
    let options = CsvOptions {
        time_column: Some(ColumnSelector::Index(1)),
        ..CsvOptions::default()
    };
    let (source, values) = csv("5,0.00\n6,0.25\n7,0.50\n8,0.75\n", &options).unwrap();
    assert_eq!(values, vec![5.0, 6.0, 7.0, 8.0]);
    assert_eq!(source.info().sample_rate_hz, 4.0);
}

#[test]
fn csv_given_rate_agreeing_with_time_column_is_kept() {
    let (source, _) = csv("time,v\n0,1\n0.001,2\n0.002,3\n", &with_rate(1000.0)).unwrap();
    assert_eq!(source.info().sample_rate_hz, 1000.0);
}

#[test]
fn csv_uneven_time_names_the_line() {
    // Least squares over rows 0..4 with t = 0, 1, 2, 3.9, 4: slope 1.09 s, intercept 0, so row 3
    // (line 5) is expected at 3.27 s and lies 0.63 s = 0.58 periods away (> 0.5).
    let err = csv(
        "time,v\n0,1\n1,2\n2,3\n3.9,4\n4,5\n",
        &CsvOptions::default(),
    )
    .err()
    .unwrap();
    let message = err.to_string();
    assert!(
        matches!(err, ReadError::UnevenTime { line: 5, .. }),
        "{message}"
    );
    assert!(
        message.contains("line 5: time 3.9 s") && message.contains("3.27 s"),
        "{message}"
    );
}

#[test]
fn csv_uneven_time_after_the_fit_rows_is_caught_while_streaming() {
    // 5000 rows at 100 Hz; row 4500 (line 4502) is late by one whole period.
    let mut text = String::from("time,v\n");
    for i in 0..5000u32 {
        let late = if i == 4500 { 1 } else { 0 };
        text.push_str(&format!("{:.2},{i}\n", f64::from(i + late) / 100.0));
    }
    let mut source = CsvSource::new(Cursor::new(text), "long.csv", &CsvOptions::default()).unwrap();
    assert!((source.info().sample_rate_hz - 100.0).abs() < 1e-9);
    let err = read_all(&mut source, 1000).err().unwrap();
    assert!(
        matches!(err, ReadError::UnevenTime { line: 4502, .. }),
        "{err}"
    );
}

#[test]
fn csv_text_in_numbers_names_line_and_text() {
    let err = csv("v\n1\n2\nthree\n", &with_rate(1.0)).err().unwrap();
    assert_eq!(
        err.to_string(),
        "bench.csv: line 4: 'three' is not a number; fix the value or turn the line into a \
         comment with '#'"
    );
}

#[test]
fn csv_line_numbers_count_comments_and_blank_lines() {
    // Line 1 comment, 2 blank, 3 header, 4 value, 5 blank, 6 comment, 7 'x' (CRLF endings).
    let err = csv("# a\r\n\r\nv\r\n1\r\n\r\n# c\r\nx\r\n", &with_rate(1.0))
        .err()
        .unwrap();
    assert!(
        matches!(err, ReadError::NotANumber { line: 7, .. }),
        "{err}"
    );
}

#[test]
fn csv_bare_carriage_return_lines() {
    // Classic Mac line ends: one physical line holding several records.
    let (_, values) = csv("v\r1\r# note\r2\r", &with_rate(1.0)).unwrap();
    assert_eq!(values, vec![1.0, 2.0]);
}

#[test]
fn csv_decimal_comma_gets_a_hint() {
    let err = csv("v\n0,5\n", &with_rate(1.0)).err();
    // "0,5" with a comma delimiter is two fields, 0 and 5: no error. With semicolons it is one.
    assert!(err.is_none());
    let err = csv("a;b\n0,5;1\n", &with_rate(1.0))
        .err()
        .unwrap()
        .to_string();
    assert!(
        err.contains("line 2: '0,5'") && err.contains("decimal comma"),
        "{err}"
    );
}

#[test]
fn csv_missing_sample_rate_says_how_to_give_one() {
    let err = csv("volts\n1\n2\n", &CsvOptions::default()).err().unwrap();
    assert!(matches!(err, ReadError::MissingSampleRate { .. }));
    assert!(err.to_string().contains("pass --sample-rate HZ"), "{err}");
}

#[test]
fn csv_rate_disagreeing_with_time_column_names_both() {
    let err = csv("t,v\n0,1\n0.001,2\n0.002,3\n", &with_rate(1001.0))
        .err()
        .unwrap()
        .to_string();
    assert!(err.contains("1001 Hz") && err.contains("1000 Hz"), "{err}");
}

#[test]
fn csv_short_row_names_the_line() {
    let err = csv(
        "a,b\n1,2\n3\n",
        &CsvOptions {
            channel: Some(1),
            ..with_rate(1.0)
        },
    )
    .err()
    .unwrap();
    assert!(
        matches!(
            err,
            ReadError::MissingField {
                line: 3,
                fields: 1,
                column: 1,
                ..
            }
        ),
        "{err}"
    );
}

#[test]
fn csv_through_open_is_sniffed_as_text() {
    let options = InputOptions {
        sample_rate_hz: Some(3.0),
        ..InputOptions::default()
    };
    let mut source = open(Cursor::new("x\n1\n2\n"), "x.csv", &options).unwrap();
    assert_eq!(read_all(source.as_mut(), 8).unwrap(), vec![1.0, 2.0]);
    assert_eq!(source.info().sample_rate_hz, 3.0);
}

#[test]
fn column_selector_parses_index_or_name() {
    assert_eq!(
        "0".parse::<ColumnSelector>().unwrap(),
        ColumnSelector::Index(0)
    );
    assert_eq!(
        "time_s".parse::<ColumnSelector>().unwrap(),
        ColumnSelector::Name("time_s".to_string())
    );
    let message = "  ".parse::<ColumnSelector>().unwrap_err().to_string();
    assert!(
        message.contains("header name or a 0-based column number"),
        "{message}"
    );
}

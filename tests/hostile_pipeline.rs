//! Whatever the bytes, the pipeline answers with a report or a typed error, never a panic:
//! random binary, random text made of number-like characters, and damaged copies of a valid
//! WAV, each through `io::open` and `analyze` with a short segment.

use std::io::Cursor;

use noisesonde::analysis::{analyze, Settings};
use noisesonde::io::{open, InputOptions, RawFormat};
use noisesonde::spectral::WelchSettings;
use proptest::prelude::*;

fn settings() -> Settings {
    Settings {
        welch: WelchSettings {
            segment_len: 8,
            ..WelchSettings::default()
        },
        ..Settings::default()
    }
}

fn run(bytes: Vec<u8>, options: &InputOptions) {
    if let Ok(mut source) = open(Cursor::new(bytes), "fuzz", options) {
        let result = analyze(source.as_mut(), &settings());
        if let Ok(report) = result {
            assert!(report
                .psd
                .density
                .iter()
                .all(|d| d.is_finite() && *d >= 0.0));
        }
    }
}

fn text_bytes() -> impl Strategy<Value = Vec<u8>> {
    prop::collection::vec(
        prop::sample::select(b"0123456789.,;-+eE\n\r\t# naifNIt".to_vec()),
        0..2000,
    )
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(300))]

    #[test]
    fn random_bytes(bytes in prop::collection::vec(any::<u8>(), 0..3000), rate in prop::option::of(-10.0..1e6f64)) {
        run(bytes.clone(), &InputOptions { sample_rate_hz: rate, ..InputOptions::default() });
        run(bytes, &InputOptions { raw: Some(RawFormat::F32Le), sample_rate_hz: rate, channels: Some(3), channel: Some(2), ..InputOptions::default() });
    }

    #[test]
    fn random_text(bytes in text_bytes(), rate in prop::option::of(0.0..1e4f64), channel in prop::option::of(0usize..3)) {
        run(bytes, &InputOptions { sample_rate_hz: rate, channel, ..InputOptions::default() });
    }

    #[test]
    fn damaged_wav(position in 0usize..200, value in any::<u8>(), cut in 0usize..2100) {
        let mut bytes = wav_16bit_mono(1000);
        if position < bytes.len() {
            bytes[position] = value;
        }
        bytes.truncate(cut.max(1));
        run(bytes, &InputOptions::default());
    }
}

/// A minimal canonical PCM WAV (RIFF layout as in the Microsoft/IBM Multimedia Programming
/// Interface and Data Specifications 1.0, 1991).
fn wav_16bit_mono(frames: usize) -> Vec<u8> {
    let data: Vec<u8> = (0..frames)
        .flat_map(|n| (((n * 7919) % 2000) as i16 - 1000).to_le_bytes())
        .collect();
    let mut out = Vec::new();
    out.extend_from_slice(b"RIFF");
    out.extend_from_slice(&(36 + data.len() as u32).to_le_bytes());
    out.extend_from_slice(b"WAVEfmt ");
    out.extend_from_slice(&16u32.to_le_bytes());
    out.extend_from_slice(&1u16.to_le_bytes());
    out.extend_from_slice(&1u16.to_le_bytes());
    out.extend_from_slice(&8000u32.to_le_bytes());
    out.extend_from_slice(&16000u32.to_le_bytes());
    out.extend_from_slice(&2u16.to_le_bytes());
    out.extend_from_slice(&16u16.to_le_bytes());
    out.extend_from_slice(b"data");
    out.extend_from_slice(&(data.len() as u32).to_le_bytes());
    out.extend_from_slice(&data);
    out
}

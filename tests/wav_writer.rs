//! The WAV writer (src/io/wav_writer.rs) and the sample ring (src/ring.rs) read back through the
//! project's own reader (src/io/wav.rs: a RIFF walk of its own and symphonia's PCM decoder).
//! tests/python/test_wav_writer.py reads the same kind of files with Python's `wave` module and
//! scipy.io.wavfile.
//!
//! Expected values: 24-bit stores round(x·2^23) with ties to even, clipped to [−2^23, 2^23 − 1]
//! (the reader divides by 2^23, src/io/wav.rs); float stores x rounded to the nearest f32, which
//! reads back exactly as that f32.

mod common;

use std::io::Cursor;

use common::noise::Noise;
use noisesonde::io::{
    write_wav, SampleSource, WavEncoding, WavOptions, WavSource, WavSpec, WavWriteError,
};
use noisesonde::ring::SampleRing;

fn read_channel(bytes: &[u8], channel: usize) -> (Vec<f64>, noisesonde::io::SourceInfo) {
    let mut source = WavSource::new(
        Cursor::new(bytes.to_vec()),
        "written.wav",
        &WavOptions {
            channel,
            sample_rate_hz: None,
        },
    )
    .unwrap();
    let mut out = Vec::new();
    let mut block = vec![0.0; 1000];
    loop {
        let n = source.read(&mut block).unwrap();
        if n == 0 {
            break;
        }
        out.extend_from_slice(&block[..n]);
    }
    assert!(source.warnings().is_empty(), "{:?}", source.warnings());
    (out, source.info().clone())
}

/// Interleaved test samples: noise beyond full scale (to clip), exact full-scale values and
/// half-LSB ties.
fn samples(frames: usize, channels: usize, seed: u64) -> Vec<f64> {
    let lsb = 1.0 / 8_388_608.0;
    let mut x: Vec<f64> = Noise::new(seed)
        .normals(frames * channels)
        .iter()
        .map(|v| 0.45 * v)
        .collect();
    let specials = [
        1.0,
        -1.0,
        0.0,
        0.5 * lsb,
        1.5 * lsb,
        -2.5 * lsb,
        1.0 - 0.5 * lsb,
        -1.0 - lsb,
        3.0,
    ];
    for (slot, value) in x.iter_mut().zip(specials) {
        *slot = value;
    }
    x
}

fn expected_pcm24(x: f64) -> f64 {
    (x * 8_388_608.0)
        .round_ties_even()
        .clamp(-8_388_608.0, 8_388_607.0)
        / 8_388_608.0
}

#[test]
fn pcm24_and_float_round_trip_through_the_reader() {
    for (channels, frames) in [(1usize, 4801usize), (2, 1000), (3, 777)] {
        let x = samples(frames, channels, 11 + channels as u64);
        for encoding in [WavEncoding::Pcm24, WavEncoding::Float32] {
            let spec = WavSpec {
                sample_rate_hz: 48_000,
                channels: channels as u16,
                encoding,
            };
            let mut file = Vec::new();
            let written = write_wav(&mut file, &spec, &x).unwrap();
            assert_eq!(written.frames, frames as u64);
            assert_eq!(written.file_bytes, file.len() as u64);
            assert_eq!(file.len() % 2, 0, "RIFF files have even length");
            let what = format!("{encoding} {channels} ch");
            for channel in 0..channels {
                let (read, info) = read_channel(&file, channel);
                assert_eq!(info.channels, channels, "{what}");
                assert_eq!(info.sample_rate_hz, 48_000.0, "{what}");
                assert_eq!(read.len(), frames, "{what}");
                for (i, (&got, &sent)) in read
                    .iter()
                    .zip(x.iter().skip(channel).step_by(channels))
                    .enumerate()
                {
                    let want = match encoding {
                        WavEncoding::Pcm24 => expected_pcm24(sent),
                        WavEncoding::Float32 => sent as f32 as f64,
                    };
                    assert_eq!(
                        got, want,
                        "{what}: channel {channel} frame {i} (sent {sent})"
                    );
                }
            }
            let clipped = x
                .iter()
                .filter(|&&v| {
                    let code = (v * 8_388_608.0).round_ties_even();
                    !(-8_388_608.0..=8_388_607.0).contains(&code)
                })
                .count() as u64;
            match encoding {
                WavEncoding::Pcm24 => {
                    assert_eq!(written.clipped_samples, clipped, "{what}");
                    assert!(
                        clipped >= 4,
                        "the specials clip: 1.0, 1 − LSB/2, −1 − LSB, 3.0"
                    );
                    assert_eq!(info_format(&file), "WAV, PCM 24-bit signed integer");
                }
                WavEncoding::Float32 => {
                    assert_eq!(written.clipped_samples, 0, "{what}");
                    assert_eq!(info_format(&file), "WAV, IEEE float 32-bit");
                }
            }
        }
    }
}

fn info_format(file: &[u8]) -> String {
    read_channel(file, 0).1.format
}

#[test]
fn the_ring_saves_the_last_frames_as_a_wav_file() {
    let channels = 2;
    let x = samples(10_000, channels, 5);
    let mut ring = SampleRing::with_duration(channels, 0.05, 48_000.0).unwrap();
    assert_eq!(ring.capacity_frames(), 2400);
    for block in x.chunks(128 * channels) {
        ring.push(block).unwrap();
    }
    let mut file = Vec::new();
    let written = ring
        .write_wav(&mut file, 48_000, WavEncoding::Float32)
        .unwrap();
    assert_eq!(written.frames, 2400);
    let tail = &x[(10_000 - 2400) * channels..];
    for channel in 0..channels {
        let (read, _) = read_channel(&file, channel);
        let want: Vec<f64> = tail
            .iter()
            .skip(channel)
            .step_by(channels)
            .map(|&v| v as f32 as f64)
            .collect();
        assert_eq!(read, want, "channel {channel}");
    }
}

#[test]
fn non_finite_samples_are_refused_before_writing() {
    let spec = WavSpec {
        sample_rate_hz: 8000,
        channels: 1,
        encoding: WavEncoding::Pcm24,
    };
    let mut file = Vec::new();
    let err = write_wav(&mut file, &spec, &[0.1, f64::INFINITY]).unwrap_err();
    assert!(matches!(
        err,
        WavWriteError::NonFiniteSample { index: 1, .. }
    ));
    assert!(err.to_string().contains("sample 1 is inf"), "{err}");
    assert!(file.is_empty());
}

//! Writes a WAV file with the crate's writer, for `tests/python/test_wav_writer.py`.
//!
//! ```text
//! wav_write RATE_HZ CHANNELS ENCODING [RING_FRAMES] < samples.f64 > out.wav
//! ```
//!
//! Standard input holds interleaved little-endian f64 samples in full-scale units; ENCODING is
//! `float32` or `pcm24`. With RING_FRAMES the samples are pushed through a `SampleRing` of that
//! many frames in 128-frame blocks (the page's audio quantum) and the ring is written: the last
//! RING_FRAMES frames. On success one line `frames=N clipped=M` goes to standard error; on
//! failure the error's message, and the exit status is 1.

use std::io::{self, Read, Write};
use std::process::ExitCode;

use noisesonde::io::{write_wav, WavEncoding, WavSpec};
use noisesonde::ring::SampleRing;

/// Frames per block pushed into the ring.
const QUANTUM_FRAMES: usize = 128;
/// Bytes of one little-endian f64 sample.
const SAMPLE_BYTES: usize = std::mem::size_of::<f64>();

fn run(args: &[String]) -> Result<String, String> {
    let [rate, channels, encoding, rest @ ..] = args else {
        return Err(
            "usage: wav_write RATE_HZ CHANNELS ENCODING [RING_FRAMES] < samples.f64 > out.wav"
                .into(),
        );
    };
    let sample_rate_hz: u32 = rate.parse().map_err(|e| format!("RATE_HZ '{rate}': {e}"))?;
    let channels: u16 = channels
        .parse()
        .map_err(|e| format!("CHANNELS '{channels}': {e}"))?;
    let encoding: WavEncoding = encoding.parse().map_err(|e| format!("{e}"))?;
    let ring_frames: Option<usize> = match rest {
        [] => None,
        [frames] => Some(
            frames
                .parse()
                .map_err(|e| format!("RING_FRAMES '{frames}': {e}"))?,
        ),
        _ => return Err("too many arguments".into()),
    };
    let mut bytes = Vec::new();
    io::stdin()
        .read_to_end(&mut bytes)
        .map_err(|e| format!("reading standard input: {e}"))?;
    if bytes.len() % SAMPLE_BYTES != 0 {
        return Err(format!("{} bytes are not whole f64 samples", bytes.len()));
    }
    let samples: Vec<f64> = bytes
        .chunks_exact(SAMPLE_BYTES)
        .map(|b| {
            let mut le = [0u8; SAMPLE_BYTES];
            le.copy_from_slice(b);
            f64::from_le_bytes(le)
        })
        .collect();
    let mut file = Vec::new();
    let written = match ring_frames {
        None => {
            let spec = WavSpec {
                sample_rate_hz,
                channels,
                encoding,
            };
            write_wav(&mut file, &spec, &samples).map_err(|e| e.to_string())?
        }
        Some(frames) => {
            let channels = usize::from(channels);
            let mut ring = SampleRing::new(channels, frames).map_err(|e| e.to_string())?;
            for block in samples.chunks(QUANTUM_FRAMES * channels) {
                ring.push(block).map_err(|e| e.to_string())?;
            }
            ring.write_wav(&mut file, sample_rate_hz, encoding)
                .map_err(|e| e.to_string())?
        }
    };
    io::stdout()
        .write_all(&file)
        .and_then(|()| io::stdout().flush())
        .map_err(|e| format!("writing standard output: {e}"))?;
    Ok(format!(
        "frames={} clipped={}",
        written.frames, written.clipped_samples
    ))
}

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    match run(&args) {
        Ok(summary) => {
            eprintln!("{summary}");
            ExitCode::SUCCESS
        }
        Err(message) => {
            eprintln!("wav_write: {message}");
            ExitCode::FAILURE
        }
    }
}

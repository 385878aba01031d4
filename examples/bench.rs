//! Streaming throughput of the estimator core, for `xtask/bench.py` (`cargo xtask bench`).
//!
//! ```text
//! bench welch FILE [--sample-rate HZ] [--out PATH]
//! bench acf FILE MAX_LAG_LEN [--sample-rate HZ] [--out PATH]
//! ```
//!
//! FILE holds little-endian f64 samples. They are read through a `BufReader` in blocks of
//! [`BLOCK_LEN`] samples and pushed into the streaming estimator with default settings (Welch:
//! Hann, 4096 samples, 50 % overlap, mean detrend, mean average; ACF: biased). One JSON line
//! reports the samples, the wall time of reading plus estimating (measured here, so process
//! start-up is excluded) and a checksum of the result, which keeps the work observable.
//! `--out PATH` writes the result as little-endian f64: the Welch density, or the biased
//! autocovariance for lags 0..=MAX_LAG_LEN.

use std::fs::File;
use std::io::{self, BufReader, BufWriter, Read, Write};
use std::process::ExitCode;
use std::time::{Duration, Instant};

use noisesonde::acf::{Acf, AcfEstimator, AcfPlan};
use noisesonde::spectral::{Welch, WelchPlan, WelchSettings};

/// Samples per block pushed into the estimator.
const BLOCK_LEN: usize = 65_536;
/// Bytes of one little-endian f64 sample.
const SAMPLE_BYTES: usize = std::mem::size_of::<f64>();
/// Sample rate assumed when none is given (scales the density only, not the work).
const DEFAULT_SAMPLE_RATE_HZ: f64 = 48_000.0;

const USAGE: &str = "usage: bench welch FILE [--sample-rate HZ] [--out PATH]\n       \
                     bench acf FILE MAX_LAG_LEN [--sample-rate HZ] [--out PATH]";

enum Task {
    Welch,
    Read,
    Acf { max_lag_len: usize },
}

struct Options {
    task: Task,
    file: String,
    sample_rate_hz: f64,
    out: Option<String>,
}

fn parse_args(args: &[String]) -> Result<Options, String> {
    let mut positional = Vec::new();
    let mut sample_rate_hz = DEFAULT_SAMPLE_RATE_HZ;
    let mut out = None;
    let mut rest = args.iter();
    while let Some(arg) = rest.next() {
        match arg.as_str() {
            "--out" => out = Some(rest.next().ok_or("--out needs a PATH")?.clone()),
            "--sample-rate" => {
                let text = rest.next().ok_or("--sample-rate needs HZ")?;
                sample_rate_hz = text
                    .parse::<f64>()
                    .ok()
                    .filter(|hz| hz.is_finite() && *hz > 0.0)
                    .ok_or_else(|| format!("--sample-rate: `{text}` is not a positive number"))?;
            }
            _ if arg.starts_with("--") => return Err(format!("unknown option {arg}")),
            _ => positional.push(arg.as_str()),
        }
    }
    let task = match positional.as_slice() {
        ["welch", _] => Task::Welch,
        ["read", _] => Task::Read,
        ["acf", _, lag] => Task::Acf {
            max_lag_len: lag
                .parse()
                .map_err(|_| format!("MAX_LAG_LEN: `{lag}` is not a count of samples"))?,
        },
        _ => return Err("expected `welch FILE`, `acf FILE MAX_LAG_LEN` or `read FILE`".into()),
    };
    Ok(Options {
        task,
        file: positional[1].to_string(),
        sample_rate_hz,
        out,
    })
}

/// Reads the whole stream in blocks of little-endian f64, handing each block to `sink`.
/// Returns the number of samples read.
fn stream_samples(
    reader: &mut impl Read,
    mut sink: impl FnMut(&[f64]) -> Result<(), String>,
) -> Result<u64, String> {
    let mut bytes = vec![0u8; BLOCK_LEN * SAMPLE_BYTES];
    let mut samples = vec![0.0f64; BLOCK_LEN];
    let mut total = 0u64;
    loop {
        let filled = fill(reader, &mut bytes).map_err(|err| format!("read error: {err}"))?;
        if filled % SAMPLE_BYTES != 0 {
            return Err(format!(
                "the file ends inside a sample ({} stray bytes)",
                filled % SAMPLE_BYTES
            ));
        }
        let count = filled / SAMPLE_BYTES;
        for (sample, chunk) in samples.iter_mut().zip(bytes.chunks_exact(SAMPLE_BYTES)) {
            let mut le = [0u8; SAMPLE_BYTES];
            le.copy_from_slice(chunk);
            *sample = f64::from_le_bytes(le);
        }
        if count > 0 {
            sink(&samples[..count])?;
            total += count as u64;
        }
        if filled < bytes.len() {
            return Ok(total);
        }
    }
}

/// Reads until `buf` is full or the stream ends; returns the bytes read.
fn fill(reader: &mut impl Read, buf: &mut [u8]) -> io::Result<usize> {
    let mut filled = 0;
    while filled < buf.len() {
        match reader.read(&mut buf[filled..]) {
            Ok(0) => break,
            Ok(n) => filled += n,
            Err(err) if err.kind() == io::ErrorKind::Interrupted => {}
            Err(err) => return Err(err),
        }
    }
    Ok(filled)
}

fn write_f64s(path: &str, values: &[f64]) -> Result<(), String> {
    let file = File::create(path).map_err(|err| format!("cannot create {path}: {err}"))?;
    let mut out = BufWriter::new(file);
    for v in values {
        out.write_all(&v.to_le_bytes())
            .map_err(|err| format!("cannot write {path}: {err}"))?;
    }
    out.flush()
        .map_err(|err| format!("cannot write {path}: {err}"))
}

fn run(options: &Options) -> Result<(), String> {
    let started = Instant::now();
    let file =
        File::open(&options.file).map_err(|err| format!("cannot open {}: {err}", options.file))?;
    let mut reader = BufReader::with_capacity(BLOCK_LEN * SAMPLE_BYTES, file);
    let (task, samples, result, extra) = match options.task {
        Task::Welch => {
            let plan = WelchPlan::new(&WelchSettings::default()).map_err(|e| e.to_string())?;
            let mut welch = Welch::new(plan);
            let mut estimating = Duration::ZERO;
            let samples = stream_samples(&mut reader, |block| {
                let t = Instant::now();
                let pushed = welch.push(block).map_err(|e| e.to_string());
                estimating += t.elapsed();
                pushed
            })?;
            let t = Instant::now();
            let result = welch
                .finish(options.sample_rate_hz)
                .ok_or("fewer samples than one segment")?;
            estimating += t.elapsed();
            let extra = format!(
                r#""segments":{},"estimator_seconds":{:.6}"#,
                result.segments,
                estimating.as_secs_f64()
            );
            ("welch", samples, result.density, extra)
        }
        Task::Read => {
            // Reading and decoding alone: the floor under the other tasks' times.
            let mut sum = 0.0;
            let samples = stream_samples(&mut reader, |block| {
                sum += block.iter().sum::<f64>();
                Ok(())
            })?;
            (
                "read",
                samples,
                vec![sum],
                String::from(r#""reading":true"#),
            )
        }
        Task::Acf { max_lag_len } => {
            let mut acf = Acf::new(AcfPlan::new(max_lag_len).map_err(|e| e.to_string())?);
            let mut estimating = Duration::ZERO;
            let samples = stream_samples(&mut reader, |block| {
                let t = Instant::now();
                acf.push(block);
                estimating += t.elapsed();
                Ok(())
            })?;
            let t = Instant::now();
            let result = acf
                .finish(AcfEstimator::Biased)
                .ok_or("fewer than two samples")?;
            estimating += t.elapsed();
            let extra = format!(
                r#""max_lag_len":{},"estimator_seconds":{:.6}"#,
                result.lag_len.len() - 1,
                estimating.as_secs_f64()
            );
            ("acf", samples, result.autocovariance, extra)
        }
    };
    let seconds = started.elapsed().as_secs_f64();
    let checksum: f64 = result.iter().sum();
    if let Some(path) = &options.out {
        write_f64s(path, &result)?;
    }
    println!(
        r#"{{"task":"{task}","samples":{samples},"seconds":{seconds:.6},"checksum":{checksum:e},"values":{},{extra}}}"#,
        result.len()
    );
    Ok(())
}

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let options = match parse_args(&args) {
        Ok(options) => options,
        Err(message) => {
            eprintln!("bench: {message}\n{USAGE}");
            return ExitCode::from(2);
        }
    };
    match run(&options) {
        Ok(()) => ExitCode::SUCCESS,
        Err(message) => {
            eprintln!("bench: {message}");
            ExitCode::FAILURE
        }
    }
}

//! Helpers shared by the integration tests: the scipy/numpy reference vectors.
#![allow(dead_code)]

pub mod noise;

use std::path::PathBuf;

use noisesonde::io::{ReadError, SampleSource, SourceInfo};
use serde_json::Value;

/// Relative agreement required with scipy.signal.welch (the 1e-9).
pub const SCIPY_REL_TOL: f64 = 1e-9;
/// Absolute floor of the comparison, as a fraction of the largest value (bins that are zero up
/// to rounding, e.g. DC after mean removal, cannot agree relatively).
pub const SCIPY_ABS_FRAC: f64 = 1e-12;

pub fn reference_dir() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/reference")
}

pub fn vectors() -> Value {
    let text = std::fs::read_to_string(reference_dir().join("vectors.json"))
        .expect("tests/reference/vectors.json (run tests/reference/generate.py)");
    serde_json::from_str(&text).expect("valid JSON")
}

pub fn input(doc: &Value, name: &str) -> (Vec<f64>, f64) {
    let meta = &doc["inputs"][name];
    let file = reference_dir().join(meta["file"].as_str().expect("file"));
    let bytes = std::fs::read(file).expect("input file");
    let samples = bytes
        .chunks_exact(8)
        .map(|c| f64::from_le_bytes(c.try_into().expect("8 bytes")))
        .collect();
    (samples, meta["sample_rate_hz"].as_f64().expect("rate"))
}

pub fn floats(v: &Value) -> Vec<f64> {
    v.as_array()
        .expect("array")
        .iter()
        .map(|x| x.as_f64().expect("number"))
        .collect()
}

/// Asserts |a − b| ≤ rel·|b| + abs_frac·max|b| element-wise, naming the first failure.
pub fn assert_close(what: &str, actual: &[f64], expected: &[f64], rel: f64, abs_frac: f64) {
    assert_eq!(actual.len(), expected.len(), "{what}: length");
    let scale = expected.iter().fold(0.0_f64, |m, v| m.max(v.abs()));
    for (i, (a, b)) in actual.iter().zip(expected).enumerate() {
        let tol = rel * b.abs() + abs_frac * scale;
        assert!(
            (a - b).abs() <= tol,
            "{what}[{i}]: got {a:e}, reference {b:e} (difference {:e} > tolerance {tol:e})",
            (a - b).abs()
        );
    }
}

/// An in-memory source of full-scale samples, read at most 1000 at a time (so the pipeline's
/// block handling is exercised).
pub struct VecSource {
    pub info: SourceInfo,
    samples: Vec<f64>,
    pos: usize,
}

impl VecSource {
    pub fn new(samples: Vec<f64>, sample_rate_hz: f64) -> Self {
        Self {
            info: SourceInfo {
                name: "test".into(),
                format: "memory".into(),
                channels: 1,
                channel: 0,
                channel_name: None,
                channel_names: Vec::new(),
                sample_rate_hz,
                bits_per_sample: None,
                full_scale: true,
                clip_level_fs: Some(1.0),
                declared_frames: None,
            },
            samples,
            pos: 0,
        }
    }
}

impl SampleSource for VecSource {
    fn info(&self) -> &SourceInfo {
        &self.info
    }
    fn read(&mut self, out: &mut [f64]) -> Result<usize, ReadError> {
        let n = out.len().min(self.samples.len() - self.pos).min(1000);
        out[..n].copy_from_slice(&self.samples[self.pos..self.pos + n]);
        self.pos += n;
        Ok(n)
    }
    fn warnings(&self) -> &[String] {
        &[]
    }
}

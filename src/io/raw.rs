//! Raw binary reader (stub, being written).
use super::{ReadError, SampleSource, SourceInfo};

/// Sample encodings of raw input.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RawFormat {
    I16Le,
    I16Be,
    I32Le,
    I32Be,
    F32Le,
    F32Be,
    F64Le,
    F64Be,
}

/// Layout of raw input.
#[derive(Debug, Clone, PartialEq)]
pub struct RawOptions {}

/// Streaming reader of interleaved raw samples.
pub struct RawSource {
    info: SourceInfo,
    warnings: Vec<String>,
}

impl SampleSource for RawSource {
    fn info(&self) -> &SourceInfo {
        &self.info
    }
    fn read(&mut self, _out: &mut [f64]) -> Result<usize, ReadError> {
        Ok(0)
    }
    fn warnings(&self) -> &[String] {
        &self.warnings
    }
}

impl std::str::FromStr for RawFormat {
    type Err = String;
    fn from_str(text: &str) -> Result<Self, Self::Err> {
        Err(format!("raw format '{text}' not supported yet"))
    }
}

//! WAV/FLAC reader (stub, being written).
use super::{ReadError, SampleSource, SourceInfo};

/// Streaming reader of one channel of a WAV or FLAC file.
pub struct WavSource {
    info: SourceInfo,
    warnings: Vec<String>,
}

impl SampleSource for WavSource {
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

//! CSV/TSV text reader (stub, being written).
use super::{ReadError, SampleSource, SourceInfo};

/// A column chosen by header name or 0-based index.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum ColumnSelector {
    Name(String),
    Index(usize),
}

/// Options of the text reader.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct CsvOptions {}

/// Streaming reader of one numeric column of delimited text.
pub struct CsvSource {
    info: SourceInfo,
    warnings: Vec<String>,
}

impl SampleSource for CsvSource {
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

impl std::str::FromStr for ColumnSelector {
    type Err = String;
    fn from_str(text: &str) -> Result<Self, Self::Err> {
        Ok(match text.parse::<usize>() {
            Ok(i) => Self::Index(i),
            Err(_) => Self::Name(text.to_string()),
        })
    }
}

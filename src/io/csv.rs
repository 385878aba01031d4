//! CSV/TSV text reader: one numeric column of delimited text, parsed by the `csv` crate.
//!
//! - Delimiter: tab, semicolon or comma, sniffed from the first line that is not blank or a
//!   comment (tab if it has one, else semicolon if it has one, else comma), unless given.
//! - Header: the first row is a header when one of its fields is neither empty nor a number.
//! - Lines starting with `#` are comments; blank lines (and rows of empty fields) are skipped.
//! - Time column: chosen by [`CsvOptions::time_column`], or a header named (ignoring case)
//!   `time`, `t`, `time_s`, `seconds` or `timestamp`. The sample rate is 1 / the slope of a
//!   least-squares line of time against row index over the first [`TIME_FIT_ROWS`] rows; every
//!   row's time must then lie within [`TIME_TOLERANCE_PERIODS`] sample periods of that line.
//!
//! Memory stays constant in the file length: rows are read one at a time into one reused
//! record, at most [`TIME_FIT_ROWS`] values are buffered for the fit, and a line longer than
//! [`MAX_LINE_BYTES`] is an error.

use std::fmt;
use std::io::{BufRead, BufReader, Cursor, Read, SeekFrom};
use std::str::FromStr;

use super::{checked_sample_rate, io_error, ReadError, SampleSource, SourceInfo};

/// Rows buffered to fit the sample rate to the time column.
pub const TIME_FIT_ROWS: usize = 4096;

/// Largest distance, in sample periods, of a row's time from the fitted line.
pub const TIME_TOLERANCE_PERIODS: f64 = 0.5;

/// Largest relative difference between a given sample rate and the one derived from the time
/// column.
pub const RATE_AGREEMENT_REL: f64 = 1e-6;

/// Longest line accepted, in bytes, so that a binary file cannot make one record grow without bound.
pub const MAX_LINE_BYTES: usize = 1 << 20;

/// Header names (compared ignoring ASCII case) that mark a time column in seconds.
pub const TIME_COLUMN_NAMES: [&str; 5] = ["time", "t", "time_s", "seconds", "timestamp"];

/// Size of the read buffer over the text input, in bytes.
const TEXT_BUFFER_BYTES: usize = 64 * 1024;

/// Characters of a field quoted in an error message before it is cut short.
const QUOTED_FIELD_CHARS: usize = 40;

/// A column chosen by header name or 0-based index.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum ColumnSelector {
    /// The column whose header is this name (exact match first, then ignoring ASCII case).
    Name(String),
    /// The column at this 0-based position among all columns (the time column included).
    Index(usize),
}

impl fmt::Display for ColumnSelector {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ColumnSelector::Name(name) => write!(f, "'{name}'"),
            ColumnSelector::Index(index) => write!(f, "{index}"),
        }
    }
}

/// The text given for a [`ColumnSelector`] is empty or an index too large.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("column '{text}' is not usable: {problem}")]
pub struct ParseColumnSelectorError {
    /// The text that was given.
    pub text: String,
    /// What is wrong with it.
    pub problem: &'static str,
}

impl FromStr for ColumnSelector {
    type Err = ParseColumnSelectorError;

    /// A number (digits only) is a 0-based index; any other text is a header name. Surrounding
    /// spaces are ignored.
    fn from_str(text: &str) -> Result<Self, Self::Err> {
        let trimmed = text.trim();
        if trimmed.is_empty() {
            return Err(ParseColumnSelectorError {
                text: text.to_string(),
                problem: "give a header name or a 0-based column number",
            });
        }
        if trimmed.bytes().all(|b| b.is_ascii_digit()) {
            return trimmed
                .parse::<usize>()
                .map(ColumnSelector::Index)
                .map_err(|_| ParseColumnSelectorError {
                    text: text.to_string(),
                    problem: "the column number is too large",
                });
        }
        Ok(ColumnSelector::Name(trimmed.to_string()))
    }
}

/// Options of the text reader; `Default` reads the first data column and expects a time
/// column or a sample rate.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct CsvOptions {
    /// The n-th data column (the time column not counted), 0-based; `None`: the first.
    pub channel: Option<usize>,
    /// Data column by header name or index among all columns; overrides `channel`.
    pub column: Option<ColumnSelector>,
    /// Time column by header name or index; `None` looks for a header in [`TIME_COLUMN_NAMES`].
    pub time_column: Option<ColumnSelector>,
    /// Sample rate in hertz: required without a time column; with one, it must agree with the
    /// derived rate within [`RATE_AGREEMENT_REL`].
    pub sample_rate_hz: Option<f64>,
    /// Field delimiter byte; `None` sniffs tab, semicolon or comma.
    pub delimiter: Option<u8>,
}

/// Streaming reader of one numeric column of delimited text.
///
/// # Example
/// ```
/// use noisesonde::io::{CsvOptions, CsvSource, SampleSource};
///
/// let text = "# bench supply ripple\nvolts\t\tamps\n0.5\t\t1\n-0.25\t\t2\n";
/// let options = CsvOptions { sample_rate_hz: Some(10.0), ..CsvOptions::default() };
/// let mut source = CsvSource::new(text.as_bytes(), "ripple.tsv", &options)?;
/// assert_eq!(source.info().channel_name.as_deref(), Some("volts"));
/// let mut out = [0.0; 4];
/// assert_eq!(source.read(&mut out)?, 2);
/// assert_eq!(&out[..2], &[0.5, -0.25]);
/// # Ok::<(), noisesonde::io::ReadError>(())
/// ```
pub struct CsvSource {
    info: SourceInfo,
    warnings: Vec<String>,
    rows: Rows,
    data_column: usize,
    time: Option<TimeGrid>,
    /// Values read ahead (the first row, the rows of the time fit), handed out first.
    pending: Vec<f64>,
    pending_pos: usize,
    /// 0-based index of the next data row `rows` will return.
    next_row: u64,
    finished: bool,
}

/// The evenly spaced time grid fitted to the time column.
#[derive(Debug, Clone)]
struct TimeGrid {
    column: usize,
    /// Time of row 0 on the fitted line, in seconds.
    start_s: f64,
    /// Fitted sample period in seconds.
    period_s: f64,
}

impl TimeGrid {
    /// Checks a row's time against the grid.
    fn check(&self, name: &str, row: u64, line: u64, time_s: f64) -> Result<(), ReadError> {
        let expected_s = self.start_s + self.period_s * row as f64;
        let offset_periods = (time_s - expected_s) / self.period_s;
        if offset_periods.abs() > TIME_TOLERANCE_PERIODS {
            return Err(ReadError::UnevenTime {
                name: name.to_string(),
                line,
                time_s,
                expected_s,
                offset_periods,
                sample_rate_hz: 1.0 / self.period_s,
            });
        }
        Ok(())
    }
}

/// Physical lines of the input, numbered, at most [`MAX_LINE_BYTES`] each.
struct Lines {
    input: BufReader<Box<dyn Read + Send>>,
    /// 1-based number of the last line read.
    number: u64,
}

impl Lines {
    /// Reads the next line that is neither blank nor a `#` comment into `line` (terminator
    /// included); returns `false` at the end of the input.
    fn next_content(&mut self, line: &mut Vec<u8>, name: &str) -> Result<bool, ReadError> {
        loop {
            line.clear();
            let limit = MAX_LINE_BYTES as u64 + 1;
            let got = (&mut self.input)
                .take(limit)
                .read_until(b'\n', line)
                .map_err(|e| io_error(name, e))?;
            if got == 0 {
                return Ok(false);
            }
            self.number += 1;
            if got as u64 == limit && line.last() != Some(&b'\n') {
                return Err(ReadError::LineTooLong {
                    name: name.to_string(),
                    line: self.number,
                    limit_bytes: MAX_LINE_BYTES,
                });
            }
            if self.number == 1 && line.starts_with(UTF8_BOM) {
                line.drain(..UTF8_BOM.len());
            }
            let content = line.trim_ascii();
            if !content.is_empty() && !content.starts_with(b"#") {
                return Ok(true);
            }
        }
    }
}

/// Records of the input: the csv crate splits each content line into fields.
///
/// Lines are read here, not by the csv reader, so that line numbers in messages are exact
/// (csv 1.4 reports the position before skipped blank and comment lines, and counts CRLF
/// lines late). Each line is handed to one reused csv reader through its cursor, after a
/// `seek_raw` that resets its state. A quoted field cannot span lines.
struct Rows {
    name: String,
    lines: Lines,
    parser: csv::Reader<Cursor<Vec<u8>>>,
    record: csv::ByteRecord,
    /// Whether the parser may hold more records of the current line (lines ended by a bare
    /// carriage return hold several).
    line_open: bool,
}

impl Rows {
    /// Reads the next record that is not skipped into `self.record`; returns its line number,
    /// or `None` at the end.
    fn next(&mut self) -> Result<Option<u64>, ReadError> {
        loop {
            if self.line_open {
                let got = self
                    .parser
                    .read_byte_record(&mut self.record)
                    .map_err(|e| csv_error(&self.name, self.lines.number, e))?;
                if got {
                    if is_skippable(&self.record) {
                        continue;
                    }
                    return Ok(Some(self.lines.number));
                }
                self.line_open = false;
            }
            let line = self.parser.get_mut().get_mut();
            if !self.lines.next_content(line, &self.name)? {
                return Ok(None);
            }
            self.parser
                .seek_raw(SeekFrom::Start(0), csv::Position::new())
                .map_err(|e| csv_error(&self.name, self.lines.number, e))?;
            self.line_open = true;
        }
    }

    /// The field of `column` in the current record, or [`ReadError::MissingField`].
    fn field(&self, column: usize, line: u64) -> Result<&[u8], ReadError> {
        self.record.get(column).ok_or(ReadError::MissingField {
            name: self.name.clone(),
            line,
            fields: self.record.len(),
            column,
        })
    }

    /// The number in `column` of the current record.
    fn number(&self, column: usize, line: u64) -> Result<f64, ReadError> {
        parse_value(&self.name, line, self.field(column, line)?)
    }
}

fn csv_error(name: &str, line: u64, error: csv::Error) -> ReadError {
    match error.into_kind() {
        csv::ErrorKind::Io(e) => io_error(name, e),
        other => ReadError::Csv {
            name: name.to_string(),
            line,
            detail: format!("{other:?}"),
        },
    }
}

/// A field for an error message: lossy UTF-8, cut to [`QUOTED_FIELD_CHARS`] characters.
fn quoted(field: &[u8]) -> String {
    let text = String::from_utf8_lossy(field);
    if text.chars().count() > QUOTED_FIELD_CHARS {
        let cut: String = text.chars().take(QUOTED_FIELD_CHARS).collect();
        format!("{cut}...")
    } else {
        text.into_owned()
    }
}

fn parse_number(field: &[u8]) -> Option<f64> {
    std::str::from_utf8(field).ok()?.trim().parse::<f64>().ok()
}

/// Parses a finite number or says why not.
fn parse_value(name: &str, line: u64, field: &[u8]) -> Result<f64, ReadError> {
    match parse_number(field) {
        Some(value) if value.is_finite() => Ok(value),
        Some(_) => Err(ReadError::NonFinite {
            name: name.to_string(),
            line,
            text: quoted(field),
        }),
        None => Err(ReadError::NotANumber {
            name: name.to_string(),
            line,
            text: quoted(field),
        }),
    }
}

/// Records to skip: every field empty (a blank line, or only delimiters), or a `#` comment
/// within a line ended by a bare carriage return.
fn is_skippable(record: &csv::ByteRecord) -> bool {
    record.iter().all(|field| field.is_empty())
        || record
            .get(0)
            .is_some_and(|field| field.trim_ascii_start().starts_with(b"#"))
}

const UTF8_BOM: &[u8] = b"\xEF\xBB\xBF";

fn sniff_delimiter(line: &[u8]) -> u8 {
    if line.contains(&b'\t') {
        b'\t'
    } else if line.contains(&b';') {
        b';'
    } else {
        b','
    }
}

impl CsvSource {
    /// Reads the first rows of delimited text (header, delimiter, time fit) and prepares to
    /// stream the chosen column.
    ///
    /// # Errors
    /// [`ReadError::NotANumber`] and [`ReadError::NonFinite`] naming the line and the text,
    /// [`ReadError::MissingField`], [`ReadError::ColumnNotFound`],
    /// [`ReadError::ChannelOutOfRange`], [`ReadError::MissingSampleRate`] (no time column and
    /// no `sample_rate_hz`), [`ReadError::BadTimeColumn`], [`ReadError::UnevenTime`],
    /// [`ReadError::SampleRateMismatch`], [`ReadError::InvalidSampleRate`],
    /// [`ReadError::InvalidOption`], [`ReadError::NoData`], [`ReadError::LineTooLong`],
    /// [`ReadError::Csv`] and [`ReadError::Io`].
    pub fn new<R: Read + Send + 'static>(
        reader: R,
        name: &str,
        options: &CsvOptions,
    ) -> Result<Self, ReadError> {
        if let Some(hz) = options.sample_rate_hz {
            checked_sample_rate(name, hz, "given with --sample-rate")?;
        }
        let boxed: Box<dyn Read + Send> = Box::new(reader);
        let mut lines = Lines {
            input: BufReader::with_capacity(TEXT_BUFFER_BYTES, boxed),
            number: 0,
        };
        let no_rows = || ReadError::NoData {
            name: name.to_string(),
            problem: "the text has only comments or blank lines".to_string(),
        };
        // The delimiter is sniffed from the first content line, so the parser is built after it.
        let mut first_line = Vec::new();
        if !lines.next_content(&mut first_line, name)? {
            return Err(no_rows());
        }
        let delimiter = options
            .delimiter
            .unwrap_or_else(|| sniff_delimiter(&first_line));
        let mut parser = csv::ReaderBuilder::new()
            .delimiter(delimiter)
            .has_headers(false)
            .flexible(true)
            .trim(csv::Trim::All)
            .from_reader(Cursor::new(first_line));
        parser
            .seek_raw(SeekFrom::Start(0), csv::Position::new())
            .map_err(|e| csv_error(name, lines.number, e))?;
        let mut rows = Rows {
            name: name.to_string(),
            lines,
            parser,
            record: csv::ByteRecord::new(),
            line_open: true,
        };

        let first_line_number = rows.next()?.ok_or_else(no_rows)?;
        let first = &rows.record;
        let column_count = first.len();
        let has_header = first
            .iter()
            .any(|field| !field.is_empty() && parse_number(field).is_none());
        let headers: Option<Vec<String>> = has_header.then(|| {
            first
                .iter()
                .map(|field| String::from_utf8_lossy(field).trim().to_string())
                .collect()
        });

        let columns = Columns {
            name,
            headers: headers.as_deref(),
            count: column_count,
        };
        let time_column = match &options.time_column {
            Some(selector) => Some(columns.find(selector, "time")?),
            None => headers.as_ref().and_then(|names| {
                names.iter().position(|header| {
                    TIME_COLUMN_NAMES
                        .iter()
                        .any(|time| header.eq_ignore_ascii_case(time))
                })
            }),
        };
        let data_columns: Vec<usize> = (0..column_count)
            .filter(|&c| Some(c) != time_column)
            .collect();
        if data_columns.is_empty() {
            return Err(ReadError::NoData {
                name: name.to_string(),
                problem: format!(
                    "the only column is the time column {}; add a column of samples",
                    columns.label(time_column.unwrap_or(0))
                ),
            });
        }
        let (data_column, channel) = match &options.column {
            Some(selector) => {
                let column = columns.find(selector, "data")?;
                if Some(column) == time_column {
                    return Err(ReadError::InvalidOption {
                        name: name.to_string(),
                        option: format!("--column {selector}"),
                        problem: "is the time column; choose a column of samples, or set \
                                  --time-column to another column"
                            .to_string(),
                    });
                }
                let channel = data_columns.iter().position(|&c| c == column).unwrap_or(0);
                (column, channel)
            }
            None => {
                let channel = options.channel.unwrap_or(0);
                let column = *data_columns
                    .get(channel)
                    .ok_or(ReadError::ChannelOutOfRange {
                        name: name.to_string(),
                        channel,
                        channels: data_columns.len(),
                    })?;
                (column, channel)
            }
        };
        let time_label = time_column.map(|c| columns.label(c));

        let mut source = CsvSource {
            info: SourceInfo {
                name: name.to_string(),
                format: match delimiter {
                    b'\t' => "TSV text (tab-separated)".to_string(),
                    b';' => "CSV text (semicolon-separated)".to_string(),
                    b',' => "CSV text (comma-separated)".to_string(),
                    other => format!(
                        "CSV text (separated by '{}')",
                        char::from(other).escape_default()
                    ),
                },
                channels: data_columns.len(),
                channel,
                channel_name: headers.as_ref().and_then(|h| h.get(data_column).cloned()),
                channel_names: if headers.is_some() {
                    data_columns.iter().map(|&c| columns.label(c)).collect()
                } else {
                    Vec::new()
                },
                sample_rate_hz: 0.0,
                bits_per_sample: None,
                full_scale: false,
                clip_level_fs: None,
                declared_frames: None,
            },
            warnings: Vec::new(),
            rows,
            data_column,
            time: None,
            pending: Vec::new(),
            pending_pos: 0,
            next_row: 0,
            finished: false,
        };

        // The first record is data when it is not a header; it is still in `rows.record`.
        let first_is_data = !has_header;
        match (time_column, time_label) {
            (Some(column), Some(label)) => {
                source.fit_time(
                    column,
                    label,
                    first_is_data.then_some(first_line_number),
                    options,
                )?;
            }
            _ => {
                let sample_rate_hz =
                    options
                        .sample_rate_hz
                        .ok_or_else(|| ReadError::MissingSampleRate {
                            name: name.to_string(),
                            what: "text without a time column",
                            hint: " (or name its time column with --time-column)",
                        })?;
                source.info.sample_rate_hz = sample_rate_hz;
                if first_is_data {
                    let value = source.rows.number(data_column, first_line_number)?;
                    source.pending.push(value);
                    source.next_row = 1;
                } else {
                    match source.rows.next()? {
                        Some(line) => {
                            let value = source.row_value(line)?;
                            source.pending.push(value);
                        }
                        None => {
                            return Err(ReadError::NoData {
                                name: name.to_string(),
                                problem: "the text has a header row but no rows of numbers"
                                    .to_string(),
                            })
                        }
                    }
                }
            }
        }
        Ok(source)
    }

    pub(crate) fn push_warning(&mut self, warning: String) {
        self.warnings.push(warning);
    }

    /// The data value of the current record, checking its time against the grid.
    fn row_value(&mut self, line: u64) -> Result<f64, ReadError> {
        let value = self.rows.number(self.data_column, line)?;
        if let Some(grid) = &self.time {
            let time_s = self.rows.number(grid.column, line)?;
            grid.check(&self.info.name, self.next_row, line, time_s)?;
        }
        self.next_row += 1;
        Ok(value)
    }

    /// Buffers up to [`TIME_FIT_ROWS`] rows, fits the time grid, checks those rows against it
    /// and sets the sample rate. `first_line` is the line of the current record when that
    /// record holds data.
    fn fit_time(
        &mut self,
        column: usize,
        label: String,
        first_line: Option<u64>,
        options: &CsvOptions,
    ) -> Result<(), ReadError> {
        let name = self.info.name.clone();
        let mut times: Vec<(f64, u64)> = Vec::with_capacity(TIME_FIT_ROWS);
        let mut line = first_line;
        if line.is_none() {
            line = self.rows.next()?;
        }
        while let Some(at) = line {
            let value = self.rows.number(self.data_column, at)?;
            let time_s = self.rows.number(column, at)?;
            self.pending.push(value);
            times.push((time_s, at));
            if times.len() == TIME_FIT_ROWS {
                break;
            }
            line = self.rows.next()?;
        }
        if times.len() < 2 {
            return Err(ReadError::BadTimeColumn {
                name,
                time_column: label,
                problem: format!(
                    "{} row(s) of data; at least 2 are needed to derive the sample rate \
                     (or pass --sample-rate HZ and drop the time column with --column)",
                    times.len()
                ),
            });
        }

        // Least squares t_i = a + b*i, on times relative to the first to keep precision with
        // large absolute time stamps.
        let t0 = times.first().map_or(0.0, |&(t, _)| t);
        let n = times.len() as f64;
        let mean_i = (n - 1.0) / 2.0;
        let mean_t = times.iter().map(|&(t, _)| t - t0).sum::<f64>() / n;
        let mut s_it = 0.0;
        let mut s_ii = 0.0;
        for (i, &(t, _)) in times.iter().enumerate() {
            let di = i as f64 - mean_i;
            s_it += di * (t - t0 - mean_t);
            s_ii += di * di;
        }
        let period_s = s_it / s_ii;
        if !(period_s.is_finite() && period_s > 0.0) {
            return Err(ReadError::BadTimeColumn {
                name,
                time_column: label,
                problem: format!(
                    "the times do not increase (fitted sample period {period_s} s over the first \
                     {} rows); check that this column holds times in seconds",
                    times.len()
                ),
            });
        }
        let derived_hz =
            checked_sample_rate(&name, 1.0 / period_s, "derived from the time column")?;
        let grid = TimeGrid {
            column,
            start_s: t0 + mean_t - period_s * mean_i,
            period_s,
        };
        for (row, &(time_s, line)) in times.iter().enumerate() {
            grid.check(&name, row as u64, line, time_s)?;
        }
        let sample_rate_hz = match options.sample_rate_hz {
            Some(given_hz) if ((given_hz - derived_hz) / derived_hz).abs() > RATE_AGREEMENT_REL => {
                return Err(ReadError::SampleRateMismatch {
                    name,
                    given_hz,
                    derived_hz,
                    time_column: label,
                });
            }
            Some(given_hz) => given_hz,
            None => derived_hz,
        };
        self.info.sample_rate_hz = sample_rate_hz;
        self.next_row = times.len() as u64;
        self.time = Some(grid);
        Ok(())
    }
}

/// Column lookup for messages and selectors.
struct Columns<'a> {
    name: &'a str,
    headers: Option<&'a [String]>,
    count: usize,
}

impl Columns<'_> {
    fn label(&self, column: usize) -> String {
        match self.headers.and_then(|h| h.get(column)) {
            Some(header) => header.clone(),
            None => column.to_string(),
        }
    }

    fn available(&self) -> String {
        match self.headers {
            Some(headers) => {
                let names: Vec<String> = headers
                    .iter()
                    .enumerate()
                    .map(|(i, h)| format!("{i}: '{h}'"))
                    .collect();
                names.join(", ")
            }
            None => format!(
                "0 to {} (no header row, so only numbers select columns)",
                self.count.saturating_sub(1)
            ),
        }
    }

    fn find(&self, selector: &ColumnSelector, role: &'static str) -> Result<usize, ReadError> {
        let found = match selector {
            ColumnSelector::Index(index) => (*index < self.count).then_some(*index),
            ColumnSelector::Name(wanted) => self.headers.and_then(|headers| {
                headers
                    .iter()
                    .position(|h| h == wanted)
                    .or_else(|| headers.iter().position(|h| h.eq_ignore_ascii_case(wanted)))
            }),
        };
        found.ok_or_else(|| ReadError::ColumnNotFound {
            name: self.name.to_string(),
            role,
            wanted: selector.to_string(),
            available: self.available(),
        })
    }
}

impl SampleSource for CsvSource {
    fn info(&self) -> &SourceInfo {
        &self.info
    }

    fn read(&mut self, out: &mut [f64]) -> Result<usize, ReadError> {
        let mut written = 0;
        for slot in out.iter_mut() {
            if let Some(&value) = self.pending.get(self.pending_pos) {
                *slot = value;
                self.pending_pos += 1;
                written += 1;
                continue;
            }
            if !self.pending.is_empty() {
                // Release the read-ahead buffer once it is handed out.
                self.pending = Vec::new();
                self.pending_pos = 0;
            }
            if self.finished {
                break;
            }
            match self.rows.next()? {
                Some(line) => {
                    *slot = self.row_value(line)?;
                    written += 1;
                }
                None => {
                    self.finished = true;
                    break;
                }
            }
        }
        Ok(written)
    }

    fn warnings(&self) -> &[String] {
        &self.warnings
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn selector_parses_numbers_as_indices() {
        assert_eq!("3".parse::<ColumnSelector>(), Ok(ColumnSelector::Index(3)));
        assert_eq!(
            " volts ".parse::<ColumnSelector>(),
            Ok(ColumnSelector::Name("volts".to_string()))
        );
        assert_eq!(
            "-1".parse::<ColumnSelector>(),
            Ok(ColumnSelector::Name("-1".to_string()))
        );
        let err = "".parse::<ColumnSelector>().unwrap_err().to_string();
        assert!(
            err.contains("header name or a 0-based column number"),
            "{err}"
        );
        let err = "99999999999999999999999"
            .parse::<ColumnSelector>()
            .unwrap_err()
            .to_string();
        assert!(err.contains("too large"), "{err}");
    }

    #[test]
    fn delimiter_sniffing() {
        assert_eq!(sniff_delimiter(b"1\t2,5"), b'\t');
        assert_eq!(sniff_delimiter(b"1;2,5"), b';');
        assert_eq!(sniff_delimiter(b"1,2"), b',');
        assert_eq!(sniff_delimiter(b"1"), b',');
    }
}

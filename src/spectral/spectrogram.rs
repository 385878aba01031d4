//! A bounded spectrogram built from the Welch estimator's own segments.
//!
//! # Method
//! Each Welch segment's one-sided periodogram c·|X[k]|² (c = 2 except at DC and Nyquist) is
//! reduced to at most [`MAX_ROWS`] rows of g = ⌈bins/MAX_ROWS⌉ adjacent bins (the mean over the
//! row's bins), and the rows of consecutive segments are summed into columns of p segments.
//! When [`MAX_COLUMNS`] columns are complete, neighbouring columns are averaged pairwise and p
//! doubles, so memory stays at MAX_COLUMNS × MAX_ROWS values whatever the record's length, and
//! a record of at least MAX_COLUMNS/2 segments ends with MAX_COLUMNS/2 to MAX_COLUMNS − 1
//! complete columns plus the segments after them (a last, partial column). Each column is then
//! scaled like the Welch density, 1/(f_s Σw²): a column is the mean-averaged Welch PSD of its
//! segments (whatever averaging the main PSD uses), at the row resolution, in units²/Hz.
//!
//! The columns do not depend on how the caller cuts its blocks: they follow segment indices, and
//! the partial sums of one batch are added in segment order.

use serde::{Deserialize, Serialize};

/// Most frequency rows kept (adjacent bins are averaged to stay within it).
pub const MAX_ROWS: usize = 256;
/// Most time columns kept (adjacent columns are averaged pairwise when it is reached).
pub const MAX_COLUMNS: usize = 256;

/// How bins map onto rows, fixed by the number of one-sided bins.
#[derive(Debug, Clone, PartialEq)]
pub struct SpectrogramLayout {
    bins: usize,
    bins_per_row: usize,
    rows: usize,
    /// Per bin: its one-sided factor divided by the number of bins in its row.
    weights: Vec<f64>,
}

impl SpectrogramLayout {
    /// The layout for `bins` one-sided bins of an L-point transform (`has_nyquist`: L even).
    pub fn new(bins: usize, has_nyquist: bool) -> Self {
        let bins_per_row = bins.div_ceil(MAX_ROWS).max(1);
        let rows = bins.div_ceil(bins_per_row);
        let weights = (0..bins)
            .map(|bin| {
                let row = bin / bins_per_row;
                let in_row = bins_per_row.min(bins - row * bins_per_row);
                let one_sided = if bin == 0 || (has_nyquist && bin == bins - 1) {
                    1.0
                } else {
                    2.0
                };
                one_sided / in_row as f64
            })
            .collect();
        Self {
            bins,
            bins_per_row,
            rows,
            weights,
        }
    }

    /// Rows of the spectrogram.
    pub fn rows(&self) -> usize {
        self.rows
    }

    /// Adds one segment's |X[k]|² (given as `power(bin)`) into `row_sums`.
    pub(crate) fn add_segment(&self, row_sums: &mut [f64], power: impl Fn(usize) -> f64) {
        for (row, sum) in row_sums.iter_mut().enumerate() {
            let start = row * self.bins_per_row;
            let end = (start + self.bins_per_row).min(self.bins);
            *sum += (start..end)
                .map(|bin| self.weights[bin] * power(bin))
                .sum::<f64>();
        }
    }
}

/// The row sums of runs of consecutive segments that lie in one column, as one worker thread
/// produces them for its share of a batch. Preallocated for the most runs a share can hold.
#[derive(Debug, Clone)]
pub(crate) struct ColumnParts {
    rows: usize,
    sums: Vec<f64>,
    segments: Vec<u64>,
    /// Column index (at `per_column`) of the last run.
    last_column: Option<u64>,
    per_column: u64,
}

impl ColumnParts {
    /// Room for `max_runs` runs of `rows` values.
    pub(crate) fn new(rows: usize, max_runs: usize) -> Self {
        Self {
            rows,
            sums: Vec::with_capacity(rows * max_runs),
            segments: Vec::with_capacity(max_runs),
            last_column: None,
            per_column: 1,
        }
    }

    /// Forgets the runs; the next segments are grouped `per_column` to a column.
    pub(crate) fn reset(&mut self, per_column: u64) {
        self.sums.clear();
        self.segments.clear();
        self.last_column = None;
        self.per_column = per_column.max(1);
    }

    /// The row sums to add segment `index` (0-based in the record) into.
    pub(crate) fn slot_for(&mut self, index: u64) -> &mut [f64] {
        let column = index / self.per_column;
        if self.last_column != Some(column) {
            self.sums.extend(std::iter::repeat_n(0.0, self.rows));
            self.segments.push(0);
            self.last_column = Some(column);
        }
        if let Some(last) = self.segments.last_mut() {
            *last += 1;
        }
        let start = self.sums.len() - self.rows;
        &mut self.sums[start..]
    }
}

/// The columns built so far.
#[derive(Debug, Clone)]
pub(crate) struct ColumnStore {
    rows: usize,
    per_column: u64,
    complete: Vec<f64>,
    complete_columns: usize,
    current: Vec<f64>,
    current_segments: u64,
}

impl ColumnStore {
    pub(crate) fn new(rows: usize) -> Self {
        Self {
            rows,
            per_column: 1,
            complete: Vec::with_capacity(rows * MAX_COLUMNS),
            complete_columns: 0,
            current: vec![0.0; rows],
            current_segments: 0,
        }
    }

    /// Segments per complete column now (the workers group by it).
    pub(crate) fn per_column(&self) -> u64 {
        self.per_column
    }

    /// Adds a worker's runs, in segment order. Each run lies within one column of the layout the
    /// worker used, and so within one column now (columns only ever merge).
    pub(crate) fn add(&mut self, parts: &ColumnParts) {
        for (run, &segments) in parts.segments.iter().enumerate() {
            let sums = &parts.sums[run * self.rows..(run + 1) * self.rows];
            for (acc, s) in self.current.iter_mut().zip(sums) {
                *acc += s;
            }
            self.current_segments += segments;
            debug_assert!(self.current_segments <= self.per_column);
            if self.current_segments >= self.per_column {
                self.complete.extend_from_slice(&self.current);
                self.complete_columns += 1;
                self.current.fill(0.0);
                self.current_segments = 0;
                if self.complete_columns == MAX_COLUMNS {
                    self.merge_pairs();
                }
            }
        }
    }

    fn merge_pairs(&mut self) {
        let rows = self.rows;
        let half = self.complete_columns / 2;
        for c in 0..half {
            for r in 0..rows {
                self.complete[c * rows + r] =
                    self.complete[2 * c * rows + r] + self.complete[(2 * c + 1) * rows + r];
            }
        }
        self.complete.truncate(half * rows);
        self.complete_columns = half;
        self.per_column *= 2;
    }

    /// The spectrogram: sums divided by each column's segment count and scaled by
    /// `density_scale` = 1/(f_s Σw²); `step_s` and `segment_s` place the columns in time.
    pub(crate) fn finish(
        &self,
        layout: &SpectrogramLayout,
        density_scale: f64,
        bin_width_hz: f64,
        step_s: f64,
        segment_s: f64,
    ) -> Option<Spectrogram> {
        let partial = usize::from(self.current_segments > 0);
        let columns = self.complete_columns + partial;
        if columns == 0 {
            return None;
        }
        let p = self.per_column as f64;
        let mut density = Vec::with_capacity(columns * self.rows);
        density.extend(self.complete.iter().map(|s| s * density_scale / p));
        let last = self.current_segments as f64;
        if partial == 1 {
            density.extend(self.current.iter().map(|s| s * density_scale / last));
        }
        let mut start_s = Vec::with_capacity(columns);
        let mut end_s = Vec::with_capacity(columns);
        for c in 0..columns {
            let first = c as f64 * p;
            let count = if c < self.complete_columns { p } else { last };
            start_s.push(first * step_s);
            end_s.push((first + count - 1.0) * step_s + segment_s);
        }
        let g = layout.bins_per_row;
        let frequency_hz = (0..layout.rows)
            .map(|row| {
                let start = row * g;
                let end = (start + g).min(layout.bins);
                // The mean of the row's bin centres.
                0.5 * (start + end - 1) as f64 * bin_width_hz
            })
            .collect();
        Some(Spectrogram {
            frequency_hz,
            bins_per_row: g,
            start_s,
            end_s,
            segments_per_column: self.per_column,
            last_column_segments: if partial == 1 {
                self.current_segments
            } else {
                self.per_column
            },
            density,
        })
    }
}

/// Welch PSDs of consecutive stretches of the record at a coarser frequency resolution.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Spectrogram {
    /// Centre of each row (the mean of its bins' centre frequencies), Hz.
    pub frequency_hz: Vec<f64>,
    /// Adjacent Welch bins averaged into one row.
    pub bins_per_row: usize,
    /// Start of each column (its first segment's start), s.
    pub start_s: Vec<f64>,
    /// End of each column (its last segment's end), s.
    pub end_s: Vec<f64>,
    /// Welch segments averaged in each column but the last.
    pub segments_per_column: u64,
    /// Welch segments in the last column (fewer when the record ended inside it).
    pub last_column_segments: u64,
    /// Mean density over each row's bins, column after column: column c's rows at
    /// [c·rows, (c+1)·rows), rows = `frequency_hz.len()`; units²/Hz.
    pub density: Vec<f64>,
}

//! Per-pixel min/max decimation of a polyline.
//!
//! # Method
//! Points are grouped by the pixel column `floor(x_px)` they fall in. Each column keeps its
//! first and last point (so the line joins its neighbours where it really does) and its
//! smallest and largest value (so every peak and dip is drawn at full height), in their
//! original order: at most four points per column. A line drawn through what is kept covers
//! the same pixels as one drawn through every point, to within the line's joins inside a
//! column. This is the "M4" aggregation of Jugel et al. (2014, "M4: A Visualization-Oriented
//! Time Series Data Aggregation", PVLDB 7(10)); striding through the points instead would drop a
//! spur one bin wide.

/// Indices of the points of (`x_px`, `y`) to draw: per pixel column, the first, smallest,
/// largest and last point, ascending and without repeats.
///
/// `x_px` must be non-decreasing (it is for a spectrum or a lag axis). Points with a non-finite
/// `x_px` are skipped; a NaN `y` is kept only as a column's first or last point. Only the
/// shorter of the two slices' lengths is used. With at most two points per column everything
/// is kept.
///
/// ```
/// use noisesonde::plot::decimate_min_max_indices;
/// // Six points in two pixel columns; the spur at index 2 survives.
/// let x = [0.0, 0.2, 0.4, 0.6, 1.1, 1.5];
/// let y = [1.0, 1.0, 9.0, 1.0, 2.0, 3.0];
/// assert_eq!(decimate_min_max_indices(&x, &y), vec![0, 2, 3, 4, 5]);
/// ```
pub fn decimate_min_max_indices(x_px: &[f64], y: &[f64]) -> Vec<usize> {
    let len = x_px.len().min(y.len());
    let mut kept = Vec::new();
    let mut column: Option<Column> = None;
    for (i, (&x, &v)) in x_px.iter().zip(y).enumerate().take(len) {
        if !x.is_finite() {
            continue;
        }
        let id = x.floor();
        match column.as_mut() {
            Some(c) if c.id == id => c.add(i, v),
            _ => {
                if let Some(c) = column.take() {
                    c.emit(&mut kept);
                }
                column = Some(Column::new(id, i, v));
            }
        }
    }
    if let Some(c) = column {
        c.emit(&mut kept);
    }
    kept
}

/// The points of (`x_px`, `y`) kept by [`decimate_min_max_indices`], as (`x_px`, `y`) pairs.
///
/// ```
/// use noisesonde::plot::decimate_min_max;
/// // 1000 points over 10 pixel columns: at most 4 per column survive, the spur among them.
/// let x: Vec<f64> = (0..1000).map(|i| i as f64 / 100.0).collect();
/// let mut y = vec![0.0; 1000];
/// y[437] = 60.0;
/// let kept = decimate_min_max(&x, &y);
/// assert!(kept.len() <= 40);
/// assert!(kept.contains(&(4.37, 60.0)));
/// ```
pub fn decimate_min_max(x_px: &[f64], y: &[f64]) -> Vec<(f64, f64)> {
    decimate_min_max_indices(x_px, y)
        .into_iter()
        .filter_map(|i| Some((*x_px.get(i)?, *y.get(i)?)))
        .collect()
}

/// One pixel column being gathered.
struct Column {
    id: f64,
    first: usize,
    last: usize,
    min: (usize, f64),
    max: (usize, f64),
}

impl Column {
    fn new(id: f64, i: usize, v: f64) -> Self {
        Self {
            id,
            first: i,
            last: i,
            min: (i, v),
            max: (i, v),
        }
    }

    fn add(&mut self, i: usize, v: f64) {
        self.last = i;
        // NaN compares false both ways, so it never becomes the minimum or maximum, and a NaN
        // first value is replaced by the first real one.
        if v < self.min.1 || self.min.1.is_nan() {
            self.min = (i, v);
        }
        if v > self.max.1 || self.max.1.is_nan() {
            self.max = (i, v);
        }
    }

    fn emit(self, out: &mut Vec<usize>) {
        let mut points = [self.first, self.min.0, self.max.0, self.last];
        points.sort_unstable();
        for p in points {
            if out.last() != Some(&p) {
                out.push(p);
            }
        }
    }
}

/// Per pixel column of (`x_px`, `lower`, `upper`): (x at the column's first point, smallest
/// lower, largest upper), plus the same at the column's last point when it holds several; the
/// outline of a band that never loses a bin's extent.
pub(crate) fn band_envelope(x_px: &[f64], lower: &[f64], upper: &[f64]) -> Vec<(f64, f64, f64)> {
    let mut out: Vec<(f64, f64, f64)> = Vec::new();
    let mut current: Option<(f64, f64, f64, f64, usize)> = None; // (id, x_first, lo, hi, count)
    let mut last_x = f64::NAN;
    let flush = |out: &mut Vec<(f64, f64, f64)>, c: (f64, f64, f64, f64, usize), last_x: f64| {
        let (_, x_first, lo, hi, count) = c;
        out.push((x_first, lo, hi));
        if count > 1 {
            out.push((last_x, lo, hi));
        }
    };
    for ((&x, &lo), &hi) in x_px.iter().zip(lower).zip(upper) {
        if !x.is_finite() {
            continue;
        }
        let id = x.floor();
        match current.as_mut() {
            Some(c) if c.0 == id => {
                c.2 = c.2.min(lo);
                c.3 = c.3.max(hi);
                c.4 += 1;
            }
            _ => {
                if let Some(c) = current.take() {
                    flush(&mut out, c, last_x);
                }
                current = Some((id, x, lo, hi, 1));
            }
        }
        last_x = x;
    }
    if let Some(c) = current {
        flush(&mut out, c, last_x);
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn envelope_keeps_extremes_per_column() {
        let x = [0.1, 0.5, 0.9, 1.2];
        let lo = [1.0, 0.5, 2.0, 3.0];
        let hi = [2.0, 4.0, 3.0, 5.0];
        assert_eq!(
            band_envelope(&x, &lo, &hi),
            vec![(0.1, 0.5, 4.0), (0.9, 0.5, 4.0), (1.2, 3.0, 5.0)]
        );
    }
}

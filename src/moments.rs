//! Sample moments and level figures, accumulated while samples stream in.
//!
//! # Method
//! Sums of x − c and (x − c)² with c the first sample (the "shifted data" algorithm, which keeps
//! the variance accurate under a large DC offset: Chan, Golub & LeVeque, "Algorithms for
//! computing the sample variance", Am. Stat. 37(3), 1983, eq. 1.7), summed over fixed stretches of
//! 4096 samples first so rounding grows with (4096 + N/4096) rather than N, and the result is
//! the same however the caller cuts the record into blocks. Variance and mean square use 1/N: they
//! are the AC power and total power of the record, R(0) of the autocovariance and
//! autocorrelation (Bendat & Piersol, *Random Data*, 4th ed. 2010, §1.3 and eq. 5.6, from memory).

use serde::{Deserialize, Serialize};

/// Samples per partial sum. Partial sums cover fixed stretches of the record, so the result
/// does not depend on how the caller cut it into blocks.
const PARTIAL_LEN: u64 = 4096;

/// Running sums of a record.
#[derive(Debug, Clone, Default)]
pub struct MomentsAccumulator {
    offset: Option<f64>,
    count: u64,
    sum: f64,
    sum_of_squares: f64,
    partial_sum: f64,
    partial_sum_of_squares: f64,
    min: f64,
    max: f64,
    clip_low: f64,
    clip_high: f64,
    clipped: u64,
    has_full_scale: bool,
}

/// Moments of a record, with their meaning in a noise measurement.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Moments {
    /// Mean: the DC level.
    pub mean: f64,
    /// Mean²: the DC power.
    pub dc_power: f64,
    /// Mean square: the total power (DC + AC), R(0).
    pub mean_square: f64,
    /// Root mean square: √(total power).
    pub rms: f64,
    /// Variance with 1/N: the AC power, C(0).
    pub variance: f64,
    /// Standard deviation: the AC RMS.
    pub std_dev: f64,
    /// Smallest sample.
    pub min: f64,
    /// Largest sample.
    pub max: f64,
    /// max(|min|, |max|).
    pub peak_abs: f64,
    /// Peak over RMS; `None` for an all-zero record.
    pub crest_factor: Option<f64>,
    /// Samples at or beyond full scale; `None` when the input has no full scale (text).
    pub clipped_samples: Option<u64>,
}

impl MomentsAccumulator {
    /// A fresh accumulator. `clip_levels` are the (low, high) sample values at or beyond which a
    /// sample counts as clipped, or `None` for inputs without a full scale.
    pub fn new(clip_levels: Option<(f64, f64)>) -> Self {
        let (clip_low, clip_high) = clip_levels.unwrap_or((f64::NEG_INFINITY, f64::INFINITY));
        Self {
            min: f64::INFINITY,
            max: f64::NEG_INFINITY,
            clip_low,
            clip_high,
            has_full_scale: clip_levels.is_some(),
            ..Self::default()
        }
    }

    /// Adds finite samples.
    pub fn push(&mut self, samples: &[f64]) {
        let Some(&first) = samples.first() else {
            return;
        };
        let c = *self.offset.get_or_insert(first);
        let mut rest = samples;
        while !rest.is_empty() {
            let room = (PARTIAL_LEN - self.count % PARTIAL_LEN) as usize;
            let (now, later) = rest.split_at(room.min(rest.len()));
            let mut sum = self.partial_sum;
            let mut sum_sq = self.partial_sum_of_squares;
            let mut min = self.min;
            let mut max = self.max;
            let mut clipped = 0;
            for &x in now {
                let y = x - c;
                sum += y;
                sum_sq += y * y;
                min = min.min(x);
                max = max.max(x);
                clipped += u64::from(x <= self.clip_low || x >= self.clip_high);
            }
            self.min = min;
            self.max = max;
            self.clipped += clipped;
            self.count += now.len() as u64;
            if self.count.is_multiple_of(PARTIAL_LEN) {
                self.sum += sum;
                self.sum_of_squares += sum_sq;
                self.partial_sum = 0.0;
                self.partial_sum_of_squares = 0.0;
            } else {
                self.partial_sum = sum;
                self.partial_sum_of_squares = sum_sq;
            }
            rest = later;
        }
    }

    /// Samples seen.
    pub fn count(&self) -> u64 {
        self.count
    }

    /// The moments so far, or `None` before the first sample.
    ///
    /// ```
    /// use noisesonde::moments::MomentsAccumulator;
    /// // A ±1 square wave on a DC level of 3: mean 3, variance 1, mean square 10.
    /// let mut acc = MomentsAccumulator::new(None);
    /// acc.push(&[4.0, 2.0, 4.0, 2.0]);
    /// let m = acc.finish().unwrap();
    /// assert_eq!((m.mean, m.variance, m.mean_square), (3.0, 1.0, 10.0));
    /// ```
    pub fn finish(&self) -> Option<Moments> {
        if self.count == 0 {
            return None;
        }
        let n = self.count as f64;
        let c = self.offset.unwrap_or(0.0);
        let shift_mean = (self.sum + self.partial_sum) / n;
        let mean = c + shift_mean;
        let variance = ((self.sum_of_squares + self.partial_sum_of_squares) / n
            - shift_mean * shift_mean)
            .max(0.0);
        let dc_power = mean * mean;
        let mean_square = variance + dc_power;
        let rms = mean_square.sqrt();
        let peak_abs = self.min.abs().max(self.max.abs());
        Some(Moments {
            mean,
            dc_power,
            mean_square,
            rms,
            variance,
            std_dev: variance.sqrt(),
            min: self.min,
            max: self.max,
            peak_abs,
            crest_factor: (rms > 0.0).then(|| peak_abs / rms),
            clipped_samples: self.has_full_scale.then_some(self.clipped),
        })
    }
}

//! Segment statistics of a record whose length is not known in advance, in bounded memory.
//!
//! # Method
//! The record is cut into equal segments of b samples, b a power of two starting at the base
//! length b₀ (the smallest power of two ≥ the largest lag K, so that every segment holds at
//! least K samples). When 2M segments are complete, adjacent pairs are merged and b doubles, so
//! memory holds at most 2M segments, and a record of N ≥ M·b₀ samples ends with
//! ⌊N/b⌋ ∈ [M, 2M) complete segments: b is the smallest b₀·2ʲ with ⌊N/b⌋ < 2M. The samples after
//! the last complete segment (fewer than b) are not used; the report says how many.
//!
//! Per segment the accumulator keeps, for y = x − c (c the record's first sample, the shifted
//! data of Chan, Golub & LeVeque 1983, eq. 1.7):
//! - Σy over the segment,
//! - the lagged products S_k = Σ_{m in segment, m ≥ k} y[m−k]·y[m] for k = 0..=K (each pair is
//!   counted in the segment of its later sample, so pairs reach back into the previous segment
//!   and merging two segments is a plain sum, with no cross terms to add),
//! - T_k, the sum of its last k samples (k = 0..=K),
//!
//! and the record keeps H_k, the sum of its first k samples. From these the mean, mean square
//! and variance of each segment, and the autocovariance of any run of consecutive segments about
//! its own mean, follow exactly (see [`SegmentSummary::centred_lag_sums`]).
//!
//! Sums run over fixed pieces of min(b, 4096) samples aligned to the record's start, so the
//! results do not depend on how the caller cuts the record into blocks.
//!
//! # References
//! - T. F. Chan, G. H. Golub, R. J. LeVeque, "Algorithms for computing the sample variance",
//!   Am. Stat. 37(3), 1983 (shifted data).
//! - J. S. Bendat, A. G. Piersol, *Random Data*, 4th ed., Wiley 2010, chapter 4 on testing
//!   stationarity: segment mean and mean-square values as the sequences under test.

use crate::numeric::{dot_in_lanes, sum_in_lanes};

/// Samples summed in one piece (the fixed grouping of the sums).
const PIECE_LEN: u64 = 4096;

/// The shape of a segmentation: plain numbers, checked by the caller's settings.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct SegmentPlan {
    /// M: the record ends with M to 2M − 1 complete segments (once it has M·b₀ samples).
    pub min_segments: usize,
    /// K: the largest lag of the lagged products.
    pub max_lag_len: usize,
    /// b₀: the first segment length; a power of two ≥ max(K, 1).
    pub base_len: u64,
}

impl SegmentPlan {
    /// The plan for M segments and lags up to K, with b₀ the smallest power of two ≥ max(K, 1).
    pub fn new(min_segments: usize, max_lag_len: usize) -> Self {
        Self {
            min_segments: min_segments.max(1),
            max_lag_len,
            base_len: (max_lag_len.max(1) as u64).next_power_of_two(),
        }
    }
}

/// The streaming accumulator; see the module documentation.
#[derive(Debug, Clone)]
pub struct SegmentAccumulator {
    plan: SegmentPlan,
    segment_len: u64,
    offset: Option<f64>,
    /// Σy of each complete segment.
    sums: Vec<f64>,
    /// S_k of each complete segment, K+1 values per segment.
    products: Vec<f64>,
    /// T_k of each complete segment, K+1 values per segment.
    tails: Vec<f64>,
    current_sum: f64,
    current_products: Vec<f64>,
    current_filled: u64,
    /// The K samples before the piece (zeros before the record's start), then the piece.
    window: Vec<f64>,
    piece_filled: usize,
    /// The record's first K samples (y).
    head: Vec<f64>,
    samples: u64,
}

impl SegmentAccumulator {
    /// A fresh accumulator; allocates everything it will use.
    pub fn new(plan: SegmentPlan) -> Self {
        let lags = plan.max_lag_len + 1;
        let capacity = 2 * plan.min_segments;
        Self {
            plan,
            segment_len: plan.base_len,
            offset: None,
            sums: Vec::with_capacity(capacity),
            products: Vec::with_capacity(capacity * lags),
            tails: Vec::with_capacity(capacity * lags),
            current_sum: 0.0,
            current_products: vec![0.0; lags],
            current_filled: 0,
            window: vec![0.0; plan.max_lag_len + PIECE_LEN as usize],
            piece_filled: 0,
            head: Vec::with_capacity(plan.max_lag_len),
            samples: 0,
        }
    }

    /// The plan in use.
    pub fn plan(&self) -> &SegmentPlan {
        &self.plan
    }

    /// Samples pushed so far.
    pub fn samples(&self) -> u64 {
        self.samples
    }

    /// Adds finite samples. Allocates nothing.
    pub fn push(&mut self, samples: &[f64]) {
        let Some(&first) = samples.first() else {
            return;
        };
        let c = *self.offset.get_or_insert(first);
        let k = self.plan.max_lag_len;
        let head_room = k - self.head.len();
        self.head.extend(
            samples[..head_room.min(samples.len())]
                .iter()
                .map(|x| x - c),
        );
        self.samples += samples.len() as u64;
        let mut rest = samples;
        while !rest.is_empty() {
            let piece_len = self.segment_len.min(PIECE_LEN) as usize;
            let take = (piece_len - self.piece_filled).min(rest.len());
            let start = k + self.piece_filled;
            for (out, x) in self.window[start..start + take].iter_mut().zip(rest) {
                *out = x - c;
            }
            self.piece_filled += take;
            rest = &rest[take..];
            if self.piece_filled == piece_len {
                self.process_piece();
            }
        }
    }

    fn process_piece(&mut self) {
        let k_max = self.plan.max_lag_len;
        let n = self.piece_filled;
        let window = &self.window[..k_max + n];
        let new = &window[k_max..];
        self.current_sum += sum_in_lanes(new);
        for (k, product) in self.current_products.iter_mut().enumerate() {
            *product += dot_in_lanes(new, &window[k_max - k..k_max - k + n]);
        }
        self.current_filled += n as u64;
        self.window.copy_within(n..n + k_max, 0);
        self.piece_filled = 0;
        if self.current_filled == self.segment_len {
            self.complete_segment();
        }
    }

    fn complete_segment(&mut self) {
        let k_max = self.plan.max_lag_len;
        self.sums.push(self.current_sum);
        self.products.extend_from_slice(&self.current_products);
        // The look-back part of the window now holds the segment's last K samples.
        let mut tail = 0.0;
        self.tails.push(0.0);
        for i in 1..=k_max {
            tail += self.window[k_max - i];
            self.tails.push(tail);
        }
        self.current_sum = 0.0;
        self.current_products.fill(0.0);
        self.current_filled = 0;
        if self.sums.len() == 2 * self.plan.min_segments {
            self.merge_pairs();
        }
    }

    /// Halves the number of segments by merging neighbours; the segment length doubles.
    fn merge_pairs(&mut self) {
        let lags = self.plan.max_lag_len + 1;
        let half = self.sums.len() / 2;
        for i in 0..half {
            self.sums[i] = self.sums[2 * i] + self.sums[2 * i + 1];
            for k in 0..lags {
                self.products[i * lags + k] =
                    self.products[2 * i * lags + k] + self.products[(2 * i + 1) * lags + k];
                self.tails[i * lags + k] = self.tails[(2 * i + 1) * lags + k];
            }
        }
        self.sums.truncate(half);
        self.products.truncate(half * lags);
        self.tails.truncate(half * lags);
        self.segment_len *= 2;
    }

    /// The complete segments so far, or `None` before the first one. Leaves the accumulator
    /// untouched (live use).
    pub fn finish(&self) -> Option<SegmentSummary> {
        if self.sums.is_empty() {
            return None;
        }
        let k_max = self.plan.max_lag_len;
        let mut head_sums = Vec::with_capacity(k_max + 1);
        let mut acc = 0.0;
        head_sums.push(0.0);
        for y in &self.head {
            acc += y;
            head_sums.push(acc);
        }
        let used = self.sums.len() as u64 * self.segment_len;
        Some(SegmentSummary {
            segment_len: self.segment_len,
            max_lag_len: k_max,
            offset: self.offset.unwrap_or(0.0),
            sums: self.sums.clone(),
            products: self.products.clone(),
            tails: self.tails.clone(),
            head_sums,
            samples: self.samples,
            unused_samples: self.samples - used,
        })
    }
}

/// The complete segments of a record: the sums of [`SegmentAccumulator`], with the statistics
/// derived from them.
#[derive(Debug, Clone, PartialEq)]
pub struct SegmentSummary {
    /// b: samples per segment.
    pub segment_len: u64,
    /// K: the largest lag kept.
    pub max_lag_len: usize,
    /// c: the record's first sample, subtracted before summing.
    pub offset: f64,
    sums: Vec<f64>,
    products: Vec<f64>,
    tails: Vec<f64>,
    head_sums: Vec<f64>,
    /// Samples in the record.
    pub samples: u64,
    /// Samples after the last complete segment (fewer than `segment_len`), not used.
    pub unused_samples: u64,
}

impl SegmentSummary {
    /// Number of complete segments.
    pub fn count(&self) -> usize {
        self.sums.len()
    }

    fn lags(&self) -> usize {
        self.max_lag_len + 1
    }

    /// Mean of segment `j`: c + Σy/b.
    pub fn mean(&self, j: usize) -> f64 {
        self.offset + self.sums[j] / self.segment_len as f64
    }

    /// Mean square of segment `j`: (Σy² + 2cΣy)/b + c².
    pub fn mean_square(&self, j: usize) -> f64 {
        let b = self.segment_len as f64;
        let c = self.offset;
        (self.products[j * self.lags()] + 2.0 * c * self.sums[j]) / b + c * c
    }

    /// Variance (1/b) of segment `j` about its own mean: Σy²/b − (Σy/b)², at least 0.
    pub fn variance(&self, j: usize) -> f64 {
        let b = self.segment_len as f64;
        let m = self.sums[j] / b;
        (self.products[j * self.lags()] / b - m * m).max(0.0)
    }

    /// Start of segment `j` in samples from the record's start.
    pub fn start_len(&self, j: usize) -> u64 {
        j as u64 * self.segment_len
    }

    /// For the run of segments `first..end` (samples a..e, n = e − a), the lag sums about the
    /// run's own mean μ, for k = 0..=K:
    ///
    /// Σ_{m=max(a,k)}^{e−1} (x[m−k] − μ)(x[m] − μ) = S_k − μ'(F_k + L_k) + P_k μ'²
    ///
    /// in shifted units (μ' = μ − c), with P_k = e − max(a, k) pairs, L_k = Σ of the later
    /// members (Σy − H_k when a = 0, else Σy) and F_k = Σ of the earlier members
    /// (Σy − T_k(last) + T_k(before), the last term only when a > 0). Returns the sums and n.
    /// `None` for an empty or out-of-range run.
    pub fn centred_lag_sums(&self, first: usize, end: usize) -> Option<(Vec<f64>, u64)> {
        if first >= end || end > self.count() {
            return None;
        }
        let lags = self.lags();
        let b = self.segment_len;
        let (a, e) = (first as u64 * b, end as u64 * b);
        let n = e - a;
        let sum_y: f64 = self.sums[first..end].iter().sum();
        let mu = sum_y / n as f64;
        let sums = (0..lags)
            .map(|k| {
                let s_k: f64 = (first..end).map(|j| self.products[j * lags + k]).sum();
                let pairs = (e - a.max(k as u64)) as f64;
                let later = if a == 0 {
                    sum_y - self.head_sums[k]
                } else {
                    sum_y
                };
                let mut earlier = sum_y - self.tails[(end - 1) * lags + k];
                if a > 0 {
                    earlier += self.tails[(first - 1) * lags + k];
                }
                s_k - mu * (earlier + later) + pairs * mu * mu
            })
            .collect();
        Some((sums, n))
    }

    /// Mean of the raw lagged products x[m−k]·x[m] over the pairs whose later sample lies in
    /// segment `j` (no mean removed): the segment's time-average estimate of R(k). `None` when
    /// `j` or `k` is out of range.
    pub fn raw_lag_mean(&self, j: usize, k: usize) -> Option<f64> {
        if j >= self.count() || k > self.max_lag_len {
            return None;
        }
        let lags = self.lags();
        let b = self.segment_len;
        let a = j as u64 * b;
        let e = a + b;
        let pairs = (e - a.max(k as u64)) as f64;
        let sum_y = self.sums[j];
        let later = if a == 0 {
            sum_y - self.head_sums[k]
        } else {
            sum_y
        };
        let mut earlier = sum_y - self.tails[j * lags + k];
        if a > 0 {
            earlier += self.tails[(j - 1) * lags + k];
        }
        let c = self.offset;
        Some((self.products[j * lags + k] + c * (earlier + later) + pairs * c * c) / pairs)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A small deterministic sequence with structure (xorshift, Marsaglia 2003, from memory).
    fn sequence(n: usize) -> Vec<f64> {
        let mut state = 0x9E37_79B9_7F4A_7C15u64;
        (0..n)
            .map(|i| {
                state ^= state << 13;
                state ^= state >> 7;
                state ^= state << 17;
                (state >> 11) as f64 / (1u64 << 53) as f64 - 0.5 + 3.0 + 1e-3 * i as f64
            })
            .collect()
    }

    /// The lag sums by their definition, written directly.
    fn direct(x: &[f64], a: usize, e: usize, k_max: usize) -> Vec<f64> {
        let mu = x[a..e].iter().sum::<f64>() / (e - a) as f64;
        (0..=k_max)
            .map(|k| (a.max(k)..e).map(|m| (x[m - k] - mu) * (x[m] - mu)).sum())
            .collect()
    }

    #[test]
    fn segment_count_ends_between_m_and_2m_and_matches_the_rule() {
        // The rule of the module doc: b is the smallest b0·2^j with floor(N/b) < 2M.
        for n in [640usize, 1000, 4096, 5000, 77_777] {
            let x = sequence(n);
            let plan = SegmentPlan::new(20, 32);
            let mut acc = SegmentAccumulator::new(plan);
            acc.push(&x);
            let s = acc.finish().unwrap();
            let mut b = 32u64;
            while (n as u64 / b) >= 40 {
                b *= 2;
            }
            assert_eq!(s.segment_len, b, "n = {n}");
            assert_eq!(s.count() as u64, n as u64 / b);
            assert!((20..40).contains(&s.count()), "n = {n}: {}", s.count());
            assert_eq!(s.unused_samples, n as u64 % b);
        }
    }

    #[test]
    fn statistics_match_their_definitions_whatever_the_block_cuts() {
        let x = sequence(9_999);
        let plan = SegmentPlan::new(10, 7);
        let mut whole = SegmentAccumulator::new(plan);
        whole.push(&x);
        let mut cut = SegmentAccumulator::new(plan);
        for chunk in x.chunks(333) {
            cut.push(chunk);
        }
        let (s, t) = (whole.finish().unwrap(), cut.finish().unwrap());
        assert_eq!(s, t, "block cuts changed the sums");
        let b = s.segment_len as usize;
        for j in 0..s.count() {
            let seg = &x[j * b..(j + 1) * b];
            let mean = seg.iter().sum::<f64>() / b as f64;
            let ms = seg.iter().map(|v| v * v).sum::<f64>() / b as f64;
            let var = seg.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / b as f64;
            assert!((s.mean(j) - mean).abs() < 1e-12);
            assert!((s.mean_square(j) - ms).abs() < 1e-10);
            assert!((s.variance(j) - var).abs() < 1e-11);
        }
        for (first, end) in [(0, 1), (0, 3), (2, 5), (1, s.count())] {
            let (got, n) = s.centred_lag_sums(first, end).unwrap();
            assert_eq!(n as usize, (end - first) * b);
            let want = direct(&x, first * b, end * b, 7);
            for (k, (g, w)) in got.iter().zip(&want).enumerate() {
                assert!(
                    (g - w).abs() < 1e-9 * want[0],
                    "run {first}..{end} lag {k}: {g} vs {w}"
                );
            }
        }
        for j in [0, 1, s.count() - 1] {
            for k in [0, 1, 7] {
                let a = j * b;
                let pairs: Vec<f64> = (a.max(k)..a + b).map(|m| x[m - k] * x[m]).collect();
                let want = pairs.iter().sum::<f64>() / pairs.len() as f64;
                let got = s.raw_lag_mean(j, k).unwrap();
                assert!(
                    (got - want).abs() < 1e-12 * want.abs(),
                    "{j} {k}: {got} vs {want}"
                );
            }
        }
    }

    #[test]
    fn short_records_have_fewer_segments_and_none_before_the_first() {
        let plan = SegmentPlan::new(20, 32);
        let mut acc = SegmentAccumulator::new(plan);
        acc.push(&sequence(31));
        assert!(acc.finish().is_none());
        acc.push(&sequence(100));
        let s = acc.finish().unwrap();
        assert_eq!((s.count(), s.segment_len, s.unused_samples), (4, 32, 3));
    }
}

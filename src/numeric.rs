//! Small numerical helpers shared by the estimators.

/// Σ x in eight interleaved partial sums: independent additions the compiler can vectorise
/// (a single running sum is bound by the latency of each addition). Rounding differs from a
/// sequential sum by a few ulps.
pub(crate) fn sum_in_lanes(x: &[f64]) -> f64 {
    let mut lanes = [0.0f64; 8];
    let chunks = x.chunks_exact(8);
    let tail: f64 = chunks.remainder().iter().sum();
    for chunk in chunks {
        for (lane, v) in lanes.iter_mut().zip(chunk) {
            *lane += v;
        }
    }
    lanes.iter().sum::<f64>() + tail
}

/// Median of a non-empty slice (mean of the two middle values for an even count), reordering
/// it. Used by median Welch averaging, tone floors and live noise floors.
pub(crate) fn median(values: &mut [f64]) -> f64 {
    let n = values.len();
    let mid = n / 2;
    let (lower_part, upper_mid, _) = values.select_nth_unstable_by(mid, f64::total_cmp);
    let upper = *upper_mid;
    if n % 2 == 1 {
        upper
    } else {
        let lower = lower_part.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        0.5 * (lower + upper)
    }
}

/// Σ a[i]·b[i] over the shorter length, in eight interleaved partial sums (see
/// [`sum_in_lanes`]).
pub(crate) fn dot_in_lanes(a: &[f64], b: &[f64]) -> f64 {
    let len = a.len().min(b.len());
    let (a, b) = (&a[..len], &b[..len]);
    let mut lanes = [0.0f64; 8];
    let (ca, cb) = (a.chunks_exact(8), b.chunks_exact(8));
    let tail: f64 = ca
        .remainder()
        .iter()
        .zip(cb.remainder())
        .map(|(x, y)| x * y)
        .sum();
    for (xa, xb) in ca.zip(cb) {
        for ((lane, x), y) in lanes.iter_mut().zip(xa).zip(xb) {
            *lane += x * y;
        }
    }
    lanes.iter().sum::<f64>() + tail
}

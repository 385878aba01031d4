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

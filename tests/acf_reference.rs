//! Streaming autocorrelation against numpy's zero-padded FFT correlation
//! (tests/reference/vectors.json, written by tests/reference/generate.py).

mod common;

use common::*;
use noisesonde::acf::{Acf, AcfEstimator, AcfPlan};

/// Agreement with numpy, relative to R(0) (rounding in FFT correlation grows with log N).
const ACF_ABS_FRAC: f64 = 1e-11;

#[test]
fn acf_matches_numpy_fft_correlation() {
    let doc = vectors();
    for case in doc["acf"].as_array().unwrap() {
        let name = case["input"].as_str().unwrap();
        let (x, _) = input(&doc, name);
        let max_lag = case["max_lag_len"].as_u64().unwrap() as usize;
        let mut acf = Acf::new(AcfPlan::new(max_lag).unwrap());
        for chunk in x.chunks(1234) {
            acf.push(chunk);
        }
        for (estimator, key) in [
            (AcfEstimator::Biased, "biased"),
            (AcfEstimator::Unbiased, "unbiased"),
        ] {
            let r = acf.finish(estimator).unwrap();
            assert_eq!(r.lag_len.len(), max_lag + 1, "{name}: lags");
            let reference = floats(&case[format!("{key}_autocorrelation")]);
            assert_close(
                &format!("{name} {key} R"),
                &r.autocorrelation,
                &reference,
                0.0,
                ACF_ABS_FRAC,
            );
            let reference = floats(&case[format!("{key}_autocovariance")]);
            assert_close(
                &format!("{name} {key} C"),
                &r.autocovariance,
                &reference,
                0.0,
                ACF_ABS_FRAC,
            );
        }
        let r = acf.finish(AcfEstimator::Biased).unwrap();
        // R[0] is the mean square and C[0] the variance (numpy x.var(), x.mean()**2 + var).
        assert_close(
            &format!("{name} R0"),
            &r.autocorrelation[..1],
            &[case["mean_square"].as_f64().unwrap()],
            1e-12,
            0.0,
        );
        assert_close(
            &format!("{name} C0"),
            &r.autocovariance[..1],
            &[case["variance"].as_f64().unwrap()],
            1e-10,
            0.0,
        );
    }
}

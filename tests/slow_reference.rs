//! The fast code against obviously-correct slow code written here: a direct O(n²) DFT
//! periodogram and an O(n·L) lagged sum, on odd, even and prime lengths. The definitions are the
//! textbook ones (DFT: X[k] = Σ x[n] e^{−2πikn/N}; biased R[k] = (1/N) Σ x[n]x[n+k]).

mod common;

use common::assert_close;
use common::noise::Noise;
use noisesonde::acf::{Acf, AcfEstimator, AcfPlan};
use noisesonde::spectral::{Average, Detrend, Welch, WelchPlan, WelchSettings};
use noisesonde::window::WindowKind;

fn slow_periodogram(x: &[f64], w: &[f64]) -> Vec<f64> {
    let n = x.len();
    (0..n / 2 + 1)
        .map(|k| {
            let (mut re, mut im) = (0.0, 0.0);
            for (j, (&xj, &wj)) in x.iter().zip(w).enumerate() {
                let angle = -2.0 * std::f64::consts::PI * (k * j) as f64 / n as f64;
                re += xj * wj * angle.cos();
                im += xj * wj * angle.sin();
            }
            re * re + im * im
        })
        .collect()
}

#[test]
fn one_segment_welch_equals_a_direct_dft_periodogram() {
    for len in [8usize, 9, 13, 64, 97, 128, 251] {
        let x = Noise::new(len as u64).normals(len);
        let fs = 10.0;
        for window in [
            WindowKind::Rectangular,
            WindowKind::Hann,
            WindowKind::FlatTop,
        ] {
            let settings = WelchSettings {
                window,
                segment_len: len,
                overlap_frac: 0.0,
                detrend: Detrend::None,
                average: Average::Mean,
            };
            let mut welch = Welch::new(WelchPlan::new(&settings).unwrap());
            welch.push(&x).unwrap();
            let r = welch.finish(fs).unwrap();
            let w = window.coefficients(len);
            let sum_w2: f64 = w.iter().map(|v| v * v).sum();
            let expected: Vec<f64> = slow_periodogram(&x, &w)
                .iter()
                .enumerate()
                .map(|(k, p)| {
                    let edge = k == 0 || (len % 2 == 0 && k == len / 2);
                    p * if edge { 1.0 } else { 2.0 } / (fs * sum_w2)
                })
                .collect();
            assert_close(
                &format!("len {len} {window}"),
                &r.density,
                &expected,
                1e-10,
                1e-13,
            );
        }
    }
}

#[test]
fn streaming_acf_equals_direct_lagged_sums() {
    for (len, max_lag) in [
        (2usize, 1usize),
        (7, 6),
        (64, 10),
        (97, 96),
        (1000, 999),
        (5003, 4500),
        (20011, 37),
    ] {
        // A DC offset of 5 exercises the offset handling.
        let x: Vec<f64> = Noise::new(len as u64 + 1)
            .normals(len)
            .iter()
            .map(|v| v + 5.0)
            .collect();
        let mut acf = Acf::new(AcfPlan::new(max_lag).unwrap());
        for chunk in x.chunks(333) {
            acf.push(chunk);
        }
        let mean = x.iter().sum::<f64>() / len as f64;
        for estimator in [AcfEstimator::Biased, AcfEstimator::Unbiased] {
            let r = acf.finish(estimator).unwrap();
            let lags = max_lag.min(len - 1);
            let (mut raw, mut cov) = (vec![], vec![]);
            for k in 0..=lags {
                let div = match estimator {
                    AcfEstimator::Biased => len as f64,
                    AcfEstimator::Unbiased => (len - k) as f64,
                };
                raw.push((0..len - k).map(|n| x[n] * x[n + k]).sum::<f64>() / div);
                cov.push(
                    (0..len - k)
                        .map(|n| (x[n] - mean) * (x[n + k] - mean))
                        .sum::<f64>()
                        / div,
                );
            }
            assert_close(
                &format!("R len {len}"),
                &r.autocorrelation,
                &raw,
                0.0,
                1e-12,
            );
            assert_close(&format!("C len {len}"), &r.autocovariance, &cov, 0.0, 1e-11);
        }
    }
}

/// The Wiener–Khinchin check's window correlation comes from an FFT; it must equal the direct
/// lagged sums Σ w[n]w[n+m] / Σw² (Harris 1978, eq. 26) on even, odd and prime lengths, and
/// give Hann's published 50 % overlap correlation of exactly 1/6 (Harris 1978, Table 1: 16.7 %;
/// REFERENCES §1).
#[test]
fn fft_window_correlation_equals_direct_lagged_sums() {
    use noisesonde::spectral::inverse::InversePlan;
    for len in [4096usize, 1001, 997] {
        for kind in [
            WindowKind::Hann,
            WindowKind::BlackmanHarris,
            WindowKind::FlatTop,
        ] {
            let w = kind.coefficients(len);
            let plan = InversePlan::new(&w, len - 1).unwrap();
            let energy: f64 = w.iter().map(|v| v * v).sum();
            let direct: Vec<f64> = (0..len)
                .map(|m| w.iter().zip(&w[m..]).map(|(a, b)| a * b).sum::<f64>() / energy)
                .collect();
            for (m, (fast, slow)) in plan.window_correlation().iter().zip(&direct).enumerate() {
                assert!(
                    (fast - slow).abs() < 1e-12,
                    "{kind:?} L={len} m={m}: {fast} vs {slow}"
                );
            }
        }
    }
    let hann = WindowKind::Hann.coefficients(4096);
    let plan = InversePlan::new(&hann, 2048).unwrap();
    assert!((plan.window_correlation()[2048] - 1.0 / 6.0).abs() < 1e-12);
}

//! Laws every estimate must obey, over random inputs (proptest):
//! |R[k]| ≤ R[0] (Cauchy–Schwarz, for the biased estimator), R[k] of x equals R[k] of x
//! reversed (R[−k] = R[k]), PSD ≥ 0, PSD(a·x) = a²·PSD(x), and Parseval's theorem
//! Σ_k |X[k]|² = N Σ_n |x[n]|² (for the one-sided, rectangular, whole-record density:
//! Σ P[k]·Δf = mean square).

mod common;

use noisesonde::acf::{Acf, AcfEstimator, AcfPlan};
use noisesonde::spectral::{Average, Detrend, Welch, WelchPlan, WelchSettings};
use noisesonde::window::WindowKind;
use proptest::prelude::*;

fn record() -> impl Strategy<Value = Vec<f64>> {
    prop::collection::vec(-1.0e3..1.0e3f64, 16..3000)
}

fn acf_of(x: &[f64], max_lag: usize) -> noisesonde::acf::AcfResult {
    let mut acf = Acf::new(AcfPlan::new(max_lag).unwrap());
    acf.push(x);
    acf.finish(AcfEstimator::Biased).unwrap()
}

fn welch_of(x: &[f64], settings: &WelchSettings) -> noisesonde::spectral::WelchResult {
    let mut welch = Welch::new(WelchPlan::new(settings).unwrap());
    welch.push(x).unwrap();
    welch.finish(1.0).unwrap()
}

fn window() -> impl Strategy<Value = WindowKind> {
    prop_oneof![
        Just(WindowKind::Rectangular),
        Just(WindowKind::Hann),
        Just(WindowKind::Hamming),
        Just(WindowKind::BlackmanHarris),
        Just(WindowKind::FlatTop),
        (0.0..20.0f64).prop_map(|beta| WindowKind::Kaiser { beta }),
    ]
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(64))]

    #[test]
    fn acf_peaks_at_lag_zero_and_is_symmetric(x in record(), lag_frac in 0.0..1.0f64) {
        let max_lag = ((x.len() - 1) as f64 * lag_frac) as usize;
        let r = acf_of(&x, max_lag);
        let reversed: Vec<f64> = x.iter().rev().copied().collect();
        let rr = acf_of(&reversed, max_lag);
        let r0 = r.autocorrelation[0];
        let c0 = r.autocovariance[0];
        for k in 0..r.autocorrelation.len() {
            prop_assert!(r.autocorrelation[k].abs() <= r0 * (1.0 + 1e-9) + 1e-9);
            prop_assert!(r.autocovariance[k].abs() <= c0 * (1.0 + 1e-9) + 1e-9 * r0);
            prop_assert!((r.autocorrelation[k] - rr.autocorrelation[k]).abs() <= 1e-9 * r0 + 1e-12);
        }
    }

    #[test]
    fn psd_is_non_negative_and_scales_with_the_square(
        x in record(), window in window(), scale in 1e-6..1e6f64, overlap in 0.0..0.9f64,
    ) {
        let settings = WelchSettings {
            window,
            segment_len: 16.max(x.len() / 3),
            overlap_frac: overlap,
            detrend: Detrend::Mean,
            average: Average::Mean,
        };
        let p = welch_of(&x, &settings);
        let scaled: Vec<f64> = x.iter().map(|v| v * scale).collect();
        let ps = welch_of(&scaled, &settings);
        let peak = p.density.iter().cloned().fold(0.0, f64::max);
        for (a, b) in p.density.iter().zip(&ps.density) {
            prop_assert!(*a >= 0.0);
            prop_assert!((b - a * scale * scale).abs() <= 1e-9 * (a * scale * scale) + 1e-12 * peak * scale * scale);
        }
    }

    #[test]
    fn parseval_holds_for_the_whole_record_rectangular_density(x in record()) {
        let settings = WelchSettings {
            window: WindowKind::Rectangular,
            segment_len: x.len(),
            overlap_frac: 0.0,
            detrend: Detrend::None,
            average: Average::Mean,
        };
        let fs = 1.0;
        let p = welch_of(&x, &settings);
        let integrated: f64 = p.density.iter().sum::<f64>() * p.bin_width_hz;
        let mean_square = x.iter().map(|v| v * v).sum::<f64>() / x.len() as f64;
        prop_assert!((integrated - mean_square).abs() <= 1e-10 * mean_square + 1e-12, "{} vs {} at fs {}", integrated, mean_square, fs);
        // The power spectrum is the density times the ENBW in hertz.
        for (s, d) in p.power_spectrum.iter().zip(&p.density) {
            prop_assert!((s - d * p.enbw_hz).abs() <= 1e-12 * s.abs().max(1e-300));
        }
    }
}

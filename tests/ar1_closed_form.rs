//! The AR(1) process, whose PSD and autocorrelation have closed forms, estimated from a long
//! simulated record; estimates must fall within their statistical bounds.
//!
//! Closed forms (shared/REFERENCES.md §8, computed; Box & Jenkins 1976 §3.2.2 for R[k];
//! Priestley 1981 eq. 4.12.59 for the spectrum, from memory):
//!   R[k] = σe² φ^|k| / (1 − φ²)
//!   G(f) = 2σe² / (fs (1 − 2φ cos(2πf/fs) + φ²)), 0 < f < fs/2 (one-sided)
//! Worked example φ = 0.9, σe² = 1, fs = 1000 Hz: G(10 Hz) = 0.1475809037,
//! G(100 Hz) = 5.653400047e-3, G(250 Hz) = 1.104972376e-3 V²/Hz, R[k] = 5.263157895·0.9^k.

mod common;

use common::noise::Noise;
use noisesonde::acf::{Acf, AcfEstimator, AcfPlan};
use noisesonde::spectral::{Welch, WelchPlan, WelchSettings};

const PHI: f64 = 0.9;
const FS_HZ: f64 = 1000.0;
const SAMPLES: usize = 1 << 21;

fn closed_form_density(f_hz: f64) -> f64 {
    2.0 / (FS_HZ
        * (1.0 - 2.0 * PHI * (2.0 * std::f64::consts::PI * f_hz / FS_HZ).cos() + PHI * PHI))
}

#[test]
fn published_worked_example_values_follow_from_the_closed_form() {
    for (f, published) in [
        (10.0, 0.1475809037),
        (100.0, 5.653400047e-3),
        (250.0, 1.104972376e-3),
    ] {
        assert!((closed_form_density(f) - published).abs() < 1e-9 * published);
    }
}

#[test]
fn welch_psd_of_ar1_lies_within_its_confidence_interval() {
    let x = Noise::new(2024).ar1(SAMPLES, PHI, 1.0);
    let settings = WelchSettings {
        segment_len: 1000, // 1 Hz bins: 10, 100, 250 Hz fall on bins
        ..WelchSettings::default()
    };
    let mut welch = Welch::new(WelchPlan::new(&settings).unwrap());
    welch.push(&x).unwrap();
    let r = welch.finish(FS_HZ).unwrap();
    let ci = noisesonde::spectral::ConfidenceFactors::new(r.dof, 0.95).unwrap();
    // Interior bins: the 95 % interval should miss about 5 % of them. With ~500 bins (not all
    // independent after 50 % overlap, which widens the spread) we accept 1 %..10 %.
    let interior = 1..r.density.len() - 1;
    let bins = interior.len();
    let misses = interior
        .clone()
        .filter(|&k| {
            let g = closed_form_density(r.frequency_hz[k]);
            let p = r.density[k];
            !(p * ci.lower <= g && g <= p * ci.upper)
        })
        .count();
    let rate = misses as f64 / bins as f64;
    assert!(
        (0.01..=0.10).contains(&rate),
        "{misses} of {bins} bins outside the 95 % interval"
    );
    // The mean ratio over all bins is 1 within its standard error (≈ √(2/ν)/√bins, ×4).
    let mean_ratio: f64 = interior
        .map(|k| r.density[k] / closed_form_density(r.frequency_hz[k]))
        .sum::<f64>()
        / bins as f64;
    let tolerance = 4.0 * (2.0 / r.dof).sqrt() / (bins as f64).sqrt() + 0.002; // + Hann leakage bias
    assert!(
        (mean_ratio - 1.0).abs() < tolerance,
        "mean P/G = {mean_ratio}, tolerance {tolerance}"
    );
    // Spot values at the worked example's frequencies, each inside its 99.9 % interval
    // (a 95 % interval would miss one of three spots one time in seven).
    let wide = noisesonde::spectral::ConfidenceFactors::new(r.dof, 0.999).unwrap();
    for f in [10.0, 100.0, 250.0] {
        let k = f as usize;
        let g = closed_form_density(f);
        let p = r.density[k];
        assert!(
            p * wide.lower <= g && g <= p * wide.upper,
            "{f} Hz: {p} vs {g}"
        );
    }
}

#[test]
fn autocorrelation_of_ar1_follows_phi_to_the_k() {
    let x = Noise::new(7).ar1(SAMPLES, PHI, 1.0);
    let mut acf = Acf::new(AcfPlan::new(50).unwrap());
    acf.push(&x);
    let r = acf.finish(AcfEstimator::Biased).unwrap();
    let r0 = 1.0 / (1.0 - PHI * PHI);
    // Bartlett (1946): Var R̂[k] ≲ (2/N) Σ_m R[m]², Σ_m R[m]² = R0² (1 + φ²)/(1 − φ²).
    let sd = (2.0 / SAMPLES as f64 * r0 * r0 * (1.0 + PHI * PHI) / (1.0 - PHI * PHI)).sqrt();
    for (k, &got) in r.autocorrelation.iter().enumerate() {
        let expected = r0 * PHI.powi(k as i32);
        assert!(
            (got - expected).abs() < 5.0 * sd,
            "lag {k}: {got} vs {expected} (5σ = {})",
            5.0 * sd
        );
    }
}

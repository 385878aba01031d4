//! Welch PSD, window figures and chi-square quantiles against scipy/numpy.
//! Reference: tests/reference/vectors.json, written by tests/reference/generate.py with the
//! numpy/scipy versions pinned in tests/requirements.txt (scipy.signal.welch,
//! scipy.signal.get_window, scipy.stats.chi2.ppf).

mod common;

use common::*;
use noisesonde::spectral::confidence::{welch_dof, ConfidenceFactors};
use noisesonde::spectral::{Average, Detrend, Welch, WelchPlan, WelchSettings};
use noisesonde::window::{WindowFigures, WindowKind};

fn settings_of(case: &serde_json::Value) -> WelchSettings {
    WelchSettings {
        window: case["window"]
            .as_str()
            .unwrap()
            .parse::<WindowKind>()
            .unwrap(),
        segment_len: case["segment_len"].as_u64().unwrap() as usize,
        overlap_frac: case["overlap_frac"].as_f64().unwrap(),
        detrend: case["detrend"]
            .as_str()
            .unwrap()
            .parse::<Detrend>()
            .unwrap(),
        average: case["average"]
            .as_str()
            .unwrap()
            .parse::<Average>()
            .unwrap(),
    }
}

#[test]
fn welch_matches_scipy_for_every_reference_case() {
    let doc = vectors();
    let cases = doc["welch"].as_array().unwrap();
    assert!(cases.len() >= 10, "reference cases missing");
    for case in cases {
        let (x, fs) = input(&doc, case["input"].as_str().unwrap());
        let settings = settings_of(case);
        let what = format!("{} {:?}", case["input"], settings);
        let mut welch = Welch::new(WelchPlan::new(&settings).unwrap());
        // Push in uneven blocks to exercise the streaming segmentation.
        for chunk in x.chunks(997) {
            welch.push(chunk).unwrap();
        }
        let r = welch.finish(fs).unwrap();
        assert_eq!(
            r.segments as u64,
            case["segments"].as_u64().unwrap(),
            "{what}: segments"
        );
        assert_eq!(
            r.overlap_len as u64,
            case["overlap_len"].as_u64().unwrap(),
            "{what}: overlap"
        );
        assert_close(
            &format!("{what} frequency"),
            &r.frequency_hz,
            &floats(&case["frequency_hz"]),
            1e-12,
            0.0,
        );
        assert_close(
            &format!("{what} density"),
            &r.density,
            &floats(&case["density"]),
            SCIPY_REL_TOL,
            SCIPY_ABS_FRAC,
        );
        assert_close(
            &format!("{what} power spectrum"),
            &r.power_spectrum,
            &floats(&case["power_spectrum"]),
            SCIPY_REL_TOL,
            SCIPY_ABS_FRAC,
        );
        // ENBW and equivalent degrees of freedom, recomputed in numpy from scipy's window.
        assert_close(
            &format!("{what} enbw"),
            &[r.enbw_bins],
            &[case["enbw_bins"].as_f64().unwrap()],
            1e-12,
            0.0,
        );
        assert_close(
            &format!("{what} dof"),
            &[r.dof],
            &[case["dof"].as_f64().unwrap()],
            1e-10,
            0.0,
        );
    }
}

#[test]
fn window_coefficients_and_figures_match_scipy_get_window() {
    let doc = vectors();
    let n = 4096;
    for (name, reference) in doc["windows_4096"].as_object().unwrap() {
        let w = name.parse::<WindowKind>().unwrap().coefficients(n);
        // Head and middle together, so the absolute floor is relative to the window's peak.
        let ours: Vec<f64> = w[..16]
            .iter()
            .chain(&w[n / 2 - 8..n / 2 + 8])
            .copied()
            .collect();
        let mut theirs = floats(&reference["coefficients_head"]);
        theirs.extend(floats(&reference["coefficients_mid"]));
        assert_close(
            &format!("{name} coefficients"),
            &ours,
            &theirs,
            1e-12,
            1e-15,
        );
        let f = WindowFigures::of(&w);
        assert_close(
            &format!("{name} ENBW"),
            &[f.enbw_bins],
            &[reference["enbw_bins"].as_f64().unwrap()],
            1e-12,
            0.0,
        );
        assert_close(
            &format!("{name} CG"),
            &[f.coherent_gain],
            &[reference["coherent_gain"].as_f64().unwrap()],
            1e-12,
            0.0,
        );
    }
}

/// Published window figures: Harris 1978, Table 1 (ENBW 1.00 / 1.50 / 1.36 / 2.00 bins, coherent
/// gain 1.00 / 0.50 / 0.54 / 0.36, to the table's two decimals) and Heinzel, Rüdiger & Schilling
/// 2002 (HFT95: NENBW 3.8112 bins). Periodic cosine sums have closed forms
/// ENBW = (a0² + ½Σa_k²)/a0², CG = a0/Σa_k (shared/REFERENCES.md §1, computed).
#[test]
fn window_figures_match_published_tables() {
    let cases = [
        (WindowKind::Rectangular, 1.00, 1.00, 1.0, 1.0),
        (WindowKind::Hann, 1.50, 0.50, 1.5, 0.5),
        (WindowKind::Hamming, 1.36, 0.54, 1.362_825_8, 0.54),
        (WindowKind::BlackmanHarris, 2.00, 0.36, 2.004_352_9, 0.35875),
    ];
    for (kind, harris_enbw, harris_cg, exact_enbw, exact_cg) in cases {
        let f = WindowFigures::of(&kind.coefficients(4096));
        assert!(
            (f.enbw_bins - harris_enbw).abs() <= 0.005 + 1e-12,
            "{kind} ENBW {} vs Harris {harris_enbw}",
            f.enbw_bins
        );
        assert!(
            (f.coherent_gain - harris_cg).abs() <= 0.005 + 1e-12,
            "{kind} CG {} vs Harris {harris_cg}",
            f.coherent_gain
        );
        assert!(
            (f.enbw_bins - exact_enbw).abs() < 1e-7,
            "{kind} ENBW closed form"
        );
        assert!(
            (f.coherent_gain - exact_cg).abs() < 1e-12,
            "{kind} CG closed form"
        );
    }
    let hft95 = WindowFigures::of(&WindowKind::FlatTop.coefficients(4096));
    assert!(
        (hft95.enbw_bins - 3.8112).abs() < 5e-5,
        "HFT95 NENBW {} vs Heinzel 3.8112",
        hft95.enbw_bins
    );
}

/// Hann at 50 % overlap: ρ(1) = 1/6 exactly, so ν = 36K²/(19K − 1)
/// (Welch 1967; shared/REFERENCES.md §5 gives K=2: 3.891892, K=10: 19.047619, K=31: 58.836735).
#[test]
fn hann_half_overlap_dof_has_its_closed_form() {
    let w = WindowKind::Hann.coefficients(1024);
    for (k, published) in [
        (1usize, 2.0),
        (2, 3.891892),
        (5, 9.574468),
        (10, 19.047619),
        (31, 58.836735),
        (100, 189.573460),
    ] {
        let nu = welch_dof(&w, 512, k);
        let closed = 36.0 * (k * k) as f64 / (19.0 * k as f64 - 1.0);
        assert!(
            (nu - closed).abs() < 1e-9 * closed,
            "K={k}: {nu} vs 36K²/(19K−1) = {closed}"
        );
        assert!((nu - published).abs() < 1e-6, "K={k}: {nu} vs {published}");
    }
}

#[test]
fn chi_square_interval_matches_scipy_stats_chi2_ppf() {
    let doc = vectors();
    for case in doc["chi2"].as_array().unwrap() {
        let dof = case["dof"].as_f64().unwrap();
        let level = case["level"].as_f64().unwrap();
        let f = ConfidenceFactors::new(dof, level).unwrap();
        let lower = dof / case["ppf_high"].as_f64().unwrap();
        let upper = dof / case["ppf_low"].as_f64().unwrap();
        assert_close(
            &format!("chi2 lower ν={dof} level={level}"),
            &[f.lower],
            &[lower],
            1e-9,
            0.0,
        );
        assert_close(
            &format!("chi2 upper ν={dof} level={level}"),
            &[f.upper],
            &[upper],
            1e-9,
            0.0,
        );
    }
}

//! The stationarity and ergodicity statistics against outside truth:
//! - tests/reference/vectors.json (`stationarity` section, written by tests/reference/generate.py
//!   with the numpy/scipy pinned in tests/requirements.txt): exact reverse-arrangement and runs
//!   bounds from Python's exact integers and fractions; segment statistics, inversion and runs
//!   counts and stretch autocorrelations from numpy; spectrogram columns from
//!   scipy.signal.spectrogram; one-way analysis of variance from scipy.stats.f_oneway and
//!   scipy.stats.f.ppf;
//! - the shared reference notes (REFERENCES.md §4 and reference/refs.txt §4): exact percentile
//!   tables computed there with numpy/scipy, and Bendat & Piersol's Tables A.5 and A.6 as
//!   recalled from memory;
//! - closed forms: the moments of the null distributions (Bendat & Piersol 2010, chapter 4;
//!   Wald & Wolfowitz 1940) and Bartlett's variance for AR(1) and white noise.

mod common;

use common::*;
use noisesonde::spectral::{Welch, WelchPlan, WelchSettings};
use noisesonde::stationarity::arrangements::{
    inversion_distribution, reverse_arrangements, test_reverse_arrangements,
};
use noisesonde::stationarity::ensemble::one_way_anova;
use noisesonde::stationarity::lag_shape::{bartlett_bracket, test_lag_shape};
use noisesonde::stationarity::runs::{runs_bounds, runs_distribution, test_runs, RunsAboutMedian};
use noisesonde::stationarity::segments::{SegmentAccumulator, SegmentPlan};
use noisesonde::window::WindowKind;
use serde_json::Value;

fn opt_u64(v: &Value) -> Option<u64> {
    v.as_u64()
}

#[test]
fn reverse_arrangement_bounds_equal_the_exact_python_ones() {
    // vectors.json: bounds from the Mahonian numbers in exact integer arithmetic (generate.py).
    let doc = vectors();
    let cases = doc["stationarity"]["reverse_arrangements_bounds"]
        .as_array()
        .unwrap();
    assert!(cases.len() >= 200);
    for case in cases {
        let n = case["n"].as_u64().unwrap() as usize;
        let alpha = case["alpha"].as_f64().unwrap();
        let d = inversion_distribution(n).unwrap();
        let (lower, upper) = d.bounds(alpha);
        assert_eq!(
            lower,
            opt_u64(&case["lower"]),
            "N = {n}, α = {alpha}: lower"
        );
        assert_eq!(
            upper,
            case["upper"].as_u64().unwrap(),
            "N = {n}, α = {alpha}"
        );
        // The exact probability of rejection, as the test reports it.
        let values: Vec<f64> = (0..n).map(|i| i as f64).collect();
        let t = test_reverse_arrangements(&values, alpha, "").unwrap();
        let size = case["size"].as_f64().unwrap();
        assert!(
            (t.false_rejection_probability - size).abs() <= 1e-12,
            "N = {n}, α = {alpha}: size {} vs {size}",
            t.false_rejection_probability
        );
        assert!(size <= alpha);
    }
}

/// refs.txt §4, "exact" columns (numpy/scipy, shared reference notes): N and the percentage
/// points A_{0.99}, A_{0.975}, A_{0.95}, A_{0.05}, A_{0.025}, A_{0.01}.
const RA_EXACT_REFS: [(usize, [u64; 6]); 14] = [
    (10, [9, 11, 12, 32, 33, 35]),
    (12, [15, 18, 20, 45, 47, 50]),
    (14, [24, 27, 29, 61, 63, 66]),
    (16, [34, 37, 41, 78, 82, 85]),
    (18, [45, 50, 54, 98, 102, 107]),
    (20, [59, 64, 69, 120, 125, 130]),
    (30, [152, 162, 170, 264, 272, 282]),
    (40, [290, 305, 318, 461, 474, 489]),
    (50, [473, 495, 513, 711, 729, 751]),
    (60, [702, 731, 755, 1014, 1038, 1067]),
    (70, [978, 1013, 1044, 1370, 1401, 1436]),
    (80, [1300, 1343, 1381, 1778, 1816, 1859]),
    (90, [1669, 1721, 1765, 2239, 2283, 2335]),
    (100, [2084, 2145, 2198, 2751, 2804, 2865]),
];

/// Bendat & Piersol, Random Data, Table A.6 at α = 0.05 as recalled FROM MEMORY in the shared
/// REFERENCES.md §4: N, A_{0.975}, A_{0.025}. The notes find it equal to the normal approximation
/// ⌊μ + zσ⌋ except N = 90 at 0.975 (the rule gives 1721).
const RA_TABLE_A6_MEMORY: [(usize, u64, u64); 14] = [
    (10, 11, 33),
    (12, 18, 47),
    (14, 27, 63),
    (16, 38, 81),
    (18, 50, 102),
    (20, 64, 125),
    (30, 162, 272),
    (40, 305, 474),
    (50, 495, 729),
    (60, 731, 1038),
    (70, 1014, 1400),
    (80, 1344, 1815),
    (90, 1720, 2283),
    (100, 2145, 2804),
];

#[test]
fn reverse_arrangement_bounds_match_the_shared_tables() {
    for (n, points) in RA_EXACT_REFS {
        let d = inversion_distribution(n).unwrap();
        // Columns 0.99/0.01 are α = 0.02, 0.975/0.025 are α = 0.05, 0.95/0.05 are α = 0.1.
        for (alpha, lower, upper) in [
            (0.02, points[0], points[5]),
            (0.05, points[1], points[4]),
            (0.1, points[2], points[3]),
        ] {
            assert_eq!(
                d.bounds(alpha),
                (Some(lower), upper),
                "N = {n}, α = {alpha}"
            );
        }
    }
    // The recalled Table A.6 is a normal approximation: it is ⌊μ ± 1.96σ⌋ from the closed-form
    // moments (except the one recalled entry noted), and within two counts of the exact bounds.
    for (n, lower, upper) in RA_TABLE_A6_MEMORY {
        let values: Vec<f64> = (0..n).map(|i| i as f64).collect();
        let t = test_reverse_arrangements(&values, 0.05, "").unwrap();
        let rule_low = (t.expected() - 1.96 * t.std_dev()).floor() as u64;
        let rule_high = (t.expected() + 1.96 * t.std_dev()).floor() as u64;
        if n != 90 {
            assert_eq!(
                (rule_low, rule_high),
                (lower, upper),
                "N = {n}: ⌊μ ± 1.96σ⌋"
            );
        } else {
            assert_eq!(
                (rule_low, rule_high),
                (1721, 2283),
                "N = 90: the rule's values"
            );
        }
        let exact_low = t.lower.unwrap();
        assert!(
            exact_low.abs_diff(lower) <= 2 && t.upper.abs_diff(upper) <= 2,
            "N = {n}"
        );
    }
}

#[test]
fn inversion_moments_equal_the_closed_forms() {
    // Bendat & Piersol 2010, chapter 4: mean N(N−1)/4, variance N(2N+5)(N−1)/72.
    for n in [1usize, 2, 3, 10, 37, 100, 399] {
        let d = inversion_distribution(n).unwrap();
        let mean: f64 = d.pmf().iter().enumerate().map(|(a, p)| a as f64 * p).sum();
        let var: f64 = d
            .pmf()
            .iter()
            .enumerate()
            .map(|(a, p)| (a as f64 - mean).powi(2) * p)
            .sum();
        let nf = n as f64;
        let total: f64 = d.pmf().iter().sum();
        assert!((total - 1.0).abs() < 1e-12, "N = {n}: Σp = {total}");
        assert!(
            (mean - nf * (nf - 1.0) / 4.0).abs() < 1e-9 * nf * nf,
            "N = {n}"
        );
        let want = nf * (2.0 * nf + 5.0) * (nf - 1.0) / 72.0;
        assert!(
            (var - want).abs() < 1e-9 * want.max(1.0),
            "N = {n}: {var} vs {want}"
        );
    }
    assert!(inversion_distribution(0).is_none() && inversion_distribution(401).is_none());
}

#[test]
fn runs_bounds_equal_the_exact_python_ones() {
    // vectors.json: the exact pmf P(R=2k) = 2C(n1−1,k−1)C(n2−1,k−1)/C(N,n1) and the odd case,
    // in exact fractions (generate.py).
    let doc = vectors();
    let cases = doc["stationarity"]["runs_bounds"].as_array().unwrap();
    assert!(cases.len() >= 200);
    for case in cases {
        let (n1, n2) = (
            case["above"].as_u64().unwrap() as usize,
            case["below"].as_u64().unwrap() as usize,
        );
        let alpha = case["alpha"].as_f64().unwrap();
        let pmf = runs_distribution(n1, n2);
        let (lower, upper) = runs_bounds(&pmf, alpha);
        let what = format!("n1 = {n1}, n2 = {n2}, α = {alpha}");
        assert_eq!(lower, opt_u64(&case["lower"]), "{what}: lower");
        assert_eq!(upper, case["upper"].as_u64().unwrap(), "{what}: upper");
        let below: f64 = lower.map_or(0.0, |l| pmf[..=l as usize].iter().sum());
        let above: f64 = pmf[upper as usize + 1..].iter().sum();
        let size = case["size"].as_f64().unwrap();
        assert!((below + above - size).abs() < 1e-11, "{what}: size");
        // The exact pmf's moments (Python fractions) against the Rust pmf.
        let mean: f64 = pmf.iter().enumerate().map(|(r, p)| r as f64 * p).sum();
        let var: f64 = pmf
            .iter()
            .enumerate()
            .map(|(r, p)| (r as f64 - mean).powi(2) * p)
            .sum();
        assert!(
            (mean - case["mean"].as_f64().unwrap()).abs() < 1e-9,
            "{what}: mean"
        );
        assert!(
            (var - case["variance"].as_f64().unwrap()).abs() < 1e-8,
            "{what}: variance"
        );
    }
}

#[test]
fn runs_mean_and_variance_formulas_equal_the_exact_pmf() {
    // Wald & Wolfowitz 1940: mean 2n1n2/N + 1, variance 2n1n2(2n1n2 − N)/(N²(N − 1)), checked
    // here against the moments of the exact pmf, including unequal halves.
    for (n1, n2) in [(5, 5), (10, 10), (7, 12), (30, 12), (100, 100), (199, 199)] {
        let t = RunsAboutMedian {
            statistic: 2,
            median: 0.0,
            above: n1,
            below: n2,
            lower: None,
            upper: 0,
            false_rejection_probability: 0.0,
            accepted: true,
            meaning: String::new(),
        };
        let pmf = runs_distribution(n1, n2);
        let mean: f64 = pmf.iter().enumerate().map(|(r, p)| r as f64 * p).sum();
        let var: f64 = pmf
            .iter()
            .enumerate()
            .map(|(r, p)| (r as f64 - mean).powi(2) * p)
            .sum();
        assert!((t.expected() - mean).abs() < 1e-9, "{n1},{n2}: mean");
        assert!(
            (t.std_dev().powi(2) - var).abs() < 1e-8 * var,
            "{n1},{n2}: var"
        );
    }
}

/// refs.txt §4: exact runs points for n1 = n2 = n (numpy/scipy, shared reference notes):
/// n, r_{0.99}, r_{0.975}, r_{0.95}, r_{0.05}, r_{0.025}, r_{0.01}.
const RUNS_EXACT_REFS: [(usize, [u64; 6]); 8] = [
    (5, [2, 2, 3, 8, 9, 9]),
    (10, [5, 6, 6, 15, 15, 16]),
    (20, [13, 14, 15, 26, 27, 28]),
    (30, [21, 23, 24, 37, 38, 40]),
    (50, [38, 40, 42, 59, 61, 63]),
    (75, [61, 63, 65, 86, 88, 90]),
    (90, [74, 77, 79, 102, 104, 107]),
    (100, [84, 86, 88, 113, 115, 117]),
];

/// Bendat & Piersol, Random Data, Table A.5 as recalled FROM MEMORY (shared REFERENCES.md §4),
/// n = N/2: r_{0.975}, r_{0.025}. The notes find the exact pmf reproduces it except at n = 30
/// (exact 23/38).
const RUNS_TABLE_A5_MEMORY: [(usize, u64, u64); 6] = [
    (5, 2, 9),
    (10, 6, 15),
    (20, 14, 27),
    (30, 22, 39),
    (50, 40, 61),
    (100, 86, 115),
];

#[test]
fn runs_bounds_match_the_shared_tables() {
    for (n, points) in RUNS_EXACT_REFS {
        let pmf = runs_distribution(n, n);
        for (alpha, lower, upper) in [
            (0.02, points[0], points[5]),
            (0.05, points[1], points[4]),
            (0.1, points[2], points[3]),
        ] {
            assert_eq!(
                runs_bounds(&pmf, alpha),
                (Some(lower), upper),
                "n = {n}, α = {alpha}"
            );
        }
    }
    for (n, lower, upper) in RUNS_TABLE_A5_MEMORY {
        let got = runs_bounds(&runs_distribution(n, n), 0.05);
        if n == 30 {
            assert_eq!(
                got,
                (Some(23), 38),
                "n = 30: the exact bounds, not the recalled 22/39"
            );
        } else {
            assert_eq!(got, (Some(lower), upper), "n = {n}");
        }
    }
}

#[test]
fn segment_statistics_and_tests_match_numpy() {
    let doc = vectors();
    for case in doc["stationarity"]["cases"].as_array().unwrap() {
        let (x, fs) = input(&doc, case["input"].as_str().unwrap());
        let segments = case["segments"].as_u64().unwrap() as usize;
        let max_lag = case["max_lag_len"].as_u64().unwrap() as usize;
        let stretches = case["stretches"].as_u64().unwrap() as usize;
        let what = format!("{} M={segments} K={max_lag}", case["input"]);
        let mut acc = SegmentAccumulator::new(SegmentPlan::new(segments, max_lag));
        for chunk in x.chunks(1237) {
            acc.push(chunk);
        }
        let s = acc.finish().unwrap();
        assert_eq!(
            s.segment_len,
            case["segment_len"].as_u64().unwrap(),
            "{what}"
        );
        assert_eq!(s.count() as u64, case["count"].as_u64().unwrap(), "{what}");
        let table = noisesonde::stationarity::SegmentTable::of(&s, fs);
        // numpy: seg.mean(1), (seg**2).mean(1), seg.var(1).
        assert_close(
            &format!("{what} mean"),
            &table.mean,
            &floats(&case["mean"]),
            1e-12,
            1e-14,
        );
        assert_close(
            &format!("{what} mean square"),
            &table.mean_square,
            &floats(&case["mean_square"]),
            1e-12,
            0.0,
        );
        assert_close(
            &format!("{what} variance"),
            &table.variance,
            &floats(&case["variance"]),
            1e-10,
            0.0,
        );
        for (name, values) in [("mean", &table.mean), ("mean_square", &table.mean_square)] {
            let want = &case[format!("{name}_tests")];
            assert_eq!(
                reverse_arrangements(values),
                want["inversions"].as_f64().unwrap(),
                "{what} {name}: inversions (numpy count)"
            );
            let r = test_runs(values, 0.05, "").unwrap();
            assert_eq!(r.statistic, want["runs"].as_u64().unwrap(), "{what} {name}");
            assert_eq!(r.above as u64, want["above"].as_u64().unwrap());
            assert_eq!(r.below as u64, want["below"].as_u64().unwrap());
            assert!(
                (r.median - want["median"].as_f64().unwrap()).abs()
                    < 1e-12 * r.median.abs().max(1.0)
            );
        }
        let shape = test_lag_shape(&s, stretches, 0.05, fs, None, "").unwrap();
        let want: Vec<f64> = case["coefficient_by_stretch"]
            .as_array()
            .unwrap()
            .iter()
            .flat_map(floats)
            .collect();
        // numpy: Σ_{m=max(a,k)}^{e−1} (x[m−k]−μ)(x[m]−μ)/(e−a), normalised by lag 0.
        assert_close(
            &format!("{what} stretch coefficients"),
            &shape.coefficient_by_stretch,
            &want,
            0.0,
            1e-10,
        );
    }
}

#[test]
fn spectrogram_columns_match_scipy_spectrogram() {
    let doc = vectors();
    for case in doc["stationarity"]["spectrograms"].as_array().unwrap() {
        let (x, fs) = input(&doc, case["input"].as_str().unwrap());
        let settings = WelchSettings {
            window: case["window"]
                .as_str()
                .unwrap()
                .parse::<WindowKind>()
                .unwrap(),
            segment_len: case["segment_len"].as_u64().unwrap() as usize,
            overlap_frac: case["overlap_frac"].as_f64().unwrap(),
            ..WelchSettings::default()
        };
        let what = format!("{} {:?}", case["input"], settings);
        let mut welch = Welch::new(WelchPlan::new(&settings).unwrap());
        for chunk in x.chunks(911) {
            welch.push(chunk).unwrap();
        }
        let (result, g) = welch.finish_with_spectrogram(fs).unwrap();
        assert_eq!(result.segments as u64, case["segments"].as_u64().unwrap());
        assert_eq!(
            g.segments_per_column,
            case["segments_per_column"].as_u64().unwrap()
        );
        assert_eq!(
            g.bins_per_row as u64,
            case["bins_per_row"].as_u64().unwrap()
        );
        assert_eq!(
            g.start_s.len() as u64,
            case["columns"].as_u64().unwrap(),
            "{what}"
        );
        assert_close(
            &format!("{what} rows"),
            &g.frequency_hz,
            &floats(&case["frequency_hz"]),
            1e-12,
            0.0,
        );
        assert_close(
            &format!("{what} column starts"),
            &g.start_s,
            &floats(&case["start_s"]),
            1e-12,
            1e-15,
        );
        assert_close(
            &format!("{what} density"),
            &g.density,
            &floats(&case["density"]),
            SCIPY_REL_TOL,
            SCIPY_ABS_FRAC,
        );
    }
}

#[test]
fn analysis_of_variance_matches_scipy() {
    let doc = vectors();
    for case in doc["stationarity"]["anova"].as_array().unwrap() {
        let groups: Vec<Vec<f64>> = case["groups"]
            .as_array()
            .unwrap()
            .iter()
            .map(floats)
            .collect();
        for (alpha, key) in [(0.05, "f_critical_0.05"), (0.01, "f_critical_0.01")] {
            let a = one_way_anova(&groups, alpha).unwrap();
            // scipy.stats.f_oneway and scipy.stats.f.ppf.
            let f = case["f_statistic"].as_f64().unwrap();
            assert!(
                (a.f_statistic - f).abs() < 1e-10 * f.max(1.0),
                "F {} vs {f}",
                a.f_statistic
            );
            let p = case["p_value"].as_f64().unwrap();
            assert!(
                (a.p_value - p).abs() < 1e-8 * p.max(1e-3),
                "p {} vs {p}",
                a.p_value
            );
            let crit = case[key].as_f64().unwrap();
            assert!(
                (a.f_critical - crit).abs() < 1e-8 * crit,
                "critical {} vs {crit}",
                a.f_critical
            );
            assert_eq!(a.dof_between, case["dof_between"].as_f64().unwrap());
            assert_eq!(a.dof_within, case["dof_within"].as_f64().unwrap());
        }
    }
}

#[test]
fn bartlett_bracket_equals_the_ar1_closed_form() {
    // For ρ_v = φ^|v|, Bartlett's sum has the closed form
    // n·var r_k = (1 + φ²)(1 − φ^{2k})/(1 − φ²) − 2kφ^{2k}
    // (Box & Jenkins 1976, §2.1.6, from memory); white noise gives 1 at every k ≥ 1.
    for phi in [0.3f64, 0.7, 0.9] {
        let rho: Vec<f64> = (0..2000).map(|v| phi.powi(v)).collect();
        for k in [1usize, 2, 5, 10, 32] {
            let want = (1.0 + phi * phi) * (1.0 - phi.powi(2 * k as i32)) / (1.0 - phi * phi)
                - 2.0 * k as f64 * phi.powi(2 * k as i32);
            let got = bartlett_bracket(&rho, k);
            assert!(
                (got - want).abs() < 1e-9 * want,
                "φ = {phi}, k = {k}: {got} vs {want}"
            );
        }
    }
    let white = [1.0, 0.0, 0.0];
    assert_eq!(bartlett_bracket(&white, 1), 1.0);
    assert_eq!(bartlett_bracket(&white, 5), 1.0);
    // Lag 0: r_0 = 1 always, so its variance is 0 (every term cancels for any ρ).
    let rho: Vec<f64> = (0..50).map(|v| 0.8f64.powi(v)).collect();
    assert!(bartlett_bracket(&rho, 0).abs() < 1e-12);
}

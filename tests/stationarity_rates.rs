//! How often the stationarity tests reject, measured on many seeded records through the whole
//! pipeline (`Analyzer` with default stationarity settings: M = 20, α = 0.05, K = 32 lags,
//! J = 4 stretches).
//!
//! - Stationary records (white noise; AR(1), φ = 0.9): each test's rejection rate must lie
//!   within the 99.9 % two-sided binomial interval of its *exact* false-rejection probability
//!   (reported by the test itself from the exact null distribution; ≤ α because the counts
//!   are discrete). The autocorrelation comparison is a Bonferroni bound, so its rate must not
//!   exceed the interval about α (it may sit well below it).
//! - Non-stationary records (a drift in mean, a ramp in standard deviation, an AR(1) whose φ
//!   switches halfway at constant variance) must be rejected by the line meant to see them in at
//!   least 90 % of records.
//!
//! The rates are printed (`cargo test --test stationarity_rates -- --nocapture`).
//! Binomial intervals: statrs::distribution::Binomial (cdf), a general-purpose library.

mod common;

use common::noise::Noise;
use noisesonde::io::SourceInfo;
use noisesonde::stationarity::StationarityReport;
use noisesonde::{Analyzer, Settings};
use statrs::distribution::{Binomial, DiscreteCDF};

/// Records per kind (a few hundred, as the issue asks).
const RECORDS: u64 = 300;
/// Samples per record: 2^14 gives 32 segments of 512 samples with M = 20.
const RECORD_LEN: usize = 1 << 14;
/// Two-sided probability outside the binomial interval the rates must lie in.
const BINOMIAL_OUTSIDE: f64 = 1e-3;
/// Least rejection rate required of the line meant to see a non-stationarity.
const MIN_POWER: f64 = 0.9;
/// Sample rate of the simulated records, Hz (any value: the tests count segments).
const FS_HZ: f64 = 1000.0;

fn source() -> SourceInfo {
    SourceInfo {
        name: "simulated".into(),
        format: "memory".into(),
        channels: 1,
        channel: 0,
        channel_name: None,
        channel_names: Vec::new(),
        sample_rate_hz: FS_HZ,
        bits_per_sample: None,
        full_scale: false,
        clip_level_fs: None,
        declared_frames: None,
    }
}

fn stationarity_of(x: &[f64]) -> StationarityReport {
    // A short PSD segment keeps the pipeline fast in debug builds; the stationarity settings
    // are the defaults.
    let mut settings = Settings::default();
    settings.welch.segment_len = 512;
    let mut analyzer = Analyzer::new(&settings, &source()).unwrap();
    for chunk in x.chunks(5000) {
        analyzer.push(chunk).unwrap();
    }
    analyzer.report(&[]).unwrap().stationarity.unwrap()
}

/// Rejection counts of the five tests and the three lines over `RECORDS` records.
#[derive(Default, Debug)]
struct Counts {
    mean_ra: u64,
    mean_runs: u64,
    square_ra: u64,
    square_runs: u64,
    acf: u64,
    mean_line: u64,
    square_line: u64,
    any_line: u64,
    /// Exact false-rejection probabilities the tests reported (the same for every record).
    size_ra: f64,
    size_runs: f64,
    alpha: f64,
}

fn count(make: impl Fn(u64) -> Vec<f64>) -> Counts {
    let mut c = Counts::default();
    for seed in 1..=RECORDS {
        let st = stationarity_of(&make(seed));
        let ra = &st.mean.reverse_arrangements;
        c.size_ra = ra.false_rejection_probability;
        c.size_runs = st.mean.runs.false_rejection_probability;
        c.alpha = st.alpha;
        c.mean_ra += u64::from(!ra.accepted);
        c.mean_runs += u64::from(!st.mean.runs.accepted);
        c.square_ra += u64::from(!st.mean_square.reverse_arrangements.accepted);
        c.square_runs += u64::from(!st.mean_square.runs.accepted);
        c.acf += u64::from(!st.autocorrelation.stationary);
        c.mean_line += u64::from(!st.mean.stationary);
        c.square_line += u64::from(!st.mean_square.stationary);
        c.any_line += u64::from(
            !(st.mean.stationary && st.mean_square.stationary && st.autocorrelation.stationary),
        );
        assert_eq!(st.segments.count, 32, "2^14 samples, M = 20: 32 segments");
    }
    c
}

/// The 99.9 % two-sided interval of a Binomial(RECORDS, p) count (statrs cdf).
fn binomial_interval(p: f64) -> (u64, u64) {
    let b = Binomial::new(p, RECORDS).unwrap();
    let low = (0..=RECORDS)
        .find(|&k| b.cdf(k) > BINOMIAL_OUTSIDE / 2.0)
        .unwrap();
    let high = (0..=RECORDS)
        .find(|&k| b.cdf(k) >= 1.0 - BINOMIAL_OUTSIDE / 2.0)
        .unwrap();
    (low, high)
}

fn rate(k: u64) -> f64 {
    k as f64 / RECORDS as f64
}

fn report(kind: &str, c: &Counts) {
    println!(
        "{kind}: rejection rates over {RECORDS} records: mean RA {:.3}, mean runs {:.3}, mean-square RA {:.3}, mean-square runs {:.3}, autocorrelation {:.3}; lines: mean {:.3}, mean square {:.3}, any {:.3} (exact sizes: RA {:.4}, runs {:.4}; α {})",
        rate(c.mean_ra),
        rate(c.mean_runs),
        rate(c.square_ra),
        rate(c.square_runs),
        rate(c.acf),
        rate(c.mean_line),
        rate(c.square_line),
        rate(c.any_line),
        c.size_ra,
        c.size_runs,
        c.alpha
    );
}

fn check_false_rejections(kind: &str, c: &Counts) {
    report(kind, c);
    let (ra_low, ra_high) = binomial_interval(c.size_ra);
    let (runs_low, runs_high) = binomial_interval(c.size_runs);
    for (name, k) in [("mean RA", c.mean_ra), ("mean-square RA", c.square_ra)] {
        assert!(
            (ra_low..=ra_high).contains(&k),
            "{kind}: {name} rejected {k} of {RECORDS}, outside [{ra_low}, {ra_high}] for p = {}",
            c.size_ra
        );
    }
    for (name, k) in [
        ("mean runs", c.mean_runs),
        ("mean-square runs", c.square_runs),
    ] {
        assert!(
            (runs_low..=runs_high).contains(&k),
            "{kind}: {name} rejected {k} of {RECORDS}, outside [{runs_low}, {runs_high}] for p = {}",
            c.size_runs
        );
    }
    let (_, acf_high) = binomial_interval(c.alpha);
    assert!(
        c.acf <= acf_high,
        "{kind}: autocorrelation rejected {} of {RECORDS}, above {acf_high} for α = {}",
        c.acf,
        c.alpha
    );
}

#[test]
fn white_noise_is_rejected_at_the_exact_rates() {
    let c = count(|seed| Noise::new(seed).normals(RECORD_LEN));
    check_false_rejections("white noise", &c);
}

#[test]
fn ar1_noise_is_rejected_at_the_exact_rates() {
    // φ = 0.9: correlation time about 10 samples, segments of 512 (about 50 times longer).
    let c = count(|seed| Noise::new(1000 + seed).ar1(RECORD_LEN, 0.9, 1.0));
    check_false_rejections("AR(1) φ = 0.9", &c);
}

#[test]
fn a_drift_in_mean_is_rejected_by_the_mean_line() {
    // White noise of unit variance plus a ramp of 0.3 over the record: segment means (standard
    // deviation 1/√512 = 0.044) rise by 6.8 of their standard deviations end to end.
    let c = count(|seed| {
        let n = RECORD_LEN as f64;
        let mut x = Noise::new(2000 + seed).normals(RECORD_LEN);
        for (i, v) in x.iter_mut().enumerate() {
            *v += 0.3 * i as f64 / n;
        }
        x
    });
    report("drift in mean", &c);
    assert!(rate(c.mean_line) >= MIN_POWER, "{c:?}");
}

#[test]
fn a_ramp_in_variance_is_rejected_by_the_mean_square_line() {
    // Standard deviation ramping from 1 to 1.15 (mean square 1 → 1.32; a segment mean square
    // of white noise has standard deviation √(2/512) = 0.0625).
    let c = count(|seed| {
        let n = RECORD_LEN as f64;
        let mut x = Noise::new(3000 + seed).normals(RECORD_LEN);
        for (i, v) in x.iter_mut().enumerate() {
            *v *= 1.0 + 0.15 * i as f64 / n;
        }
        x
    });
    report("ramp in standard deviation", &c);
    assert!(rate(c.square_line) >= MIN_POWER, "{c:?}");
}

#[test]
fn a_switched_spectrum_is_rejected_by_the_autocorrelation_line() {
    // AR(1) with φ = 0.5 for the first half and 0.7 for the second, each scaled to unit
    // variance (σe² = 1 − φ², Box & Jenkins 1976, §3.2.4 (from memory)), so the mean square
    // stays put: ρ(1) jumps from 0.5 to 0.7.
    let c = count(|seed| {
        let half = RECORD_LEN / 2;
        let mut noise = Noise::new(4000 + seed);
        let mut x = noise.ar1(half, 0.5, (1.0f64 - 0.25).sqrt());
        x.extend(noise.ar1(RECORD_LEN - half, 0.7, (1.0f64 - 0.49).sqrt()));
        x
    });
    report("AR(1) φ 0.5 → 0.7 at constant variance", &c);
    assert!(rate(c.acf) >= MIN_POWER, "{c:?}");
}

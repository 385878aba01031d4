//! Ergodicity across records: the classic non-ergodic ensemble (each record its own random
//! constant plus stationary noise) is flagged while each record alone looks stationary; an
//! ergodic ensemble (independent stationary records) passes at the F test's rate; the
//! across-record statistics equal a direct computation; bad ensembles are typed errors.
//!
//! Outside truth: the F test's false-rejection probability is α exactly for independent normal
//! batch means (one-way analysis of variance, Snedecor & Cochran 1989, chapter 12, from memory;
//! the F statistic itself is checked against scipy.stats.f_oneway in stationarity_reference.rs);
//! binomial intervals from statrs::distribution::Binomial; the across-record statistics are
//! recomputed here by plain loops from their definitions.

mod common;

use common::noise::Noise;
use common::VecSource;
use noisesonde::ensemble_analysis::{analyze_ensemble, EnsembleAnalyzer, EnsembleSettings};
use noisesonde::io::{SampleSource, SourceInfo};
use noisesonde::{AnalysisError, EnsembleReport, Error, SettingsError};
use statrs::distribution::{Binomial, DiscreteCDF};

/// Records per ensemble.
const RECORDS: usize = 4;
/// Samples per record: 2^13 gives 32 segments of 256 with M = 20.
const RECORD_LEN: usize = 1 << 13;
/// Ensembles simulated per kind.
const ENSEMBLES: u64 = 120;
const FS_HZ: f64 = 1000.0;

fn info(name: &str, sample_rate_hz: f64) -> SourceInfo {
    let mut source = VecSource::new(Vec::new(), sample_rate_hz).info;
    source.name = name.to_string();
    source
}

fn ensemble_of(records: &[Vec<f64>], settings: &EnsembleSettings) -> EnsembleReport {
    let infos: Vec<SourceInfo> = (0..records.len())
        .map(|i| info(&format!("r{i}"), FS_HZ))
        .collect();
    let mut analyzer = EnsembleAnalyzer::new(settings, &infos).unwrap();
    for start in (0..RECORD_LEN).step_by(3000) {
        let end = (start + 3000).min(RECORD_LEN);
        let blocks: Vec<&[f64]> = records.iter().map(|r| &r[start..end]).collect();
        analyzer.push(&blocks).unwrap();
    }
    analyzer.report(&[]).unwrap()
}

/// The 99.9 % two-sided interval of a Binomial(n, p) count (statrs cdf).
fn binomial_interval(p: f64, n: u64) -> (u64, u64) {
    let b = Binomial::new(p, n).unwrap();
    let low = (0..=n).find(|&k| b.cdf(k) > 5e-4).unwrap();
    let high = (0..=n).find(|&k| b.cdf(k) >= 1.0 - 5e-4).unwrap();
    (low, high)
}

#[test]
fn random_constants_are_not_ergodic_in_the_mean_though_each_record_looks_stationary() {
    // x_i(t) = A_i + n_i(t), A_i ~ N(0, 1) drawn once per record, n_i white of unit variance:
    // stationary, but each record's time average tends to its own A_i.
    let settings = EnsembleSettings::default();
    let (mut flagged, mut records_stationary, mut records) = (0u64, 0u64, 0u64);
    let mut any_report = None;
    for seed in 1..=ENSEMBLES {
        let mut noise = Noise::new(seed);
        let data: Vec<Vec<f64>> = (0..RECORDS)
            .map(|_| {
                let level = noise.normal();
                noise
                    .normals(RECORD_LEN)
                    .into_iter()
                    .map(|v| v + level)
                    .collect()
            })
            .collect();
        let r = ensemble_of(&data, &settings);
        flagged += u64::from(!r.ensemble.mean.ergodic);
        for st in &r.each_record {
            records += 1;
            records_stationary += u64::from(st.mean.stationary);
        }
        any_report = Some(r);
    }
    let flagged_rate = flagged as f64 / ENSEMBLES as f64;
    let stationary_rate = records_stationary as f64 / records as f64;
    println!(
        "random constants: not ergodic in the mean in {flagged_rate:.3} of {ENSEMBLES} ensembles; each record's mean line stationary in {stationary_rate:.3} of {records}"
    );
    // The level differences (σ = 1) dwarf a time average's standard error (1/√8192 = 0.011):
    // only ensembles whose four constants happen to lie within a few hundredths escape.
    assert!(flagged_rate >= 0.97, "flagged in {flagged_rate}");
    // Each record alone: a line fails with probability at most about 2α (two tests at α).
    assert!(
        stationary_rate >= 0.85,
        "records stationary in {stationary_rate}"
    );
    let r = any_report.unwrap();
    // The variance across records includes the spread of the constants; within a record it
    // does not (Bendat & Piersol 2010, chapter 1: ensemble vs time averages).
    assert!(r.ensemble.variance_across_records > 1.2 * r.ensemble.variance_within_records);
}

#[test]
fn independent_stationary_records_pass_at_the_f_tests_rate() {
    // Independent AR(1) records (φ = 0.5, correlation time about 1.4 samples, segments of 256):
    // ergodic. The F test must reject at a rate within the binomial interval about α.
    let settings = EnsembleSettings::default();
    let alpha = settings.stationarity.alpha;
    let (mut mean_rejected, mut square_rejected, mut lag_rejected) = (0u64, 0u64, 0u64);
    for seed in 1..=ENSEMBLES {
        let mut noise = Noise::new(10_000 + seed);
        let data: Vec<Vec<f64>> = (0..RECORDS)
            .map(|_| noise.ar1(RECORD_LEN, 0.5, 1.0))
            .collect();
        let r = ensemble_of(&data, &settings);
        mean_rejected += u64::from(!r.ensemble.mean.ergodic);
        square_rejected += u64::from(!r.ensemble.mean_square.ergodic);
        lag_rejected += u64::from(!r.ensemble.autocorrelation[0].line.ergodic);
        assert_eq!(r.ensemble.autocorrelation[0].lag_len, 1);
        // Lags 1, 2, 4, ... up to K = 32 by default.
        assert_eq!(r.ensemble.autocorrelation.len(), 6);
    }
    println!(
        "independent AR(1) records: rejection rates mean {:.3}, mean square {:.3}, R(1) {:.3} over {ENSEMBLES} ensembles (α = {alpha})",
        mean_rejected as f64 / ENSEMBLES as f64,
        square_rejected as f64 / ENSEMBLES as f64,
        lag_rejected as f64 / ENSEMBLES as f64
    );
    let (low, high) = binomial_interval(alpha, ENSEMBLES);
    for (what, k) in [
        ("mean", mean_rejected),
        ("mean square", square_rejected),
        ("R(1)", lag_rejected),
    ] {
        assert!(
            (low..=high).contains(&k),
            "{what}: {k} of {ENSEMBLES} outside [{low}, {high}]"
        );
    }
}

#[test]
fn across_record_statistics_equal_their_definitions() {
    let mut noise = Noise::new(77);
    let data: Vec<Vec<f64>> = (0..3)
        .map(|i| {
            noise
                .normals(RECORD_LEN)
                .into_iter()
                .map(|v| v * (1.0 + i as f64) + i as f64)
                .collect()
        })
        .collect();
    let r = ensemble_of(&data, &EnsembleSettings::default());
    let e = &r.ensemble;
    let b = e.segment_len as usize;
    assert_eq!(e.segments, RECORD_LEN / b);
    for j in 0..e.segments {
        let (mut m, mut q, mut s2) = (0.0, 0.0, 0.0);
        for t in j * b..(j + 1) * b {
            let values: Vec<f64> = data.iter().map(|x| x[t]).collect();
            let mean = values.iter().sum::<f64>() / 3.0;
            m += mean;
            q += values.iter().map(|v| v * v).sum::<f64>() / 3.0;
            s2 += values.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / 2.0;
        }
        let n = b as f64;
        assert!((e.over_time.mean[j] - m / n).abs() < 1e-12, "segment {j}");
        assert!((e.over_time.mean_square[j] - q / n).abs() < 1e-11);
        assert!((e.over_time.variance_across[j] - s2 / n).abs() < 1e-11);
        assert!((e.over_time.start_s[j] - (j * b) as f64 / FS_HZ).abs() < 1e-12);
    }
    // Time averages: the means of each record's used samples; R(τ) the mean of its segments'
    // x(t−τ)x(t) averages.
    let used = e.segments * b;
    for (i, x) in data.iter().enumerate() {
        let mean = x[..used].iter().sum::<f64>() / used as f64;
        assert!((e.mean.time_averages[i] - mean).abs() < 1e-12);
        let ms = x[..used].iter().map(|v| v * v).sum::<f64>() / used as f64;
        assert!((e.mean_square.time_averages[i] - ms).abs() < 1e-11);
        let lag = &e.autocorrelation[2];
        let k = lag.lag_len;
        let by_segment: f64 = (0..e.segments)
            .map(|j| {
                let pairs: Vec<f64> = ((j * b).max(k)..(j + 1) * b)
                    .map(|m| x[m - k] * x[m])
                    .collect();
                pairs.iter().sum::<f64>() / pairs.len() as f64
            })
            .sum::<f64>()
            / e.segments as f64;
        assert!((lag.line.time_averages[i] - by_segment).abs() < 1e-11);
    }
    let ensemble_mean = e.mean.time_averages.iter().sum::<f64>() / 3.0;
    assert!((e.mean.ensemble_average - ensemble_mean).abs() < 1e-14);
    // Records with levels 0, 1, 2 and noise of σ 1, 2, 3 are not ergodic in mean or power.
    assert!(!e.mean.ergodic && !e.mean_square.ergodic);
    assert!(e.verdict.starts_with("not ergodic in mean, mean square"));
}

#[test]
fn lockstep_reading_stops_at_the_shortest_record_and_says_so() {
    let mut noise = Noise::new(5);
    let long = noise.normals(RECORD_LEN + 5000);
    let short = noise.normals(RECORD_LEN);
    let mut a = VecSource::new(long, FS_HZ);
    let mut b = VecSource::new(short, FS_HZ);
    a.info.name = "long.wav".into();
    b.info.name = "short.wav".into();
    let mut sources: Vec<&mut dyn SampleSource> = vec![&mut a, &mut b];
    let r = analyze_ensemble(&mut sources, &EnsembleSettings::default()).unwrap();
    assert_eq!(r.samples, RECORD_LEN as u64);
    assert_eq!(r.records, 2);
    assert_eq!(r.schema, "noisesonde.ensemble/1");
    assert!(
        r.warnings
            .iter()
            .any(|w| w.contains("short.wav") && w.contains("long.wav")),
        "{:?}",
        r.warnings
    );
    let text = serde_json::to_string(&r).unwrap();
    let back: EnsembleReport = serde_json::from_str(&text).unwrap();
    assert!(
        back == r,
        "the ensemble report changed in a JSON round trip"
    );
    let v: serde_json::Value = serde_json::from_str(&text).unwrap();
    for path in [
        "/ensemble/mean/ergodic",
        "/ensemble/mean_square/ergodic",
        "/ensemble/autocorrelation/0/ergodic",
        "/ensemble/autocorrelation/0/lag_s",
        "/ensemble/over_time/variance_across",
        "/each_record/1/mean/stationary",
    ] {
        assert!(v.pointer(path).is_some(), "missing {path}");
    }
}

#[test]
fn bad_ensembles_are_typed_errors_naming_the_values() {
    let s = EnsembleSettings::default();
    let one = [info("a", FS_HZ)];
    assert_eq!(
        EnsembleAnalyzer::new(&s, &one).unwrap_err(),
        SettingsError::TooFewRecords { records: 1 }
    );
    let message = EnsembleAnalyzer::new(&s, &one).unwrap_err().to_string();
    assert!(
        message.contains("cannot be tested from one record"),
        "{message}"
    );
    let mixed = [info("a", FS_HZ), info("b", 2.0 * FS_HZ)];
    assert!(matches!(
        EnsembleAnalyzer::new(&s, &mixed).unwrap_err(),
        SettingsError::SampleRateMismatch { record: 1, .. }
    ));
    let two = [info("a", FS_HZ), info("b", FS_HZ)];
    let far = EnsembleSettings {
        lags_len: Some(vec![1, 40]),
        ..EnsembleSettings::default()
    };
    assert_eq!(
        EnsembleAnalyzer::new(&far, &two).unwrap_err(),
        SettingsError::EnsembleLag {
            lag_len: 40,
            max_lag_len: 32
        }
    );
    let mut analyzer = EnsembleAnalyzer::new(&s, &two).unwrap();
    assert!(matches!(
        analyzer.push(&[&[1.0, 2.0], &[1.0]]).unwrap_err(),
        AnalysisError::UnequalBlocks {
            record: 1,
            len: 1,
            expected: 2
        }
    ));
    assert!(matches!(
        analyzer.push(&[&[1.0]]).unwrap_err(),
        AnalysisError::BlockCount {
            blocks: 1,
            records: 2
        }
    ));
    assert!(matches!(
        analyzer.push(&[&[1.0, 2.0], &[1.0, f64::NAN]]).unwrap_err(),
        AnalysisError::NonFiniteSampleIn {
            record: 1,
            index: 1,
            ..
        }
    ));
    analyzer.push(&[&[1.0; 100], &[2.0; 100]]).unwrap();
    assert!(matches!(
        analyzer.report(&[]).unwrap_err(),
        AnalysisError::EnsembleTooShort {
            samples: 100,
            needed: 640,
            segments: 20
        }
    ));
    let mut lone = VecSource::new(vec![0.0; 10], FS_HZ);
    let mut sources: Vec<&mut dyn SampleSource> = vec![&mut lone];
    assert!(matches!(
        analyze_ensemble(&mut sources, &s).unwrap_err(),
        Error::Settings(SettingsError::TooFewRecords { records: 1 })
    ));
}

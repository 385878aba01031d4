//! The pipeline end to end on signals whose answers are known by hand.

mod common;

use common::VecSource;

use common::noise::Noise;
use noisesonde::analysis::{analyze, Analyzer, Settings};
use noisesonde::spectral::{Detrend, WelchSettings};
use noisesonde::stationarity::StationaritySettings;
use noisesonde::units::Calibration;
use noisesonde::window::WindowKind;
use noisesonde::{AnalysisError, Error, SettingsError};

fn tone(len: usize, fs: f64, f: f64, amplitude: f64, dc: f64) -> Vec<f64> {
    (0..len)
        .map(|n| dc + amplitude * (2.0 * std::f64::consts::PI * f * n as f64 / fs).sin())
        .collect()
}

fn run(samples: Vec<f64>, fs: f64, settings: &Settings) -> Result<noisesonde::Report, Error> {
    analyze(&mut VecSource::new(samples, fs), settings)
}

fn peak(values: &[f64]) -> (usize, f64) {
    values.iter().copied().enumerate().fold(
        (0, f64::MIN),
        |best, (k, v)| if v > best.1 { (k, v) } else { best },
    )
}

/// A bin-centred sine of amplitude A reads A²/2 in its bin of the power spectrum with any
/// window (the scaling divides by (Σw)², the coherent gain; Heinzel et al. 2002, eq. 19),
/// and A²/2 / ENBW_Hz in the density.
#[test]
fn bin_centred_tone_reads_its_mean_square() {
    let fs = 8192.0;
    let amplitude = 0.3;
    for window in [
        WindowKind::Hann,
        WindowKind::BlackmanHarris,
        WindowKind::FlatTop,
        WindowKind::Rectangular,
    ] {
        let settings = Settings {
            welch: WelchSettings {
                window,
                segment_len: 1024,
                ..WelchSettings::default()
            },
            ..Settings::default()
        };
        let r = run(tone(65536, fs, 1000.0, amplitude, 0.0), fs, &settings).unwrap();
        let (k, p) = peak(&r.psd.power_spectrum);
        assert_eq!(r.psd.frequency_hz[k], 1000.0, "{window}");
        let expected = amplitude * amplitude / 2.0;
        assert!(
            (p - expected).abs() < 1e-9 * expected,
            "{window}: {p} vs {expected}"
        );
        let d = r.psd.density[k];
        assert!(
            (d * r.psd.enbw_hz - expected).abs() < 1e-9 * expected,
            "{window}: density"
        );
    }
}

/// Half a bin off centre, Hann loses its scallop loss 1.4236 dB (shared/REFERENCES.md §1,
/// computed; Harris 1978 Table 1: 1.42 dB) while the HFT95 flat-top stays within its
/// 0.0044 dB flatness (Heinzel, Rüdiger & Schilling 2002, HFT95 entry).
#[test]
fn tone_between_bins_scallops_as_published() {
    let fs = 8192.0;
    let amplitude = 0.3;
    let f = 1000.0 + 4.0; // bin width 8 Hz: half a bin off
    let expected_db = 10.0 * (amplitude * amplitude / 2.0f64).log10();
    for (window, loss_db, tolerance_db) in [
        (WindowKind::Hann, 1.4236, 0.001),
        (WindowKind::FlatTop, 0.0, 0.0044),
    ] {
        let settings = Settings {
            welch: WelchSettings {
                window,
                segment_len: 1024,
                ..WelchSettings::default()
            },
            ..Settings::default()
        };
        let r = run(tone(1 << 17, fs, f, amplitude, 0.0), fs, &settings).unwrap();
        let (_, p) = peak(&r.psd.power_spectrum);
        let reading_db = 10.0 * p.log10();
        assert!(
            (reading_db - (expected_db - loss_db)).abs() < tolerance_db,
            "{window}: reads {reading_db:.5} dB, expected {:.5} dB",
            expected_db - loss_db
        );
    }
}

/// DC 3 plus a sine of amplitude 2 over whole periods: mean 3, variance A²/2 = 2,
/// mean square 9 + 2 = 11, crest factor 5/√11 (definitions, by hand).
#[test]
fn moments_of_dc_plus_sine() {
    let fs = 1000.0;
    let r = run(tone(100_000, fs, 10.0, 2.0, 3.0), fs, &Settings::default()).unwrap();
    let m = &r.moments;
    assert!((m.mean - 3.0).abs() < 1e-12);
    assert!((m.variance - 2.0).abs() < 1e-10);
    assert!((m.mean_square - 11.0).abs() < 1e-10);
    assert!((m.rms - 11f64.sqrt()).abs() < 1e-10);
    assert!((m.dc_power - 9.0).abs() < 1e-10);
    assert!((m.crest_factor.unwrap() - 5.0 / 11f64.sqrt()).abs() < 1e-9);
    assert_eq!(
        m.clipped_samples,
        Some(100_000),
        "every sample is beyond full scale 1.0"
    );
    // R(0) = mean square and C(0) = variance: the same numbers by two routes.
    assert!((r.acf.autocorrelation[0] - m.mean_square).abs() < 1e-9 * m.mean_square);
    assert!((r.acf.autocovariance[0] - m.variance).abs() < 1e-9 * m.variance);
}

/// White Gaussian noise of variance σ² sampled at fs has the one-sided density 2σ²/fs
/// (common practice; Bendat & Piersol 2010 eq. 5.66 from memory). Parseval and
/// Wiener–Khinchin checks come out near 1 and 0.
#[test]
fn white_noise_floor_parseval_and_wiener_khinchin() {
    let fs = 48_000.0;
    let sigma = 0.1;
    let x: Vec<f64> = Noise::new(99)
        .normals(1 << 20)
        .iter()
        .map(|v| v * sigma)
        .collect();
    let r = run(x, fs, &Settings::default()).unwrap();
    let expected = 2.0 * sigma * sigma / fs;
    let interior = &r.psd.density[1..r.psd.density.len() - 1];
    let mean = interior.iter().sum::<f64>() / interior.len() as f64;
    let standard_error = (2.0 / r.psd.dof).sqrt() / (interior.len() as f64).sqrt();
    assert!(
        (mean / expected - 1.0).abs() < 4.0 * standard_error + 0.005,
        "floor {mean} vs {expected}"
    );
    assert!(
        (r.checks.parseval.ratio - 1.0).abs() < 0.01,
        "Parseval {}",
        r.checks.parseval.ratio
    );
    assert!(
        r.checks.wiener_khinchin.max_deviation < 0.01,
        "WK {}",
        r.checks.wiener_khinchin.max_deviation
    );
    assert_eq!(r.checks.wiener_khinchin.lags_compared, 1024);
    // The coefficient of white noise falls to 1/e before one sample's lag.
    assert!(r.acf.one_over_e_s.unwrap() < 1.0 / fs);
    assert!(r.warnings.is_empty(), "{:?}", r.warnings);
}

#[test]
fn calibration_scales_every_quantity_and_names_the_unit() {
    let fs = 1000.0;
    let x = Noise::new(5)
        .normals(20_000)
        .iter()
        .map(|v| 0.01 * v)
        .collect::<Vec<_>>();
    let raw = run(x.clone(), fs, &Settings::default()).unwrap();
    let settings = Settings {
        calibration: Calibration {
            scale_units_per_fs: 2.0,
            unit: Some("V".into()),
        },
        ..Settings::default()
    };
    let cal = run(x, fs, &settings).unwrap();
    assert_eq!(raw.unit, "FS");
    assert_eq!(cal.unit, "V");
    assert_eq!(cal.psd.unit, "V^2/Hz");
    assert_eq!(cal.acf.unit, "V^2");
    assert!((cal.moments.rms - 2.0 * raw.moments.rms).abs() < 1e-12);
    for (a, b) in cal.psd.density.iter().zip(&raw.psd.density) {
        assert!((a - 4.0 * b).abs() <= 1e-12 * a.abs());
    }
    // Clipping is judged in full scale, before calibration: ±2 V here.
    assert_eq!(cal.moments.clipped_samples, Some(0));
}

#[test]
fn non_finite_sample_is_named_by_index_and_time() {
    let mut x = vec![0.0; 10_000];
    x[1234] = f64::NAN;
    let err = run(x, 100.0, &Settings::default()).unwrap_err();
    let text = err.to_string();
    assert!(
        matches!(
            err,
            Error::Analysis(AnalysisError::NonFiniteSample { index: 1234, .. })
        ),
        "{text}"
    );
    assert!(
        text.contains("sample 1234") && text.contains("12.34 s"),
        "{text}"
    );
}

#[test]
fn too_short_record_suggests_a_segment_that_fits() {
    let err = run(vec![0.1; 3000], 100.0, &Settings::default()).unwrap_err();
    let text = err.to_string();
    assert!(
        text.contains("3000 samples") && text.contains("--segment 2048"),
        "{text}"
    );
}

#[test]
fn bad_settings_are_refused_with_the_value_named() {
    let info = VecSource::new(vec![], 1000.0).info;
    let cases: Vec<(Settings, &str)> = vec![
        (
            Settings {
                welch: WelchSettings {
                    overlap_frac: 1.0,
                    ..Default::default()
                },
                ..Default::default()
            },
            "overlap 1",
        ),
        (
            Settings {
                welch: WelchSettings {
                    segment_len: 4,
                    ..Default::default()
                },
                ..Default::default()
            },
            "segment length 4",
        ),
        (
            Settings {
                calibration: Calibration {
                    scale_units_per_fs: 0.0,
                    unit: None,
                },
                ..Default::default()
            },
            "scale 0",
        ),
        (
            Settings {
                calibration: Calibration {
                    scale_units_per_fs: 1.0,
                    unit: Some("volt s".into()),
                },
                ..Default::default()
            },
            "'volt s'",
        ),
        (
            Settings {
                max_lag_s: Some(-1.0),
                ..Default::default()
            },
            "-1 s",
        ),
        (
            Settings {
                max_lag_s: Some(1e9),
                ..Default::default()
            },
            "exceeds the limit",
        ),
        (
            Settings {
                confidence_level: 1.5,
                ..Default::default()
            },
            "1.5",
        ),
        (
            Settings {
                stationarity: StationaritySettings {
                    segments: 5,
                    ..Default::default()
                },
                ..Default::default()
            },
            "5 stationarity segments",
        ),
        (
            Settings {
                stationarity: StationaritySettings {
                    alpha: 0.7,
                    ..Default::default()
                },
                ..Default::default()
            },
            "significance 0.7",
        ),
        (
            Settings {
                stationarity: StationaritySettings {
                    max_lag_len: 0,
                    ..Default::default()
                },
                ..Default::default()
            },
            "0 lags",
        ),
        (
            Settings {
                stationarity: StationaritySettings {
                    stretches: 21,
                    ..Default::default()
                },
                ..Default::default()
            },
            "21 stretches",
        ),
    ];
    for (settings, needle) in cases {
        let err = Analyzer::new(&settings, &info).unwrap_err();
        assert!(err.to_string().contains(needle), "{err} lacks {needle}");
    }
    let mut zero_rate = info.clone();
    zero_rate.sample_rate_hz = 0.0;
    let err = Analyzer::new(&Settings::default(), &zero_rate).unwrap_err();
    assert!(
        matches!(err, SettingsError::SampleRate { .. }) && err.to_string().contains("0 Hz"),
        "{err}"
    );
}

/// A live view asks for reports while samples keep coming; the last one equals a one-shot run.
#[test]
fn snapshot_reports_do_not_disturb_the_stream() {
    let fs = 2000.0;
    let x = Noise::new(11).ar1(50_000, 0.5, 1.0);
    let settings = Settings {
        welch: WelchSettings {
            detrend: Detrend::Linear,
            ..Default::default()
        },
        ..Default::default()
    };
    let mut live = Analyzer::new(&settings, &VecSource::new(vec![], fs).info).unwrap();
    for chunk in x.chunks(4321) {
        live.push(chunk).unwrap();
        let _ = live.report(&[]);
    }
    let snapshot = live.report(&[]).unwrap();
    let once = run(x, fs, &settings).unwrap();
    assert_eq!(snapshot, once);
}

#[test]
fn report_json_has_the_documented_fields() {
    let r = run(Noise::new(3).normals(10_000), 100.0, &Settings::default()).unwrap();
    let v = serde_json::to_value(&r).unwrap();
    for path in [
        "/schema",
        "/sample_rate_hz",
        "/samples",
        "/channel",
        "/unit",
        "/moments/mean",
        "/moments/mean_square",
        "/moments/rms",
        "/moments/variance",
        "/moments/std_dev",
        "/psd/frequency_hz",
        "/psd/density",
        "/psd/unit",
        "/psd/window/name",
        "/psd/enbw_hz",
        "/psd/segments",
        "/psd/dof",
        "/stationarity/alpha",
        "/stationarity/segments/count",
        "/stationarity/segments/segment_s",
        "/stationarity/mean/stationary",
        "/stationarity/mean/reverse_arrangements/statistic",
        "/stationarity/mean/reverse_arrangements/lower",
        "/stationarity/mean/reverse_arrangements/upper",
        "/stationarity/mean/runs/statistic",
        "/stationarity/mean/advice",
        "/stationarity/mean_square/stationary",
        "/stationarity/autocorrelation/stationary",
        "/stationarity/autocorrelation/comparison/coefficient_by_stretch",
        "/stationarity/spectrogram/density",
        "/stationarity/verdict",
        "/stationarity/ergodicity",
        "/psd/ci_lower",
        "/psd/ci_upper",
        "/acf/lag_s",
        "/acf/autocorrelation",
        "/acf/autocovariance",
        "/warnings",
    ] {
        assert!(v.pointer(path).is_some(), "missing {path}");
    }
    assert_eq!(v["schema"], "noisesonde.report/1");
}

/// The page receives the report as JSON and reads it back: nothing may be lost on the way.
#[test]
fn report_survives_a_json_round_trip() {
    let r = run(Noise::new(8).normals(10_000), 100.0, &Settings::default()).unwrap();
    let text = serde_json::to_string(&r).unwrap();
    let back: noisesonde::Report = serde_json::from_str(&text).unwrap();
    assert!(back == r, "the report changed in a JSON round trip");
    let settings: Settings = serde_json::from_str(r#"{"welch": {"segment_len": 1024}}"#).unwrap();
    assert_eq!(settings.welch.segment_len, 1024);
    assert_eq!(settings.welch.window, noisesonde::window::WindowKind::Hann);
}

/// The worker sends the report as a small JSON summary plus its arrays as transferred typed
/// arrays: taking the arrays out and putting them back must give the report unchanged, every
/// path must name a real array of the JSON, and the summary must hold no array longer than 0.
#[test]
fn report_arrays_split_and_rejoin_exactly() {
    let r = run(Noise::new(11).normals(20_000), 100.0, &Settings::default()).unwrap();
    let full = serde_json::to_value(&r).unwrap();
    let mut summary = r.clone();
    let arrays = summary.take_arrays();
    assert_eq!(arrays.arrays.len(), noisesonde::Report::ARRAY_PATHS.len());
    for (path, values) in &arrays.arrays {
        let pointer = format!("/{}", path.replace('.', "/"));
        let in_json: Vec<f64> = serde_json::from_value(full.pointer(&pointer).unwrap().clone())
            .unwrap_or_else(|e| panic!("{path}: {e}"));
        assert!(!values.is_empty(), "{path} is empty");
        assert_eq!(&in_json, values, "{path} differs from the JSON");
    }
    let summary_json = serde_json::to_value(&summary).unwrap();
    for path in noisesonde::Report::ARRAY_PATHS {
        let pointer = format!("/{}", path.replace('.', "/"));
        assert_eq!(
            summary_json.pointer(&pointer).unwrap(),
            &serde_json::json!([])
        );
    }
    assert!(serde_json::to_string(&summary).unwrap().len() < 4096);
    summary.restore_arrays(arrays);
    assert!(summary == r, "the report changed in a split and rejoin");
}

/// A constant record has nothing to order: every pair of segment values ties, so the reverse
/// arrangements count is N(N−1)/4 exactly, its expected value; no value lies off the median, so
/// there are no runs and the runs test has nothing to test; every stretch has zero variance, so
/// every coefficient is 0 and none departs from the pooled one. All three lines pass.
#[test]
fn a_constant_record_is_stationary_in_every_line() {
    let r = run(vec![0.25; 50_000], 1000.0, &Settings::default()).unwrap();
    let st = r.stationarity.unwrap();
    let n = st.segments.count as f64;
    assert_eq!(st.mean.reverse_arrangements.statistic, n * (n - 1.0) / 4.0);
    assert_eq!(st.mean.runs.statistic, 0);
    assert_eq!((st.mean.runs.above, st.mean.runs.below), (0, 0));
    assert!(st.mean.stationary && st.mean_square.stationary && st.autocorrelation.stationary);
    assert!(st.segments.variance.iter().all(|&v| v == 0.0));
}

/// Too few samples for M segments of the base length: no stationarity section, and a warning
/// that gives the numbers (20 segments of 32 samples = 640 samples by default).
#[test]
fn a_record_too_short_for_the_segments_says_so() {
    let settings = Settings {
        welch: WelchSettings {
            segment_len: 64,
            ..Default::default()
        },
        ..Default::default()
    };
    let r = run(Noise::new(4).normals(500), 1000.0, &settings).unwrap();
    assert!(r.stationarity.is_none());
    assert!(
        r.warnings
            .iter()
            .any(|w| w.contains("no stationarity tests")
                && w.contains("640 samples")
                && w.contains("500")),
        "{:?}",
        r.warnings
    );
    // The page's array split works without the stationarity part.
    let mut summary = r.clone();
    let arrays = summary.take_arrays();
    assert!(arrays.get("stationarity.segments.mean").unwrap().is_empty());
    summary.restore_arrays(arrays);
    assert!(summary == r);
}

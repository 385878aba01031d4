//! The live spectrum (src/live.rs) against scipy, against the crate's own Welch on the same
//! samples, and against closed forms.
//!
//! Outside truths:
//! - tests/reference/vectors.json "live" cases (tests/reference/generate.py, pinned
//!   numpy/scipy): `scipy.signal.welch` over the samples of the last N segments, the per-bin
//!   maximum of single-segment `scipy.signal.welch` densities, and the exponential recursion over
//!   them;
//! - closed forms derived in each test's comment (bin-centred Hann tones, the RC step response,
//!   Parseval);
//! - the chi-square law Var[G·χ²_ν/ν] = 2G²/ν (any statistics text; common practice), checked by
//!   simulation for the degrees of freedom.

mod common;

use common::noise::Noise;
use common::*;
use noisesonde::live::{exponential_dof, LiveAveraging, LiveSnapshot, LiveSpectrum};
use noisesonde::spectral::confidence::welch_dof;
use noisesonde::spectral::{Detrend, Welch, WelchPlan, WelchSettings};
use noisesonde::window::WindowKind;
use proptest::prelude::*;

/// Agreement required between the live mean and Welch's mean over the same segments: both sum
/// the same |X|² values, in a different order.
const SAME_SUM_REL_TOL: f64 = 1e-12;
/// Closed forms evaluated in floating point (a few dozen roundings).
const CLOSED_FORM_REL_TOL: f64 = 1e-12;
/// Rounding allowed when a mean of values is compared with their maximum (a mean of equal values
/// can round a few ulps above them).
const MEAN_VS_MAX_REL_TOL: f64 = 1e-12;
/// The audio quantum of the page's microphone path (Web Audio render quantum, common practice).
const QUANTUM_LEN: usize = 128;

fn plan(window: WindowKind, segment_len: usize, overlap_frac: f64, detrend: Detrend) -> WelchPlan {
    WelchPlan::new(&WelchSettings {
        window,
        segment_len,
        overlap_frac,
        detrend,
        ..Default::default()
    })
    .unwrap()
}

fn push_in_quanta(live: &mut LiveSpectrum, x: &[f64]) {
    for block in x.chunks(QUANTUM_LEN) {
        live.push(block).unwrap();
    }
}

fn welch_of(plan: &WelchPlan, x: &[f64], fs: f64) -> noisesonde::spectral::WelchResult {
    let mut welch = Welch::new(plan.clone());
    welch.push(x).unwrap();
    welch.finish(fs).unwrap()
}

/// Bin-centred cosine A cos(2π m n / L + φ).
fn tone(len: usize, amplitude: f64, bin: f64, segment_len: usize, phase: f64) -> Vec<f64> {
    (0..len)
        .map(|n| {
            amplitude
                * (2.0 * std::f64::consts::PI * bin * n as f64 / segment_len as f64 + phase).cos()
        })
        .collect()
}

#[test]
fn live_matches_scipy_for_every_reference_case() {
    let doc = vectors();
    let cases = doc["live"].as_array().unwrap();
    assert!(cases.len() >= 4, "live reference cases missing");
    for case in cases {
        let (x, fs) = input(&doc, case["input"].as_str().unwrap());
        let plan = plan(
            case["window"].as_str().unwrap().parse().unwrap(),
            case["segment_len"].as_u64().unwrap() as usize,
            case["overlap_frac"].as_f64().unwrap(),
            case["detrend"].as_str().unwrap().parse().unwrap(),
        );
        let pushed = case["pushed_samples"].as_u64().unwrap() as usize;
        let segments = case["linear_segments"].as_u64().unwrap() as usize;
        let what = format!("{} {:?} N={segments}", case["input"], plan.settings());

        let mut linear =
            LiveSpectrum::new(plan.clone(), fs, LiveAveraging::Linear { segments }).unwrap();
        push_in_quanta(&mut linear, &x[..pushed]);
        let snap = linear.snapshot().unwrap();
        assert_eq!(
            snap.segments_total,
            case["segments_pushed"].as_u64().unwrap()
        );
        assert_eq!(snap.segments_averaged, segments as u64);
        // scipy.signal.welch over the samples of the last N segments (N = 1: one segment).
        assert_close(
            &format!("{what}: linear"),
            &snap.density,
            &floats(&case["last_n_density"]),
            SCIPY_REL_TOL,
            SCIPY_ABS_FRAC,
        );
        // Per-bin maximum of every segment's scipy.signal.welch density.
        assert_close(
            &format!("{what}: peak hold"),
            &snap.peak_density,
            &floats(&case["peak_density"]),
            SCIPY_REL_TOL,
            SCIPY_ABS_FRAC,
        );

        let time_constant_s = case["time_constant_s"].as_f64().unwrap();
        let mut exponential =
            LiveSpectrum::new(plan, fs, LiveAveraging::Exponential { time_constant_s }).unwrap();
        push_in_quanta(&mut exponential, &x[..pushed]);
        let snap = exponential.snapshot().unwrap();
        assert_close(
            &format!("{what}: alpha"),
            &[snap.alpha],
            &[case["exponential_alpha"].as_f64().unwrap()],
            1e-15,
            0.0,
        );
        // The recursion G ← G + α(P − G) over scipy's single-segment densities.
        assert_close(
            &format!("{what}: exponential"),
            &snap.density,
            &floats(&case["exponential_density"]),
            SCIPY_REL_TOL,
            SCIPY_ABS_FRAC,
        );
    }
}

/// After exactly N segments the linear mean is Welch's mean over the same samples: the same
/// periodograms, summed in another order.
#[test]
fn linear_mean_of_n_segments_equals_welch_on_the_same_samples() {
    let doc = vectors();
    let (x, fs) = input(&doc, "mixed");
    for (window, segment_len, overlap, detrend, n) in [
        (WindowKind::Hann, 1024, 0.5, Detrend::Mean, 12),
        (WindowKind::BlackmanHarris, 500, 0.75, Detrend::Linear, 9),
        (WindowKind::Rectangular, 333, 0.0, Detrend::None, 1),
    ] {
        let plan = plan(window, segment_len, overlap, detrend);
        let samples = (n - 1) * plan.step_len() + segment_len;
        let welch = welch_of(&plan, &x[..samples], fs);
        assert_eq!(welch.segments, n);
        let mut live = LiveSpectrum::new(plan, fs, LiveAveraging::Linear { segments: n }).unwrap();
        push_in_quanta(&mut live, &x[..samples]);
        let snap = live.snapshot().unwrap();
        let what = format!("{window} L={segment_len} N={n}");
        assert_close(&what, &snap.density, &welch.density, SAME_SUM_REL_TOL, 0.0);
        assert_eq!(snap.dof, welch.dof, "{what}: dof");
        assert_eq!(snap.enbw_hz, welch.enbw_hz, "{what}: enbw");
        assert_eq!(snap.bin_width_hz, welch.bin_width_hz, "{what}: bin width");
        assert_eq!(snap.overlap_len, welch.overlap_len, "{what}: overlap");
    }
}

/// After M > N segments the sliding mean is Welch's mean over the samples of the last N
/// segments, however many times the ring has wrapped.
#[test]
fn sliding_mean_equals_welch_over_the_last_n_segments() {
    let doc = vectors();
    let (x, fs) = input(&doc, "white");
    let plan = plan(WindowKind::Hann, 256, 0.5, Detrend::Mean);
    let step = plan.step_len();
    let n = 6;
    let mut live =
        LiveSpectrum::new(plan.clone(), fs, LiveAveraging::Linear { segments: n }).unwrap();
    let mut pushed = 0;
    for m in [7usize, 13, 40, 77, 150] {
        let samples = (m - 1) * step + plan.segment_len();
        push_in_quanta(&mut live, &x[pushed..samples]);
        pushed = samples;
        let snap = live.snapshot().unwrap();
        assert_eq!(snap.segments_total, m as u64);
        let first = (m - n) * step;
        let welch = welch_of(&plan, &x[first..samples], fs);
        assert_eq!(welch.segments, n);
        assert_close(
            &format!("M={m}"),
            &snap.density,
            &welch.density,
            SAME_SUM_REL_TOL,
            0.0,
        );
        // Newest segment m − 1 ends at ((m − 1)S + L)/f_s.
        assert_eq!(snap.newest_segment_end_s, samples as f64 / fs);
    }
}

/// A bin-centred cosine of amplitude A under Hann: every segment's transform at the tone's bin
/// is A·Σw/2 (the image at −m does not leak into bin m, and the neighbours m ± 1 get half
/// the amplitude: Harris 1978, Hann kernel 0.5, −0.25, −0.25). So the density there is
/// 2(AΣw/2)²/(f_s Σw²) = (A²/2)/ENBW_hz with ENBW = 1.5 bins, a quarter of it at m ± 1, and the
/// exponential mean converges to (here: stays at) Welch's value.
#[test]
fn exponential_mean_of_a_bin_centred_tone_is_its_closed_form() {
    let fs = 48_000.0;
    let segment_len = 4096;
    let plan = plan(WindowKind::Hann, segment_len, 0.5, Detrend::Mean);
    for (amplitude, bin) in [(1.0, 85.0), (0.01, 400.0), (3.0, 1000.0)] {
        let x = tone(60 * 2048, amplitude, bin, segment_len, 0.4);
        let mut live = LiveSpectrum::new(
            plan.clone(),
            fs,
            LiveAveraging::Exponential {
                time_constant_s: 0.25,
            },
        )
        .unwrap();
        push_in_quanta(&mut live, &x);
        let snap = live.snapshot().unwrap();
        let enbw_hz = 1.5 * fs / segment_len as f64;
        let expected = amplitude * amplitude / 2.0 / enbw_hz;
        let m = bin as usize;
        let what = format!("A={amplitude} bin={bin}");
        assert!(
            (snap.density[m] - expected).abs() <= CLOSED_FORM_REL_TOL * expected,
            "{what}: {} vs (A²/2)/ENBW = {expected}",
            snap.density[m]
        );
        for side in [m - 1, m + 1] {
            assert!(
                (snap.density[side] - expected / 4.0).abs() <= CLOSED_FORM_REL_TOL * expected,
                "{what}: bin {side}"
            );
        }
        let welch = welch_of(&plan, &x, fs);
        assert!((welch.density[m] - expected).abs() <= CLOSED_FORM_REL_TOL * expected);
    }
}

/// Step response: with no overlap each segment holds one level only. A bin-centred tone whose
/// level steps from P0 to P1 at a segment boundary moves the exponential mean by
/// (G_k − P0)/(P1 − P0) = 1 − (1 − α)^k after k segments of the new level, and with
/// α = 1 − exp(−S/(f_s τ)) this is the RC step response 1 − exp(−k S/(f_s τ)) at the segment
/// instants (closed form).
#[test]
fn exponential_step_response_is_one_minus_beta_to_the_k() {
    let fs = 8000.0;
    let segment_len = 512;
    let time_constant_s = 0.3;
    let plan = plan(WindowKind::Hann, segment_len, 0.0, Detrend::Mean);
    let mut live =
        LiveSpectrum::new(plan, fs, LiveAveraging::Exponential { time_constant_s }).unwrap();
    let before = tone(10 * segment_len, 0.2, 37.0, segment_len, 0.0);
    let after = tone(30 * segment_len, 0.9, 37.0, segment_len, 1.1);
    push_in_quanta(&mut live, &before);
    let p0 = live.snapshot().unwrap().density[37];
    let enbw_hz = 1.5 * fs / segment_len as f64;
    let p1 = 0.9 * 0.9 / 2.0 / enbw_hz;
    let hop_s = segment_len as f64 / fs;
    let alpha = 1.0 - (-hop_s / time_constant_s).exp();
    assert!((live.alpha() - alpha).abs() < 1e-15);
    for k in 1..=30 {
        let start = (k - 1) * segment_len;
        push_in_quanta(&mut live, &after[start..start + segment_len]);
        let g = live.snapshot().unwrap().density[37];
        let moved = (g - p0) / (p1 - p0);
        let closed = 1.0 - (1.0 - alpha).powi(k as i32);
        let rc = 1.0 - (-(k as f64) * hop_s / time_constant_s).exp();
        assert!(
            (moved - closed).abs() < CLOSED_FORM_REL_TOL,
            "k={k}: moved {moved} vs 1 − (1 − α)^k = {closed}"
        );
        assert!((moved - rc).abs() < CLOSED_FORM_REL_TOL, "k={k}: RC {rc}");
    }
}

/// Equivalent degrees of freedom: linear is Welch's (Hann at 50 %: 36K²/(19K − 1), shared
/// REFERENCES §5: K=10 gives 19.047619); exponential is 2 for one segment and tends to
/// 2(2 − α)/α without overlap (from memory: (2 − α)/α equivalent averages).
#[test]
fn degrees_of_freedom_match_their_closed_forms() {
    let fs = 1000.0;
    let x = Noise::new(4).normals(64 * 200);
    let hann_half = plan(WindowKind::Hann, 64, 0.5, Detrend::Mean);
    let mut live = LiveSpectrum::new(
        hann_half.clone(),
        fs,
        LiveAveraging::Linear { segments: 10 },
    )
    .unwrap();
    push_in_quanta(&mut live, &x);
    let dof = live.snapshot().unwrap().dof;
    assert!((dof - 19.047619).abs() < 1e-6, "{dof}");
    assert!((dof - 36.0 * 100.0 / 189.0).abs() < 1e-12 * dof);

    let no_overlap = plan(WindowKind::Hann, 64, 0.0, Detrend::Mean);
    let mut live = LiveSpectrum::new(
        no_overlap.clone(),
        fs,
        LiveAveraging::Exponential {
            time_constant_s: 0.5,
        },
    )
    .unwrap();
    live.push(&x[..64]).unwrap();
    assert_eq!(live.snapshot().unwrap().dof, 2.0);
    push_in_quanta(&mut live, &x[64..]);
    let snap = live.snapshot().unwrap();
    let alpha = snap.alpha;
    let steady = 2.0 * (2.0 - alpha) / alpha;
    // 200 segments of α ≈ 0.12: (1 − α)^400 of the start remains, far below the tolerance.
    assert!(
        (snap.dof - steady).abs() < 1e-9 * steady,
        "{} vs 2(2 − α)/α = {steady}",
        snap.dof
    );
    let w = WindowKind::Hann.coefficients(64);
    assert_eq!(exponential_dof(&w, 64, alpha, 200), snap.dof);
    assert_eq!(exponential_dof(&w, 32, 1.0, 1), 2.0);
    // α = 1 keeps only the newest segment: two degrees of freedom whatever the overlap.
    assert!((exponential_dof(&w, 16, 1.0, 50) - 2.0).abs() < 1e-15);
}

/// The degrees of freedom by simulation: for Gaussian white noise every interior bin of the
/// average is G·χ²_ν/ν, so across bins and independent snapshots Var/Mean² = 2/ν (chi-square
/// law; common practice). Hann at 75 % overlap makes the overlap correction large (×1.7 here for
/// the exponential mean, ρ(1)² = 0.43), so a formula without it would fail.
#[test]
fn degrees_of_freedom_agree_with_simulated_white_noise() {
    // Pooled estimate from ~25 000 correlated bin values: its relative standard error is about
    // 2-3 %; 10 % is four to five standard errors and still far from the 80 % an uncorrected
    // formula would be off by.
    const SIMULATED_DOF_REL_TOL: f64 = 0.10;
    let fs = 1000.0;
    let segment_len = 256;
    let plan = plan(WindowKind::Hann, segment_len, 0.75, Detrend::Mean);
    let step = plan.step_len();
    let mut noise = Noise::new(2024);
    for averaging in [
        LiveAveraging::Linear { segments: 8 },
        LiveAveraging::Exponential {
            time_constant_s: 0.3,
        },
    ] {
        let mut live = LiveSpectrum::new(plan.clone(), fs, averaging).unwrap();
        // Snapshots 150 segments apart are independent (ring of 8; exponential (1 − α)^150 ≈ 5e-6).
        let gap_segments = 150;
        let mut values = Vec::new();
        let mut dof = 0.0;
        live.push(&noise.normals(segment_len - step)).unwrap();
        for _ in 0..100 {
            push_in_quanta(&mut live, &noise.normals(gap_segments * step));
            let snap = live.snapshot().unwrap();
            dof = snap.dof;
            values.extend_from_slice(&snap.density[2..snap.density.len() - 2]);
        }
        let mean = values.iter().sum::<f64>() / values.len() as f64;
        let var = values.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / values.len() as f64;
        let simulated = 2.0 * mean * mean / var;
        assert!(
            (simulated / dof - 1.0).abs() < SIMULATED_DOF_REL_TOL,
            "{averaging}: simulated ν = {simulated}, formula {dof}"
        );
    }
    // The formulas themselves differ from the uncorrected ones by far more than the tolerance.
    let w = WindowKind::Hann.coefficients(segment_len);
    assert!(welch_dof(&w, step, 8) < 0.7 * 16.0);
}

/// With unit gains a segment's recorded power is its windowed mean square over the window's mean
/// square, Σ(w·x)²/Σw² (Parseval: Σ_one-sided c_k|X_k|² = L Σ(w·x)² for even L), computed here
/// in the time domain; with the gains g_k = k a bin-centred Hann tone at bin m gives
/// (A²/2)(m·1 + ((m − 1) + (m + 1))/4)/1.5 = (A²/2)·m (closed form from the Hann kernel above).
#[test]
fn segment_powers_match_parseval_and_weighted_tone_closed_form() {
    let fs = 2000.0;
    let segment_len = 200;
    let bins = segment_len / 2 + 1;
    let plan = plan(WindowKind::Hann, segment_len, 0.5, Detrend::None);
    let w = plan.window().to_vec();
    let step = plan.step_len();
    let ramp: Vec<f64> = (0..bins).map(|k| k as f64).collect();
    let record = |x: &[f64]| {
        let mut live = LiveSpectrum::new(plan.clone(), fs, LiveAveraging::default()).unwrap();
        live.set_band_weights(vec![vec![1.0; bins], ramp.clone()], 64)
            .unwrap();
        push_in_quanta(&mut live, x);
        let drained: Vec<(f64, Vec<f64>)> = live
            .drain_segment_powers()
            .map(|p| (p.end_time_s, p.power.to_vec()))
            .collect();
        assert_eq!(live.segment_powers_queued(), 0);
        drained
    };
    let samples = step * 10 + segment_len;
    let amplitude = 0.7;
    let m = 23.0;
    let pure = tone(samples, amplitude, m, segment_len, 0.3);
    let noisy: Vec<f64> = pure
        .iter()
        .zip(Noise::new(9).normals(samples))
        .map(|(t, n)| t + 0.3 * n)
        .collect();
    let sum_w2: f64 = w.iter().map(|v| v * v).sum();
    let noisy_powers = record(&noisy);
    assert_eq!(noisy_powers.len(), 11);
    for (j, (end_time_s, power)) in noisy_powers.iter().enumerate() {
        assert_eq!(*end_time_s, (j * step + segment_len) as f64 / fs);
        let seg = &noisy[j * step..j * step + segment_len];
        let parseval: f64 = seg
            .iter()
            .zip(&w)
            .map(|(x, w)| (x * w).powi(2))
            .sum::<f64>()
            / sum_w2;
        assert!(
            (power[0] - parseval).abs() < CLOSED_FORM_REL_TOL * parseval,
            "segment {j}: {} vs Σ(wx)²/Σw² = {parseval}",
            power[0]
        );
    }
    let weighted = amplitude * amplitude / 2.0 * m;
    for (j, (_, power)) in record(&pure).iter().enumerate() {
        assert!(
            (power[1] - weighted).abs() < CLOSED_FORM_REL_TOL * weighted,
            "segment {j}: {} vs (A²/2)m = {weighted}",
            power[1]
        );
    }
}

/// Noise with bursts, cut into random blocks: the peak-hold trace is at least the average in
/// every bin, for both averaging modes (a mean never exceeds its largest term; up to rounding).
fn check_peak_at_least_average(snap: &LiveSnapshot) {
    for (bin, (peak, avg)) in snap.peak_density.iter().zip(&snap.density).enumerate() {
        assert!(
            *peak >= avg * (1.0 - MEAN_VS_MAX_REL_TOL),
            "bin {bin}: peak {peak} < average {avg}"
        );
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(24))]
    #[test]
    fn peak_hold_is_at_least_the_average_everywhere(
        seed in 1u64..u64::MAX,
        burst_at in 0usize..6000,
        burst_gain in 1.0f64..100.0,
        block_len in 1usize..700,
        segments in 1usize..12,
        time_constant_s in 0.001f64..2.0,
    ) {
        let mut x = Noise::new(seed).normals(8000);
        for v in x.iter_mut().skip(burst_at).take(300) {
            *v *= burst_gain;
        }
        for averaging in [
            LiveAveraging::Linear { segments },
            LiveAveraging::Exponential { time_constant_s },
        ] {
            let mut live = LiveSpectrum::new(
                plan(WindowKind::Hann, 256, 0.5, Detrend::Mean), 1000.0, averaging).unwrap();
            for (i, block) in x.chunks(block_len).enumerate() {
                live.push(block).unwrap();
                if i % 5 == 0 {
                    if let Some(snap) = live.snapshot() {
                        check_peak_at_least_average(&snap);
                    }
                }
            }
            check_peak_at_least_average(&live.snapshot().unwrap());
        }
    }
}

/// The same stream cut into 128-sample quanta, one block, or uneven blocks gives identical
/// snapshots and segment powers, bit for bit.
#[test]
fn results_do_not_depend_on_how_the_stream_is_cut() {
    let doc = vectors();
    let (x, fs) = input(&doc, "mixed");
    for averaging in [
        LiveAveraging::Linear { segments: 7 },
        LiveAveraging::Exponential {
            time_constant_s: 0.4,
        },
    ] {
        let build = || {
            let plan = plan(WindowKind::Hann, 1000, 0.5, Detrend::Linear);
            let mut live = LiveSpectrum::new(plan, fs, averaging).unwrap();
            live.set_band_weights(vec![vec![1.0; 501]], 100).unwrap();
            live
        };
        let run = |cuts: &mut dyn Iterator<Item = usize>| {
            let mut live = build();
            let mut start = 0;
            while start < x.len() {
                let len = cuts.next().unwrap().min(x.len() - start);
                live.push(&x[start..start + len]).unwrap();
                start += len;
            }
            let powers: Vec<(f64, Vec<f64>)> = live
                .drain_segment_powers()
                .map(|p| (p.end_time_s, p.power.to_vec()))
                .collect();
            (live.snapshot().unwrap(), powers)
        };
        let quanta = run(&mut std::iter::repeat(QUANTUM_LEN));
        let whole = run(&mut std::iter::once(x.len()));
        let uneven = run(&mut [1usize, 999, 7, 4096, 333, 2].into_iter().cycle());
        assert_eq!(quanta, whole, "{averaging}");
        assert_eq!(quanta, uneven, "{averaging}");
        assert_eq!(quanta.1.len(), 39);
    }
}

//! Band-integrated power: sub-bands add up to the whole, the whole equals Parseval's Σ P·Δf,
//! and a band around a tone holds the tone's mean square (A²/2 for amplitude A, by hand).

mod common;

use common::noise::Noise;
use noisesonde::bands::{band_power, band_rms};
use noisesonde::spectral::{Welch, WelchPlan, WelchSettings};
use proptest::prelude::*;

fn psd_of(x: &[f64], fs: f64, segment_len: usize) -> noisesonde::report::PsdReport {
    let settings = WelchSettings {
        segment_len,
        ..WelchSettings::default()
    };
    let mut welch = Welch::new(WelchPlan::new(&settings).unwrap());
    welch.push(x).unwrap();
    let r = welch.finish(fs).unwrap();
    noisesonde::report::PsdReport {
        frequency_hz: r.frequency_hz,
        density: r.density,
        power_spectrum: r.power_spectrum,
        unit: "V^2/Hz".into(),
        power_spectrum_unit: "V^2".into(),
        window: settings.window,
        segment_len,
        overlap_len: r.overlap_len,
        detrend: settings.detrend,
        average: settings.average,
        bin_width_hz: r.bin_width_hz,
        enbw_bins: r.enbw_bins,
        enbw_hz: r.enbw_hz,
        segments: r.segments,
        dof: r.dof,
        unused_samples: 0,
        confidence_level: 0.95,
        ci_lower: vec![],
        ci_upper: vec![],
        ci_factor_lower: 0.0,
        ci_factor_upper: 0.0,
    }
}

#[test]
fn whole_band_is_the_parseval_sum_and_a_tone_band_holds_its_mean_square() {
    let fs = 48_000.0;
    let x: Vec<f64> = (0..1 << 16)
        .map(|n| 0.2 * (2.0 * std::f64::consts::PI * 1000.0 * n as f64 / fs).sin())
        .collect();
    let psd = psd_of(&x, fs, 4096);
    let total: f64 = psd.density.iter().sum::<f64>() * psd.bin_width_hz;
    assert!((band_power(&psd, 0.0, fs / 2.0) - total).abs() < 1e-12 * total);
    // ±10 bins around 1 kHz hold the tone's mean square 0.2²/2 = 0.02 (Hann leakage beyond
    // ±10 bins is below 1e-6 of the peak).
    let tone = band_power(&psd, 1000.0 - 117.2, 1000.0 + 117.2);
    assert!((tone - 0.02).abs() < 1e-6, "{tone}");
    assert!((band_rms(&psd, 900.0, 1100.0) - 0.02f64.sqrt()).abs() < 1e-6);
}

proptest! {
    #[test]
    fn sub_bands_add_up(cuts in prop::collection::vec(0.0..500.0f64, 1..6), seed in 1u64..1000) {
        let fs = 1000.0;
        let x = Noise::new(seed).normals(8192);
        let psd = psd_of(&x, fs, 256);
        let mut edges = cuts.clone();
        edges.push(0.0);
        edges.push(500.0);
        edges.sort_by(f64::total_cmp);
        let parts: f64 = edges.windows(2).map(|w| band_power(&psd, w[0], w[1])).sum();
        let whole = band_power(&psd, 0.0, 500.0);
        prop_assert!((parts - whole).abs() <= 1e-12 * whole);
        // Order of the edges does not matter; out-of-range edges are clamped.
        prop_assert_eq!(band_power(&psd, 300.0, 100.0), band_power(&psd, 100.0, 300.0));
        prop_assert!((band_power(&psd, -50.0, 900.0) - whole).abs() <= 1e-12 * whole);
    }
}

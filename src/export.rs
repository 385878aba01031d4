//! Text exports of a report (CSV with the settings and units written in), shared by the
//! command line and the page so both write the same files.

use std::fmt::Write as _;

use crate::report::Report;

/// The PSD as CSV: `#` lines with the source and every setting that shaped the estimate, then
/// `frequency_hz, density, amplitude density, power spectrum, ci_lower, ci_upper` with the units
/// in the column names. Numbers in Rust's shortest round-trip form.
pub fn psd_csv(report: &Report) -> String {
    let psd = &report.psd;
    let u = &report.units;
    let mut out = String::new();
    let _ = writeln!(
        out,
        "# noisesonde {} PSD of {} channel {}",
        report.schema, report.source.name, report.channel
    );
    let _ = writeln!(
        out,
        "# sample_rate_hz={} window={} segment_len={} overlap_len={} detrend={} average={} enbw_bins={} enbw_hz={} segments={} dof={} confidence_level={}",
        report.sample_rate_hz,
        psd.window,
        psd.segment_len,
        psd.overlap_len,
        psd.detrend,
        psd.average,
        psd.enbw_bins,
        psd.enbw_hz,
        psd.segments,
        psd.dof,
        psd.confidence_level
    );
    let _ = writeln!(
        out,
        "frequency_hz,density_{d},amplitude_density_{a},power_spectrum_{p},ci_lower_{d},ci_upper_{d}",
        d = u.density,
        a = u.amplitude_density,
        p = u.power
    );
    for i in 0..psd.frequency_hz.len() {
        let _ = writeln!(
            out,
            "{},{:e},{:e},{:e},{:e},{:e}",
            psd.frequency_hz[i],
            psd.density[i],
            psd.density[i].sqrt(),
            psd.power_spectrum[i],
            psd.ci_lower.get(i).copied().unwrap_or(f64::NAN),
            psd.ci_upper.get(i).copied().unwrap_or(f64::NAN)
        );
    }
    out
}

/// The autocorrelation as CSV: `lag_s, autocorrelation, autocovariance, coefficient`.
pub fn acf_csv(report: &Report) -> String {
    let acf = &report.acf;
    let mut out = String::new();
    let _ = writeln!(
        out,
        "# noisesonde {} autocorrelation of {} channel {}",
        report.schema, report.source.name, report.channel
    );
    let _ = writeln!(
        out,
        "# sample_rate_hz={} estimator={} samples={}",
        report.sample_rate_hz, acf.estimator, report.samples
    );
    let _ = writeln!(
        out,
        "lag_s,autocorrelation_{p},autocovariance_{p},coefficient",
        p = report.units.power
    );
    for i in 0..acf.lag_s.len() {
        let _ = writeln!(
            out,
            "{},{:e},{:e},{:e}",
            acf.lag_s[i], acf.autocorrelation[i], acf.autocovariance[i], acf.coefficient[i]
        );
    }
    out
}

//! Tick positions and labels that read well: 1, 2, 5 steps, `1k` for 1000 Hz, `1e-12` for
//! small values, instead of plotters' defaults (`9.999999e-5` on log axes).

/// Significant digits in tick labels; ticks fall on 1-2-5 steps, so two would do, three keeps
/// labels of other values (1.5k, 22.1k) honest.
const LABEL_DIGITS: i32 = 3;
/// Slack in log10 units when testing whether a tick lies inside an axis range, so a tick on the
/// edge is not lost to rounding.
const EDGE_SLACK_LOG: f64 = 1e-9;

/// Ticks of one axis in axis space (log10 of the value on a logarithmic axis): `bold` are
/// labelled and get a grid line, `light` get a faint grid line only.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Ticks {
    pub(crate) bold: Vec<f64>,
    pub(crate) light: Vec<f64>,
    /// Step between bold ticks on a linear axis (0 on a logarithmic one).
    pub(crate) step: f64,
}

/// Ticks of a logarithmic axis from 10^`lo_log` to 10^`hi_log`, with at most `max_labels`
/// labelled ones (at least one decade label where the range holds a power of ten).
///
/// Tries mantissas {1, 2, 5} per decade, then {1, 2, …, 9} for narrow ranges, then decades only,
/// then every 2nd, 3rd, 5th, 10th … decade.
pub(crate) fn log_ticks(lo_log: f64, hi_log: f64, max_labels: usize) -> Ticks {
    let max_labels = max_labels.max(2);
    let all: Vec<f64> = (1..=9).map(f64::from).collect();
    let one_two_five = [1.0, 2.0, 5.0];
    let in_range = |mantissas: &[f64], decade_step: i64| -> Vec<f64> {
        log_points(lo_log, hi_log, mantissas, decade_step)
    };
    let decades = hi_log - lo_log;

    let bold_125 = in_range(&one_two_five, 1);
    if decades < 1.0 {
        let bold_all = in_range(&all, 1);
        if bold_125.len() < 3 && bold_all.len() <= max_labels {
            return Ticks {
                bold: bold_all,
                light: vec![],
                step: 0.0,
            };
        }
    }
    if bold_125.len() <= max_labels && decades <= 3.0 {
        let light = minus(&in_range(&all, 1), &bold_125);
        return Ticks {
            bold: bold_125,
            light,
            step: 0.0,
        };
    }
    for decade_step in [1, 2, 3, 4, 5, 10, 20, 50, 100] {
        let bold = in_range(&[1.0], decade_step);
        if bold.len() <= max_labels {
            let light = if decade_step == 1 {
                if decades <= 10.0 {
                    minus(&in_range(&all, 1), &bold)
                } else {
                    vec![]
                }
            } else {
                minus(&in_range(&[1.0], 1), &bold)
            };
            return Ticks {
                bold,
                light,
                step: 0.0,
            };
        }
    }
    Ticks {
        bold: vec![],
        light: vec![],
        step: 0.0,
    }
}

/// log10 of m·10^d for each mantissa m and each decade d (a multiple of `decade_step`) inside
/// [lo_log, hi_log], ascending.
fn log_points(lo_log: f64, hi_log: f64, mantissas: &[f64], decade_step: i64) -> Vec<f64> {
    if !(lo_log.is_finite() && hi_log.is_finite()) || hi_log < lo_log {
        return vec![];
    }
    // Axis ranges are bounded by the f64 exponent range (|log10| < 330), so these fit in i64.
    let first = lo_log.floor() as i64;
    let last = hi_log.ceil() as i64;
    let mut out = vec![];
    for decade in first..=last {
        if decade.rem_euclid(decade_step) != 0 {
            continue;
        }
        for &m in mantissas {
            let v = decade as f64 + m.log10();
            if v >= lo_log - EDGE_SLACK_LOG && v <= hi_log + EDGE_SLACK_LOG {
                out.push(v);
            }
        }
    }
    out
}

/// The points of `a` that are not (to rounding) in `b`.
fn minus(a: &[f64], b: &[f64]) -> Vec<f64> {
    a.iter()
        .copied()
        .filter(|x| !b.iter().any(|y| (x - y).abs() < EDGE_SLACK_LOG))
        .collect()
}

/// Ticks of a linear axis from `lo` to `hi` on a 1-2-5 step, with at most `max_labels` labelled
/// ones; light ticks subdivide each step.
pub(crate) fn linear_ticks(lo: f64, hi: f64, max_labels: usize) -> Ticks {
    let max_labels = max_labels.max(2);
    let span = hi - lo;
    if !(span.is_finite() && span > 0.0) {
        return Ticks {
            bold: vec![],
            light: vec![],
            step: 0.0,
        };
    }
    let raw = span / max_labels as f64;
    let decade = 10f64.powf(raw.log10().floor());
    let (step, divisions) = [(1.0, 5.0), (2.0, 4.0), (5.0, 5.0), (10.0, 5.0)]
        .into_iter()
        .map(|(m, d)| (m * decade, d))
        .find(|(s, _)| span / s + 1.0 <= max_labels as f64)
        .unwrap_or((10.0 * decade, 5.0));
    let points = |step: f64| -> Vec<f64> {
        let first = (lo / step - 1e-9).ceil();
        let last = (hi / step + 1e-9).floor();
        // The number of points is at most a few hundred: span / step ≤ max_labels × divisions.
        let count = (last - first).max(-1.0) as i64;
        (0..=count).map(|k| (first + k as f64) * step).collect()
    };
    let bold = points(step);
    let light = minus(&points(step / divisions), &bold);
    Ticks { bold, light, step }
}

/// Label of a tick at `value` on a linear axis whose labelled ticks are `step` apart: as many
/// decimals as the step needs, or scientific notation for very small or large values.
pub(crate) fn format_linear(value: f64, step: f64) -> String {
    if value == 0.0 || (step > 0.0 && value.abs() < step * 1e-6) {
        return "0".to_string();
    }
    if !(value.is_finite() && step.is_finite() && step > 0.0) {
        return String::new();
    }
    let step_exponent = step.log10().floor() as i32;
    // Snap to the step, and nudge up so that 0.9999999e-9 counts as 1e-9.
    let value = (value / step).round() * step;
    if value == 0.0 {
        return "0".to_string();
    }
    let magnitude = (value.abs() * (1.0 + 1e-9)).log10().floor() as i32;
    if (-3..=5).contains(&magnitude) && step_exponent >= -6 {
        let decimals = (-step_exponent).max(0) as usize;
        let text = format!("{value:.decimals$}");
        return if text
            .trim_start_matches('-')
            .trim_matches(['0', '.'])
            .is_empty()
        {
            "0".to_string()
        } else {
            text
        };
    }
    let decimals = (magnitude - step_exponent).clamp(0, 6) as usize;
    let mantissa = value / 10f64.powi(magnitude);
    let text = format!("{mantissa:.decimals$}");
    format!("{}e{magnitude}", trim_zeros(&text))
}

/// A frequency as a tick label: `0.5`, `20`, `1k`, `2.5k`, `1M`; below 0.001 Hz in scientific
/// notation (`1e-4`).
///
/// ```
/// use noisesonde::plot::format_hz;
/// assert_eq!(format_hz(1000.0), "1k");
/// assert_eq!(format_hz(999.9999999999998), "1k");
/// assert_eq!(format_hz(24000.0), "24k");
/// assert_eq!(format_hz(0.05), "0.05");
/// ```
pub fn format_hz(frequency_hz: f64) -> String {
    if !frequency_hz.is_finite() {
        return String::new();
    }
    if frequency_hz == 0.0 {
        return "0".to_string();
    }
    let rounded = round_significant(frequency_hz, LABEL_DIGITS);
    let magnitude = rounded.abs();
    for (factor, prefix) in [(1e9, "G"), (1e6, "M"), (1e3, "k")] {
        if magnitude >= factor {
            return format!("{}{prefix}", plain(rounded / factor));
        }
    }
    if magnitude >= 1e-3 {
        plain(rounded)
    } else {
        format_log_value(rounded)
    }
}

/// A value on a logarithmic axis as a tick label: plain from 0.01 to 1000 (`0.05`, `1`, `200`),
/// otherwise `1e-12`, `2e-5`, `5e6`.
///
/// ```
/// use noisesonde::plot::format_log_value;
/// assert_eq!(format_log_value(1e-12), "1e-12");
/// assert_eq!(format_log_value(9.999999e-5), "1e-4");
/// assert_eq!(format_log_value(0.5), "0.5");
/// ```
pub fn format_log_value(value: f64) -> String {
    if !value.is_finite() {
        return String::new();
    }
    if value == 0.0 {
        return "0".to_string();
    }
    let rounded = round_significant(value, LABEL_DIGITS);
    let magnitude = rounded.abs().log10().floor() as i32;
    if (-2..=3).contains(&magnitude) {
        return plain(rounded);
    }
    let mantissa = rounded / 10f64.powi(magnitude);
    format!(
        "{}e{magnitude}",
        plain(round_significant(mantissa, LABEL_DIGITS))
    )
}

/// `value` rounded to `digits` significant digits.
fn round_significant(value: f64, digits: i32) -> f64 {
    if value == 0.0 || !value.is_finite() {
        return value;
    }
    let magnitude = value.abs().log10().floor() as i32;
    let factor = 10f64.powi(digits - 1 - magnitude);
    (value * factor).round() / factor
}

/// A value already rounded to a few significant digits, without trailing zeros.
fn plain(value: f64) -> String {
    let magnitude = if value == 0.0 {
        0
    } else {
        value.abs().log10().floor() as i32
    };
    let decimals = (LABEL_DIGITS - 1 - magnitude).clamp(0, 17) as usize;
    trim_zeros(&format!("{value:.decimals$}"))
}

/// `1.500` → `1.5`, `2.000` → `2`; text without a decimal point is returned as it is.
fn trim_zeros(text: &str) -> String {
    if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text.to_string()
    }
}

/// `value` with `digits` significant digits, trailing zeros dropped (`17.58`, `0.0853`, `48000`).
pub(crate) fn format_significant(value: f64, digits: i32) -> String {
    if !value.is_finite() {
        return value.to_string();
    }
    if value == 0.0 {
        return "0".to_string();
    }
    let rounded = round_significant(value, digits);
    let magnitude = rounded.abs().log10().floor() as i32;
    let decimals = (digits - 1 - magnitude).clamp(0, 17) as usize;
    trim_zeros(&format!("{rounded:.decimals$}"))
}

/// The display unit for times up to `max_s` seconds: (seconds per unit, unit name), choosing
/// s, ms or µs so that `max_s` reads between 1 and 1000.
pub(crate) fn time_unit(max_s: f64) -> (f64, &'static str) {
    let magnitude = max_s.abs();
    if magnitude >= 1.0 || !magnitude.is_finite() || magnitude == 0.0 {
        (1.0, "s")
    } else if magnitude >= 1e-3 {
        (1e-3, "ms")
    } else {
        (1e-6, "µs")
    }
}

/// A duration with three significant digits in s, ms or µs: `85.3 ms`, `2.5 s`.
pub(crate) fn format_seconds(seconds: f64) -> String {
    let (factor, unit) = time_unit(seconds);
    format!(
        "{} {unit}",
        format_significant(seconds / factor, LABEL_DIGITS)
    )
}

/// Time ticks in seconds, chosen in the display unit of `hi_s`.
pub(crate) fn time_ticks(lo_s: f64, hi_s: f64, max_labels: usize, factor: f64) -> Ticks {
    let ticks = linear_ticks(lo_s / factor, hi_s / factor, max_labels);
    Ticks {
        bold: ticks.bold.iter().map(|v| v * factor).collect(),
        light: ticks.light.iter().map(|v| v * factor).collect(),
        step: ticks.step * factor,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn hz_labels() {
        let cases = [
            (1.0, "1"),
            (10.0, "10"),
            (100.0, "100"),
            (1000.0, "1k"),
            (10_000.0, "10k"),
            (2000.0, "2k"),
            (1500.0, "1.5k"),
            (5e6, "5M"),
            (0.2, "0.2"),
            (0.001, "0.001"),
            (0.0001, "1e-4"),
            (10f64.powf(3.0f64.log10() + 1.0), "30"),
        ];
        for (f, want) in cases {
            assert_eq!(format_hz(f), want, "{f}");
        }
    }

    #[test]
    fn log_value_labels() {
        let cases = [
            (1e-12, "1e-12"),
            (2e-5, "2e-5"),
            (10f64.powf(-4.0 + 5f64.log10()), "5e-4"),
            (0.01, "0.01"),
            (1.0, "1"),
            (1000.0, "1000"),
            (1e4, "1e4"),
            (9.999999e-5, "1e-4"),
        ];
        for (v, want) in cases {
            assert_eq!(format_log_value(v), want, "{v}");
        }
    }

    #[test]
    fn durations_and_significant_digits() {
        assert_eq!(format_seconds(4096.0 / 48000.0), "85.3 ms");
        assert_eq!(format_seconds(2.5), "2.5 s");
        assert_eq!(format_seconds(2.5e-4), "250 µs");
        assert_eq!(format_significant(17.578125, 4), "17.58");
        assert_eq!(format_significant(48000.0, 4), "48000");
    }

    #[test]
    fn linear_labels() {
        assert_eq!(format_linear(-0.0, 10.0), "0");
        assert_eq!(format_linear(-120.0, 20.0), "-120");
        assert_eq!(format_linear(0.30000000000000004, 0.1), "0.3");
        assert_eq!(format_linear(0.25, 0.05), "0.25");
        assert_eq!(format_linear(2e-9, 1e-9), "2e-9");
        assert_eq!(format_linear(1.5e-9, 5e-10), "1.5e-9");
        assert_eq!(format_linear(3e6, 1e6), "3e6");
    }

    #[test]
    fn log_ticks_decades_over_wide_ranges() {
        // 1 Hz to 24 kHz, room for 8 labels: 1-2-5 gives 14, so decades only.
        let t = log_ticks(0.0, 24_000f64.log10(), 8);
        let labels: Vec<String> = t.bold.iter().map(|v| format_hz(10f64.powf(*v))).collect();
        assert_eq!(labels, ["1", "10", "100", "1k", "10k"]);
        assert_eq!(t.light.len(), 8 * 4 + 1, "2..9 in four decades and 20k");
        // Sixteen decades with room for 5 labels: every 4th decade.
        let t = log_ticks(-16.0, 0.0, 5);
        assert_eq!(t.bold, [-16.0, -12.0, -8.0, -4.0, 0.0]);
    }

    #[test]
    fn log_ticks_one_two_five_over_narrow_ranges() {
        let t = log_ticks(1.0, 3.0, 10);
        let labels: Vec<String> = t.bold.iter().map(|v| format_hz(10f64.powf(*v))).collect();
        assert_eq!(labels, ["10", "20", "50", "100", "200", "500", "1k"]);
        let t = log_ticks(0.1, 0.9, 10);
        let labels: Vec<String> = t.bold.iter().map(|v| format_hz(10f64.powf(*v))).collect();
        assert_eq!(labels, ["2", "3", "4", "5", "6", "7"]);
    }

    #[test]
    fn linear_ticks_on_one_two_five_steps() {
        let t = linear_ticks(-120.0, -20.0, 6);
        assert_eq!(t.step, 20.0);
        assert_eq!(t.bold, [-120.0, -100.0, -80.0, -60.0, -40.0, -20.0]);
        let t = linear_ticks(-0.3, 1.0, 8);
        assert_eq!(t.step, 0.2);
        assert_eq!(t.bold.len(), 7, "{:?}", t.bold);
        assert!(linear_ticks(1.0, 1.0, 5).bold.is_empty());
    }
}

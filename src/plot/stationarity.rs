//! The stationarity section of a report drawn three ways: segment statistics over time, the
//! autocorrelation of each stretch against the pooled one, and the spectrogram.

use std::cell::Cell;

use plotters::coord::Shift;
use plotters::prelude::{
    Color, DrawingArea, DrawingBackend, PathElement, Polygon, RGBColor, Rectangle, Text,
};
use plotters::style::text_anchor::{HPos, Pos, VPos};
use serde::{Deserialize, Serialize};

use super::ticks::{
    format_hz, format_linear, format_seconds, format_significant, linear_ticks, log_ticks,
    time_ticks, time_unit,
};
use super::{
    build_chart, check_len, colours, text_style, Axis, PlotError, PlotFrame, Scale, CURVE_WIDTH_PX,
    FONT_PX, LINE_HEIGHT, LINE_WIDTH_PX, MARGIN_PX,
};
use crate::report::Report;
use crate::spectral::Spectrogram;
use crate::stationarity::{LevelLine, StationarityReport};

/// Room kept above and below the data, as a fraction of its span.
const RANGE_PAD_FRAC: f64 = 0.05;
/// Two-sided 95 % point of the standard normal distribution (common practice), for the band of
/// expected spread about the whole-record value.
const Z_95: f64 = 1.96;
/// Side of the square marking one segment's value, CSS pixels.
const POINT_PX: f64 = 4.0;
/// Width of the pooled autocorrelation curve, CSS pixels.
const POOLED_WIDTH_PX: f64 = 2.5;
/// Side of a legend swatch, CSS pixels.
const SWATCH_PX: f64 = 10.0;
/// Width of the colour bar of the spectrogram, CSS pixels.
const COLOUR_BAR_PX: f64 = 14.0;
/// Colour steps drawn in the colour bar.
const COLOUR_BAR_STEPS: usize = 64;
/// Lower end of the spectrogram's colour range: this percentile of the finite dB values.
const COLOUR_LOW_PERCENTILE: f64 = 1.0;
/// Upper end of the spectrogram's colour range: this percentile of the finite dB values (a
/// tone a few rows wide among 256 rows still reaches the top colour).
const COLOUR_HIGH_PERCENTILE: f64 = 99.9;
/// Span of the colour range when every finite value is the same, dB.
const FLAT_COLOUR_SPAN_DB: f64 = 1.0;
/// Relative slack of a nearest-rank position against floating-point rounding.
const RANK_SLACK: f64 = 1e-12;
/// Significant digits of numbers in captions.
const CAPTION_DIGITS: i32 = 3;

/// The sequential colour scale of the spectrogram, a choice of this project: five fixed RGB
/// stops from a dark indigo (low) through blue, teal and a yellowish green to a light straw
/// (high), interpolated linearly in RGB between neighbours. Luminance (0.2126 R + 0.7152 G +
/// 0.0722 B) rises monotonically along the stops: 22, 69, 126, 181, 240 of 255, so louder reads
/// brighter also in grey.
pub const SEQUENTIAL_STOPS: [RGBColor; 5] = [
    RGBColor(16, 20, 64),
    RGBColor(40, 70, 150),
    RGBColor(40, 150, 150),
    RGBColor(150, 200, 90),
    RGBColor(250, 245, 170),
];

/// Colours of the stretch curves: Okabe–Ito hues that read on white (yellow is left out),
/// repeated in order for more than seven stretches.
pub const STRETCH_COLOURS: [RGBColor; 6] = [
    RGBColor(230, 159, 0),
    RGBColor(86, 180, 233),
    RGBColor(0, 158, 115),
    RGBColor(0, 114, 178),
    RGBColor(213, 94, 0),
    RGBColor(204, 121, 167),
];
/// The pooled autocorrelation curve: black, apart from every stretch colour and from `INK`.
pub const POOLED: RGBColor = RGBColor(0, 0, 0);
/// Segment values (points and the line through them).
pub const SEGMENT_POINTS: RGBColor = colours::CURVE;
/// The whole-record value: Okabe–Ito vermillion.
pub const WHOLE_RECORD: RGBColor = RGBColor(213, 94, 0);

/// How to draw the segment statistics.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct SegmentPlotOptions {
    /// Backend pixels per CSS pixel; fonts and lines scale with it.
    pub pixel_ratio: f64,
}

impl Default for SegmentPlotOptions {
    fn default() -> Self {
        Self { pixel_ratio: 1.0 }
    }
}

/// How to draw the autocorrelations of the stretches.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct StretchPlotOptions {
    /// Backend pixels per CSS pixel; fonts and lines scale with it.
    pub pixel_ratio: f64,
}

impl Default for StretchPlotOptions {
    fn default() -> Self {
        Self { pixel_ratio: 1.0 }
    }
}

/// How to draw the spectrogram.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct SpectrogramPlotOptions {
    /// Backend pixels per CSS pixel; fonts and lines scale with it.
    pub pixel_ratio: f64,
}

impl Default for SpectrogramPlotOptions {
    fn default() -> Self {
        Self { pixel_ratio: 1.0 }
    }
}

/// The report's stationarity section, or the error saying there is none.
fn section(report: &Report) -> Result<&StationarityReport, PlotError> {
    report
        .stationarity
        .as_ref()
        .ok_or(PlotError::NoStationarity)
}

/// The whole-record value of equal-length segment values and their observed spread:
/// (mean of the values, sample standard deviation with n − 1). The segments all hold
/// `segment_len` samples, so the plain mean is the length-weighted one.
pub fn whole_record_and_spread(values: &[f64]) -> (f64, f64) {
    let finite: Vec<f64> = values.iter().copied().filter(|v| v.is_finite()).collect();
    let n = finite.len();
    if n == 0 {
        return (f64::NAN, f64::NAN);
    }
    let mean = finite.iter().sum::<f64>() / n as f64;
    let spread = if n > 1 {
        (finite.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (n - 1) as f64).sqrt()
    } else {
        0.0
    };
    (mean, spread)
}

/// One line's verdict for a caption: `mean: stationary (reverse arrangements A = 180, accept
/// 125 < A ≤ 252; runs r = 19, accept 14 < r ≤ 27)`.
fn verdict_text(name: &str, line: &LevelLine) -> String {
    let ra = &line.reverse_arrangements;
    let runs = &line.runs;
    let accept = |symbol: &str, lower: Option<u64>, upper: u64| match lower {
        Some(lower) => format!("accept {lower} < {symbol} ≤ {upper}"),
        None => format!("accept {symbol} ≤ {upper}"),
    };
    format!(
        "{name}: {} (reverse arrangements A = {}, {}; runs r = {}, {})",
        if line.stationary {
            "stationary"
        } else {
            "not stationary"
        },
        format_significant(ra.statistic, CAPTION_DIGITS + 1),
        accept("A", ra.lower, ra.upper),
        runs.statistic,
        accept("r", runs.lower, runs.upper),
    )
}

/// A linear range holding every finite value of `values`, padded; never empty.
fn padded_range(values: impl IntoIterator<Item = f64>) -> (f64, f64) {
    let (lo, hi) = values
        .into_iter()
        .filter(|v| v.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), v| {
            (lo.min(v), hi.max(v))
        });
    if !(lo.is_finite() && hi.is_finite()) {
        return (-1.0, 1.0);
    }
    let span = hi - lo;
    if span > 0.0 {
        (lo - RANGE_PAD_FRAC * span, hi + RANGE_PAD_FRAC * span)
    } else {
        let half = if lo == 0.0 { 1.0 } else { lo.abs() * 0.5 };
        (lo - half, hi + half)
    }
}

/// Draws one panel of segment values with the whole-record line and band; returns its frame.
#[allow(clippy::too_many_arguments)]
fn draw_level_panel<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    scale: Scale,
    caption: &[String],
    start_s: &[f64],
    values: &[f64],
    x_hi: f64,
    y_description: String,
    x_what: &str,
) -> Result<PlotFrame, PlotError> {
    let (whole, spread) = whole_record_and_spread(values);
    let band = (whole - Z_95 * spread, whole + Z_95 * spread);
    let (y_lo, y_hi) = padded_range(values.iter().copied().chain([band.0, band.1, whole]));
    let x_lo = 0.0;
    let (factor, time_name) = time_unit(x_hi);
    let x_step = Cell::new(0.0);
    let y_step = Cell::new(0.0);
    let x_label = |v: f64| format_linear(v / factor, x_step.get() / factor);
    let y_label = |v: f64| format_linear(v, y_step.get());
    let (chart, frame) = build_chart(
        area,
        scale,
        caption,
        &[],
        |max_labels| {
            let ticks = time_ticks(x_lo, x_hi, max_labels, factor);
            x_step.set(ticks.step);
            Axis {
                lo: x_lo,
                hi: x_hi,
                values: (x_lo, x_hi),
                log: false,
                ticks,
                label: &x_label,
                description: format!("{x_what} ({time_name})"),
            }
        },
        |max_labels| {
            let ticks = linear_ticks(y_lo, y_hi, max_labels);
            y_step.set(ticks.step);
            Axis {
                lo: y_lo,
                hi: y_hi,
                values: (y_lo, y_hi),
                log: false,
                ticks,
                label: &y_label,
                description: y_description,
            }
        },
    )?;
    let plot = chart.plotting_area();
    if band.0.is_finite() && band.1.is_finite() {
        plot.draw(&Rectangle::new(
            [
                (x_lo, band.0.clamp(y_lo, y_hi)),
                (x_hi, band.1.clamp(y_lo, y_hi)),
            ],
            colours::BAND.filled(),
        ))?;
    }
    if whole.is_finite() {
        plot.draw(&PathElement::new(
            vec![(x_lo, whole), (x_hi, whole)],
            WHOLE_RECORD.stroke_width(scale.stroke(LINE_WIDTH_PX)),
        ))?;
    }
    let points: Vec<(f64, f64)> = start_s
        .iter()
        .zip(values)
        .filter(|(t, v)| t.is_finite() && v.is_finite())
        .map(|(&t, &v)| (t, v.clamp(y_lo, y_hi)))
        .collect();
    plot.draw(&PathElement::new(
        points.clone(),
        SEGMENT_POINTS.stroke_width(scale.stroke(CURVE_WIDTH_PX)),
    ))?;
    let half = scale.px(POINT_PX) / 2.0;
    for (t, v) in points {
        let (px, py) = (frame.px_at(t), frame.py_at(v));
        plot.draw(&Rectangle::new(
            [
                (frame.x_at(px - half), frame.y_at(py - half)),
                (frame.x_at(px + half), frame.y_at(py + half)),
            ],
            SEGMENT_POINTS.filled(),
        ))?;
    }
    Ok(frame)
}

/// Draws the segment means (upper panel) and mean squares (lower panel) of the report's
/// stationarity section against segment start time, and returns the frame of the upper panel
/// (the lower one shares its x mapping).
///
/// Each panel marks every segment's value with a square joined by a thin line, the
/// whole-record value as a horizontal line, and a band of ±1.96·σ_seg about it.
///
/// # Method
/// The whole-record value is the mean of the M segment values; all segments hold the same
/// number of samples, so this is also the length-weighted mean (for the means, the mean of the
/// tested samples). σ_seg is the sample standard deviation (n − 1) of the segment values: the
/// observed spread, not a model's (common practice), so the band shows where about 95 % of the
/// values would lie were they independent and normal.
///
/// # Units
/// x in seconds; y in `report.unit` (means) and `report.units.power` (mean squares).
///
/// # Errors
/// [`PlotError::NoStationarity`] when the report has no stationarity section,
/// [`PlotError::LengthMismatch`] for inconsistent arrays, [`PlotError::PixelRatio`],
/// [`PlotError::AreaTooSmall`], and [`PlotError::Drawing`].
pub fn draw_segment_statistics<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    report: &Report,
    options: &SegmentPlotOptions,
) -> Result<PlotFrame, PlotError> {
    let scale = Scale::new(options.pixel_ratio)?;
    let section = section(report)?;
    let table = &section.segments;
    let m = table.start_s.len();
    check_len("stationarity.segments.mean", m, &table.mean)?;
    check_len("stationarity.segments.mean_square", m, &table.mean_square)?;
    let end_s = table.start_s.last().copied().unwrap_or(0.0) + table.segment_s;
    draw_two_panels(
        area,
        scale,
        &table.start_s,
        end_s,
        "segment start",
        Panel {
            caption: vec![
                "segment statistics".to_string(),
                format!("M = {m} segments of {}", format_seconds(table.segment_s)),
                format!("α = {}", section.alpha),
                verdict_text("mean", &section.mean),
            ],
            values: &table.mean,
            y_description: format!("segment mean ({})", report.units.amplitude),
        },
        Panel {
            caption: vec![verdict_text("mean square", &section.mean_square)],
            values: &table.mean_square,
            y_description: format!("segment mean square ({})", report.units.power),
        },
    )
}

/// One panel of [`draw_two_panels`]: its caption, values and y-axis description.
struct Panel<'a> {
    caption: Vec<String>,
    values: &'a [f64],
    y_description: String,
}

/// Splits `area` into an upper and a lower level panel sharing the time axis 0..`end_s`
/// (1 s when `end_s` is not a positive time) and returns the upper panel's frame.
#[allow(clippy::too_many_arguments)]
fn draw_two_panels<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    scale: Scale,
    start_s: &[f64],
    end_s: f64,
    x_what: &str,
    upper_panel: Panel<'_>,
    lower_panel: Panel<'_>,
) -> Result<PlotFrame, PlotError> {
    let x_hi = if end_s.is_finite() && end_s > 0.0 {
        end_s
    } else {
        1.0
    };
    let (_, height_px) = area.dim_in_pixel();
    let (upper, lower) = area.split_vertically(height_px / 2);
    let frame = draw_level_panel(
        &upper,
        scale,
        &upper_panel.caption,
        start_s,
        upper_panel.values,
        x_hi,
        upper_panel.y_description,
        x_what,
    )?;
    draw_level_panel(
        &lower,
        scale,
        &lower_panel.caption,
        start_s,
        lower_panel.values,
        x_hi,
        lower_panel.y_description,
        x_what,
    )?;
    area.present()?;
    Ok(frame)
}

/// Draws an ensemble's averages across records over time: the ensemble mean m(t) (upper panel)
/// and mean square q(t) (lower panel), each averaged over the segments of the records, with
/// their overall value and a ±1.96σ band of the segment values; returns the upper panel's frame.
/// A process ergodic in the mean keeps m(t) flat and equal to every record's time average
/// (listed beside the plot on the page).
///
/// # Units
/// x in seconds; y in `report.unit` and `report.units.power`.
///
/// # Errors
/// [`PlotError::LengthMismatch`] for inconsistent arrays, [`PlotError::PixelRatio`],
/// [`PlotError::AreaTooSmall`], [`PlotError::Drawing`].
pub fn draw_ensemble_over_time<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    report: &crate::ensemble_analysis::EnsembleReport,
    options: &SegmentPlotOptions,
) -> Result<PlotFrame, PlotError> {
    let scale = Scale::new(options.pixel_ratio)?;
    let over = &report.ensemble.over_time;
    let m = over.start_s.len();
    check_len("ensemble.over_time.mean", m, &over.mean)?;
    check_len("ensemble.over_time.mean_square", m, &over.mean_square)?;
    let step = over.start_s.get(1).copied().unwrap_or(report.duration_s)
        - over.start_s.first().copied().unwrap_or(0.0);
    let end_s = over.start_s.last().copied().unwrap_or(0.0) + step;
    let judged = |ergodic: bool| if ergodic { "ergodic" } else { "NOT ergodic" };
    draw_two_panels(
        area,
        scale,
        &over.start_s,
        end_s,
        "time",
        Panel {
            caption: vec![
                "averages across records over time".to_string(),
                format!("{} records, {m} segments", report.records),
                format!("mean: {}", judged(report.ensemble.mean.ergodic)),
            ],
            values: &over.mean,
            y_description: format!("ensemble mean ({})", report.units.amplitude),
        },
        Panel {
            caption: vec![format!(
                "mean square: {}",
                judged(report.ensemble.mean_square.ergodic)
            )],
            values: &over.mean_square,
            y_description: format!("ensemble mean square ({})", report.units.power),
        },
    )
}

/// Draws each stretch's normalised autocorrelation against lag (one Okabe–Ito colour per
/// stretch, named in a legend by its start–end time), the pooled curve thicker in black, and a
/// band of pooled ± z*·standard error behind them; returns the frame.
///
/// # Method
/// The band is the comparison's own acceptance region: a stretch whose curve leaves it at some
/// lag has |ρ_j(k) − ρ̄(k)| > z*·se(k), which is what the test counts (see
/// [`crate::stationarity::lag_shape`]). The caption states D, z*, where D occurred and the
/// verdict.
///
/// # Units
/// x: lag in s (labelled in s, ms or µs); y: dimensionless coefficient.
///
/// # Errors
/// [`PlotError::NoStationarity`], [`PlotError::EmptyAcf`] when the comparison has no lags,
/// [`PlotError::LengthMismatch`], [`PlotError::PixelRatio`], [`PlotError::AreaTooSmall`],
/// [`PlotError::Drawing`].
pub fn draw_stretch_acf<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    report: &Report,
    options: &StretchPlotOptions,
) -> Result<PlotFrame, PlotError> {
    let scale = Scale::new(options.pixel_ratio)?;
    let section = section(report)?;
    let line = &section.autocorrelation;
    let shape = &line.comparison;
    let lags = shape.lag_s.len();
    if lags == 0 {
        return Err(PlotError::EmptyAcf);
    }
    let j = shape.stretches;
    check_len("pooled", lags, &shape.pooled)?;
    check_len("standard_error", lags, &shape.standard_error)?;
    check_len(
        "coefficient_by_stretch",
        j * lags,
        &shape.coefficient_by_stretch,
    )?;
    check_len("stretch_start_s", j, &shape.stretch_start_s)?;
    check_len("stretch_duration_s", j, &shape.stretch_duration_s)?;

    let half_width: Vec<f64> = shape
        .standard_error
        .iter()
        .map(|se| shape.threshold * se)
        .collect();
    let lower: Vec<f64> = shape
        .pooled
        .iter()
        .zip(&half_width)
        .map(|(p, h)| p - h)
        .collect();
    let upper: Vec<f64> = shape
        .pooled
        .iter()
        .zip(&half_width)
        .map(|(p, h)| p + h)
        .collect();
    let (y_lo, y_hi) = padded_range(
        shape
            .coefficient_by_stretch
            .iter()
            .chain(&lower)
            .chain(&upper)
            .copied()
            .chain([0.0]),
    );
    let x_lo = shape
        .lag_s
        .first()
        .copied()
        .filter(|v| v.is_finite())
        .unwrap_or(0.0);
    let last = shape
        .lag_s
        .last()
        .copied()
        .filter(|v| v.is_finite())
        .unwrap_or(x_lo);
    let x_hi = if last > x_lo {
        last
    } else {
        x_lo + 1.0 / report.sample_rate_hz.max(f64::MIN_POSITIVE)
    };
    let (factor, time_name) = time_unit(x_hi.abs().max(x_lo.abs()));
    let caption = vec![
        format!("autocorrelation of {j} stretches against their pooled curve"),
        format!(
            "largest deviation D = {} vs threshold {} standard errors",
            format_significant(shape.largest_deviation, CAPTION_DIGITS),
            format_significant(shape.threshold, CAPTION_DIGITS)
        ),
        format!(
            "at lag {} in stretch {}",
            format_seconds(shape.at_lag_s),
            shape.at_stretch + 1
        ),
        format!(
            "autocorrelation: {}",
            if line.stationary {
                "a function of lag alone (stationary)"
            } else {
                "changes between stretches (not stationary)"
            }
        ),
        format!("α = {}", section.alpha),
    ];
    let x_step = Cell::new(0.0);
    let y_step = Cell::new(0.0);
    let x_label = |v: f64| format_linear(v / factor, x_step.get() / factor);
    let y_label = |v: f64| format_linear(v, y_step.get());
    let (chart, frame) = build_chart(
        area,
        scale,
        &caption,
        &[],
        |max_labels| {
            let ticks = time_ticks(x_lo, x_hi, max_labels, factor);
            x_step.set(ticks.step);
            Axis {
                lo: x_lo,
                hi: x_hi,
                values: (x_lo, x_hi),
                log: false,
                ticks,
                label: &x_label,
                description: format!("lag ({time_name})"),
            }
        },
        |max_labels| {
            let ticks = linear_ticks(y_lo, y_hi, max_labels);
            y_step.set(ticks.step);
            Axis {
                lo: y_lo,
                hi: y_hi,
                values: (y_lo, y_hi),
                log: false,
                ticks,
                label: &y_label,
                description: "coefficient (dimensionless)".to_string(),
            }
        },
    )?;
    let plot = chart.plotting_area();
    let clamp = |v: f64| {
        if v.is_nan() {
            y_lo
        } else {
            v.clamp(y_lo, y_hi)
        }
    };

    let mut band: Vec<(f64, f64)> = shape
        .lag_s
        .iter()
        .zip(&upper)
        .map(|(&t, &v)| (t, clamp(v)))
        .collect();
    band.extend(
        shape
            .lag_s
            .iter()
            .zip(&lower)
            .rev()
            .map(|(&t, &v)| (t, clamp(v))),
    );
    plot.draw(&Polygon::new(band, colours::BAND.filled()))?;
    plot.draw(&PathElement::new(
        vec![(x_lo, 0.0), (x_hi, 0.0)],
        colours::ZERO_LINE.stroke_width(scale.stroke(LINE_WIDTH_PX)),
    ))?;

    let curve_width = scale.stroke(CURVE_WIDTH_PX);
    for (index, values) in shape.coefficient_by_stretch.chunks(lags).enumerate() {
        let colour = stretch_colour(index);
        let points: Vec<(f64, f64)> = shape
            .lag_s
            .iter()
            .zip(values)
            .map(|(&t, &v)| (t, clamp(v)))
            .collect();
        plot.draw(&PathElement::new(points, colour.stroke_width(curve_width)))?;
    }
    let pooled: Vec<(f64, f64)> = shape
        .lag_s
        .iter()
        .zip(&shape.pooled)
        .map(|(&t, &v)| (t, clamp(v)))
        .collect();
    plot.draw(&PathElement::new(
        pooled,
        POOLED.stroke_width(scale.stroke(POOLED_WIDTH_PX)),
    ))?;

    // Legend, top right inside the plotting area: a swatch and the stretch's time span.
    let style = text_style(scale, FONT_PX).pos(Pos::new(HPos::Right, VPos::Center));
    let row_px = scale.px(FONT_PX * LINE_HEIGHT);
    let gap = scale.px(MARGIN_PX) / 2.0;
    let swatch = scale.px(SWATCH_PX);
    let mut entries: Vec<(String, RGBColor)> = (0..j)
        .map(|index| {
            let start = shape
                .stretch_start_s
                .get(index)
                .copied()
                .unwrap_or(f64::NAN);
            let end = start
                + shape
                    .stretch_duration_s
                    .get(index)
                    .copied()
                    .unwrap_or(f64::NAN);
            (
                format!(
                    "stretch {}: {}–{}",
                    index + 1,
                    format_seconds(start),
                    format_seconds(end)
                ),
                stretch_colour(index),
            )
        })
        .collect();
    entries.push(("pooled ± threshold·se".to_string(), POOLED));
    let right_px = frame.left_px + frame.width_px - gap;
    for (row, (text, colour)) in entries.iter().enumerate() {
        let centre_py = frame.top_px + gap + row_px * (row as f64 + 0.5);
        if centre_py + row_px / 2.0 > frame.top_px + frame.height_px {
            break;
        }
        let text_right = right_px - swatch - gap;
        let (w, _) = plot.estimate_text_size(text, &style)?;
        plot.draw(&Rectangle::new(
            [
                (
                    frame.x_at(text_right - f64::from(w) - gap),
                    frame.y_at(centre_py - row_px / 2.0),
                ),
                (frame.x_at(right_px), frame.y_at(centre_py + row_px / 2.0)),
            ],
            colours::BACKGROUND.mix(0.85).filled(),
        ))?;
        plot.draw(&Rectangle::new(
            [
                (
                    frame.x_at(right_px - swatch),
                    frame.y_at(centre_py - swatch / 2.0),
                ),
                (frame.x_at(right_px), frame.y_at(centre_py + swatch / 2.0)),
            ],
            colour.filled(),
        ))?;
        plot.draw(&Text::new(
            text.clone(),
            (frame.x_at(text_right), frame.y_at(centre_py)),
            style.clone(),
        ))?;
    }
    area.present()?;
    Ok(frame)
}

/// The colour of stretch `index` (0-based).
pub fn stretch_colour(index: usize) -> RGBColor {
    STRETCH_COLOURS[index % STRETCH_COLOURS.len()]
}

/// The colour of position `t` in [0, 1] on [`SEQUENTIAL_STOPS`] (NaN and t ≤ 0: the lowest;
/// t ≥ 1: the highest).
pub fn sequential_colour(t: f64) -> RGBColor {
    let last = SEQUENTIAL_STOPS.len() - 1;
    let t = if t.is_nan() { 0.0 } else { t.clamp(0.0, 1.0) };
    let position = t * last as f64;
    let index = (position.floor() as usize).min(last);
    if index == last {
        return SEQUENTIAL_STOPS[last];
    }
    let f = position - index as f64;
    let (a, b) = (SEQUENTIAL_STOPS[index], SEQUENTIAL_STOPS[index + 1]);
    let mix = |x: u8, y: u8| (f64::from(x) + f * (f64::from(y) - f64::from(x))).round() as u8;
    RGBColor(mix(a.0, b.0), mix(a.1, b.1), mix(a.2, b.2))
}

/// The `percentile` (0..=100) of ascending `sorted` by nearest rank; NaN when empty.
fn percentile(sorted: &[f64], percentile: f64) -> f64 {
    if sorted.is_empty() {
        return f64::NAN;
    }
    // A relative nudge keeps 99.9 % of 1000 at rank 999 despite 0.999 × 1000 rounding up.
    let exact = percentile / 100.0 * sorted.len() as f64;
    let rank = (exact * (1.0 - RANK_SLACK)).ceil() as usize;
    sorted[rank.clamp(1, sorted.len()) - 1]
}

/// The dB range of the colour scale: the [`COLOUR_LOW_PERCENTILE`]th to the
/// [`COLOUR_HIGH_PERCENTILE`]th percentile (nearest rank) of the finite values of `db`; a span
/// of [`FLAT_COLOUR_SPAN_DB`] about a constant; (0, 1) when none is finite.
pub fn colour_range_db(db: &[f64]) -> (f64, f64) {
    let mut finite: Vec<f64> = db.iter().copied().filter(|v| v.is_finite()).collect();
    finite.sort_by(f64::total_cmp);
    let lo = percentile(&finite, COLOUR_LOW_PERCENTILE);
    let hi = percentile(&finite, COLOUR_HIGH_PERCENTILE);
    if !(lo.is_finite() && hi.is_finite()) {
        (0.0, 1.0)
    } else if hi > lo {
        (lo, hi)
    } else {
        (
            lo - FLAT_COLOUR_SPAN_DB / 2.0,
            hi + FLAT_COLOUR_SPAN_DB / 2.0,
        )
    }
}

/// Draws the spectrogram of the report's stationarity section as a heatmap with a colour bar,
/// and returns the frame of the heatmap.
///
/// x is time (each column from its start to its end, s); y is frequency on a logarithmic axis
/// from the first row above 0 Hz to the top row (rows at 0 Hz are left out); each cell spans
/// half-way to its neighbouring rows (the end rows half a cell). Colour is 10·log10(density)
/// in dB re 1 `unit`²/Hz on [`SEQUENTIAL_STOPS`], from dark (low) to light (high), over
/// [`colour_range_db`] of the drawn cells: values outside it take the end colours, and cells
/// whose density is zero or not finite the lowest colour.
///
/// # Errors
/// [`PlotError::NoStationarity`] without a stationarity section, [`PlotError::NoSpectrogram`]
/// without a spectrogram, [`PlotError::NoPositiveFrequency`] when no row lies above 0 Hz,
/// [`PlotError::LengthMismatch`], [`PlotError::PixelRatio`], [`PlotError::AreaTooSmall`],
/// [`PlotError::Drawing`].
pub fn draw_spectrogram<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    report: &Report,
    options: &SpectrogramPlotOptions,
) -> Result<PlotFrame, PlotError> {
    let scale = Scale::new(options.pixel_ratio)?;
    let section = section(report)?;
    let spectrogram: &Spectrogram = section
        .spectrogram
        .as_ref()
        .ok_or(PlotError::NoSpectrogram)?;
    let rows = spectrogram.frequency_hz.len();
    let columns = spectrogram.start_s.len();
    check_len("spectrogram.end_s", columns, &spectrogram.end_s)?;
    check_len("spectrogram.density", rows * columns, &spectrogram.density)?;
    let first = spectrogram
        .frequency_hz
        .iter()
        .position(|&f| f.is_finite() && f > 0.0)
        .ok_or(PlotError::NoPositiveFrequency { bins: rows })?;
    if columns == 0 {
        return Err(PlotError::NoSpectrogram);
    }
    let frequency_hz = spectrogram.frequency_hz.get(first..).unwrap_or_default();
    let f_lo = frequency_hz.first().copied().unwrap_or(1.0);
    let f_top = frequency_hz.last().copied().unwrap_or(f_lo);
    let f_hi = if f_top > f_lo { f_top } else { f_lo * 10.0 };

    // dB of the drawn cells, column after column.
    let db: Vec<f64> = spectrogram
        .density
        .chunks(rows.max(1))
        .flat_map(|column| column.get(first..).unwrap_or_default())
        .map(|&p| if p > 0.0 { 10.0 * p.log10() } else { f64::NAN })
        .collect();
    let (db_lo, db_hi) = colour_range_db(&db);
    let to_colour = |v: f64| {
        if v.is_finite() {
            sequential_colour((v - db_lo) / (db_hi - db_lo))
        } else {
            SEQUENTIAL_STOPS[0]
        }
    };

    let t_lo = spectrogram.start_s.first().copied().unwrap_or(0.0);
    let t_end = spectrogram.end_s.last().copied().unwrap_or(t_lo);
    let t_hi = if t_end > t_lo { t_end } else { t_lo + 1.0 };
    let (factor, time_name) = time_unit(t_hi.abs().max(t_lo.abs()));
    let unit_text = format!("dB re 1 {}", report.units.density);

    // The colour bar's panel at the right: margin, bar, tick, gap, labels, margin.
    let label_style = text_style(scale, FONT_PX);
    let bar_ticks = linear_ticks(db_lo, db_hi, 6);
    let mut widest = 0u32;
    for &v in &bar_ticks.bold {
        let (w, _) = area.estimate_text_size(&format_linear(v, bar_ticks.step), &label_style)?;
        widest = widest.max(w);
    }
    let (title_w, _) = area.estimate_text_size(&unit_text, &label_style)?;
    let margin = scale.px(MARGIN_PX);
    let bar_px = scale.px(COLOUR_BAR_PX);
    let panel_px = (margin + bar_px + margin + f64::from(widest) + margin)
        .max(f64::from(title_w) + 2.0 * margin)
        .ceil() as u32;
    let (width_px, _) = area.dim_in_pixel();
    let (main, bar) = area.split_horizontally(width_px.saturating_sub(panel_px));

    let caption = vec![
        "spectrogram: Welch PSDs of consecutive stretches".to_string(),
        format!(
            "{rows} rows of {} bin(s) × {columns} columns of {} segment(s)",
            spectrogram.bins_per_row, spectrogram.segments_per_column
        ),
        format!(
            "colour 10·log10(density) in {unit_text} from {} to {} (1st to 99.9th percentile)",
            format_significant(db_lo, CAPTION_DIGITS),
            format_significant(db_hi, CAPTION_DIGITS)
        ),
    ];
    let x_step = Cell::new(0.0);
    let x_label = |v: f64| format_linear(v / factor, x_step.get() / factor);
    let y_label = |v: f64| format_hz(10f64.powf(v));
    let (chart, frame) = build_chart(
        &main,
        scale,
        &caption,
        &[],
        |max_labels| {
            let ticks = time_ticks(t_lo, t_hi, max_labels, factor);
            x_step.set(ticks.step);
            Axis {
                lo: t_lo,
                hi: t_hi,
                values: (t_lo, t_hi),
                log: false,
                ticks,
                label: &x_label,
                description: format!("time ({time_name})"),
            }
        },
        |max_labels| Axis {
            lo: f_lo.log10(),
            hi: f_hi.log10(),
            values: (f_lo, f_hi),
            log: true,
            ticks: log_ticks(f_lo.log10(), f_hi.log10(), max_labels),
            label: &y_label,
            description: "frequency (Hz)".to_string(),
        },
    )?;
    let plot = chart.plotting_area();
    let shown = frequency_hz.len();
    // Row edges half-way between centres, clamped to the axis.
    let edge = |k: usize| -> f64 {
        let below = frequency_hz.get(k.wrapping_sub(1)).copied();
        let above = frequency_hz.get(k).copied();
        let f = match (below, above) {
            (Some(b), Some(a)) => (a + b) / 2.0,
            _ => {
                if k == 0 {
                    f_lo
                } else {
                    f_hi
                }
            }
        };
        f.clamp(f_lo, f_hi).log10()
    };
    for column in 0..columns {
        let (Some(&start), Some(&end)) = (
            spectrogram.start_s.get(column),
            spectrogram.end_s.get(column),
        ) else {
            continue;
        };
        for row in 0..shown {
            let value = db.get(column * shown + row).copied().unwrap_or(f64::NAN);
            plot.draw(&Rectangle::new(
                [(start, edge(row)), (end, edge(row + 1))],
                to_colour(value).filled(),
            ))?;
        }
    }

    // The colour bar, level with the heatmap.
    bar.fill(&colours::BACKGROUND)?;
    let (_, base_y) = bar.get_base_pixel();
    let top = frame.top_px - f64::from(base_y);
    let height = frame.height_px;
    let x0 = margin;
    let x1 = margin + bar_px;
    let step_px = height / COLOUR_BAR_STEPS as f64;
    for k in 0..COLOUR_BAR_STEPS {
        let t = (k as f64 + 0.5) / COLOUR_BAR_STEPS as f64;
        let y_bottom = top + height - step_px * k as f64;
        let y_top = y_bottom - step_px;
        bar.draw(&Rectangle::new(
            [
                (x0.round() as i32, y_top.floor() as i32),
                (x1.round() as i32, y_bottom.ceil() as i32),
            ],
            sequential_colour(t).filled(),
        ))?;
    }
    let ink = colours::INK.stroke_width(scale.stroke(LINE_WIDTH_PX));
    let tick = scale.px(super::TICK_PX);
    let tick_style = label_style.pos(Pos::new(HPos::Left, VPos::Center));
    for &v in &bar_ticks.bold {
        let y = top + height * (1.0 - (v - db_lo) / (db_hi - db_lo));
        let y = y.round() as i32;
        bar.draw(&PathElement::new(
            vec![(x1.round() as i32, y), ((x1 + tick).round() as i32, y)],
            ink,
        ))?;
        bar.draw(&Text::new(
            format_linear(v, bar_ticks.step),
            ((x1 + tick + margin / 2.0).round() as i32, y),
            tick_style.clone(),
        ))?;
    }
    let title_style = text_style(scale, FONT_PX).pos(Pos::new(HPos::Left, VPos::Bottom));
    bar.draw(&Text::new(
        unit_text,
        (margin.round() as i32, (top - margin / 2.0).round() as i32),
        title_style,
    ))?;
    area.present()?;
    Ok(frame)
}

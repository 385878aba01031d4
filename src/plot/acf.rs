//! The autocorrelation against lag.

use plotters::coord::Shift;
use plotters::prelude::{
    Color, DrawingArea, DrawingBackend, PathElement, Rectangle, Text, TextStyle,
};
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::decimate::decimate_min_max_indices;
use super::options::AcfPlotOptions;
use super::ticks::{format_linear, format_seconds, linear_ticks, time_ticks, time_unit};
use super::{
    build_chart, check_len, clamp_or_floor, colours, text_style, Axis, PlotError, PlotFrame, Scale,
    CURVE_WIDTH_PX, FONT_PX, LINE_HEIGHT, LINE_WIDTH_PX,
};
use crate::report::Report;

/// Room kept above and below the curve, as a fraction of its span.
const RANGE_PAD_FRAC: f64 = 0.05;
/// Gap between a marker line and its text, CSS pixels.
const MARKER_TEXT_GAP_PX: f64 = 3.0;
/// Opacity of the white ground under marker texts.
const MARKER_GROUND_ALPHA: f64 = 0.85;

/// Draws the autocorrelation of `report` on `area` (filling it) and returns where the plotting
/// area lies.
///
/// x is the lag in seconds on a linear axis (labelled in s, ms or µs; the frame keeps seconds);
/// y is `options.mode` (coefficient, autocovariance or autocorrelation) with its unit. A
/// horizontal line marks zero; vertical lines with text mark the lag where the coefficient
/// falls to 1/e ("1/e") and where it first crosses zero ("first zero"), when the report has them.
///
/// # Errors
/// [`PlotError::EmptyAcf`] for an ACF without lags, [`PlotError::LengthMismatch`] for
/// inconsistent arrays, [`PlotError::PixelRatio`], [`PlotError::AreaTooSmall`], and
/// [`PlotError::Drawing`] when the backend fails.
pub fn draw_acf<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    report: &Report,
    options: &AcfPlotOptions,
) -> Result<PlotFrame, PlotError> {
    let scale = Scale::new(options.pixel_ratio)?;
    let acf = &report.acf;
    let lags = acf.lag_s.len();
    if lags == 0 {
        return Err(PlotError::EmptyAcf);
    }
    let values = options.mode.values(acf);
    check_len(
        match options.mode {
            super::AcfMode::Coefficient => "acf.coefficient",
            super::AcfMode::Autocovariance => "acf.autocovariance",
            super::AcfMode::Autocorrelation => "acf.autocorrelation",
        },
        lags,
        values,
    )?;

    let x_lo = acf
        .lag_s
        .first()
        .copied()
        .filter(|v| v.is_finite())
        .unwrap_or(0.0);
    let last = acf
        .lag_s
        .last()
        .copied()
        .filter(|v| v.is_finite())
        .unwrap_or(x_lo);
    let x_hi = if last > x_lo {
        last
    } else {
        // A single lag: show one sample period.
        x_lo + 1.0 / report.sample_rate_hz.max(f64::MIN_POSITIVE)
    };
    let (y_lo, y_hi) = y_range(values);
    let (time_factor, time_name) = time_unit(x_hi.abs().max(x_lo.abs()));

    let caption = vec![
        match options.mode {
            super::AcfMode::Coefficient => {
                format!("{} autocorrelation coefficient C(τ)/C(0)", acf.estimator)
            }
            super::AcfMode::Autocovariance => format!("{} autocovariance C(τ)", acf.estimator),
            super::AcfMode::Autocorrelation => format!("{} autocorrelation R(τ)", acf.estimator),
        },
        format!("largest lag {}", format_seconds(acf.max_lag_s)),
        format!("{} samples at {} Hz", report.samples, report.sample_rate_hz),
    ];
    let x_step = std::cell::Cell::new(0.0);
    let y_step = std::cell::Cell::new(0.0);
    let x_label = |v: f64| format_linear(v / time_factor, x_step.get() / time_factor);
    let y_label = |v: f64| format_linear(v, y_step.get());
    let (chart, frame) = build_chart(
        area,
        scale,
        &caption,
        &[],
        |max_labels| {
            let ticks = time_ticks(x_lo, x_hi, max_labels, time_factor);
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
                description: options.mode.axis_label(report),
            }
        },
    )?;
    let plot = chart.plotting_area();
    let line = scale.stroke(LINE_WIDTH_PX);

    plot.draw(&PathElement::new(
        vec![(x_lo, 0.0), (x_hi, 0.0)],
        colours::ZERO_LINE.stroke_width(line),
    ))?;

    let x_px: Vec<f64> = acf.lag_s.iter().map(|&t| frame.px_at(t)).collect();
    let curve: Vec<f64> = values
        .iter()
        .map(|&v| clamp_or_floor(v, y_lo, y_hi))
        .collect();
    let points: Vec<(f64, f64)> = decimate_min_max_indices(&x_px, &curve)
        .into_iter()
        .filter_map(|i| Some((*acf.lag_s.get(i)?, *curve.get(i)?)))
        .collect();
    plot.draw(&PathElement::new(
        points,
        colours::CURVE.stroke_width(scale.stroke(CURVE_WIDTH_PX)),
    ))?;

    let marker_style: TextStyle = text_style(scale, FONT_PX);
    let markers = [
        (acf.one_over_e_s, "1/e", &colours::ONE_OVER_E, 0.0),
        (acf.zero_crossing_s, "first zero", &colours::FIRST_ZERO, 1.0),
    ];
    for (lag_s, name, colour, row) in markers {
        let Some(lag_s) = lag_s.filter(|t| t.is_finite() && (x_lo..=x_hi).contains(t)) else {
            continue;
        };
        plot.draw(&PathElement::new(
            vec![(lag_s, y_lo), (lag_s, y_hi)],
            colour.stroke_width(line),
        ))?;
        // Text right of the line (left of it past the middle), one row per marker.
        let right_half = frame.px_at(lag_s) > frame.left_px + frame.width_px / 2.0;
        let gap = scale.px(MARKER_TEXT_GAP_PX);
        let dx = if right_half { -gap } else { gap };
        let anchor = Pos::new(if right_half { HPos::Right } else { HPos::Left }, VPos::Top);
        let y_text = frame.y_at(frame.top_px + gap + row * scale.px(FONT_PX * LINE_HEIGHT));
        let x_text = frame.x_at(frame.px_at(lag_s) + dx);
        let style = marker_style.color(colour).pos(anchor);
        let text = format!("{name}: {}", format_seconds(lag_s));
        // A white ground under the text keeps it readable over the curve.
        let (w, h) = plot.estimate_text_size(&text, &style)?;
        let x0 = frame.px_at(x_text);
        let x1 = if right_half {
            x0 - f64::from(w)
        } else {
            x0 + f64::from(w)
        };
        let y0 = frame.py_at(y_text);
        plot.draw(&Rectangle::new(
            [
                (frame.x_at(x0), y_text),
                (frame.x_at(x1), frame.y_at(y0 + f64::from(h))),
            ],
            colours::BACKGROUND.mix(MARKER_GROUND_ALPHA).filled(),
        ))?;
        plot.draw(&Text::new(text, (x_text, y_text), style))?;
    }
    area.present()?;
    Ok(frame)
}

/// The y range of the curve with zero included and a little room, never empty.
fn y_range(values: &[f64]) -> (f64, f64) {
    let (min, max) = values
        .iter()
        .copied()
        .filter(|v| v.is_finite())
        .fold((0.0f64, 0.0f64), |(lo, hi), v| (lo.min(v), hi.max(v)));
    let span = max - min;
    if span > 0.0 {
        (min - RANGE_PAD_FRAC * span, max + RANGE_PAD_FRAC * span)
    } else {
        (-1.0, 1.0)
    }
}

//! The PSD against a logarithmic frequency axis.

use plotters::coord::Shift;
use plotters::prelude::{Color, DrawingArea, DrawingBackend, PathElement, Polygon, Rectangle};

use super::decimate::{band_envelope, decimate_min_max_indices};
use super::options::{PsdMode, PsdPlotOptions, TraceKind};
use super::ticks::{
    format_hz, format_linear, format_log_value, format_seconds, format_significant, linear_ticks,
    log_ticks,
};
use super::{
    build_chart, check_len, clamp_or_floor, colours, Axis, PlotError, PlotFrame, Scale,
    CURVE_WIDTH_PX, LINE_WIDTH_PX,
};
use crate::report::Report;

/// Widest span of the y axis below the curve's peak, in decades of power: f64 carries about
/// 16 significant digits (machine epsilon 2.2e-16), so values further below the peak are
/// rounding noise of the FFT rather than signal.
const MAX_DYNAMIC_RANGE_POWER_DECADES: f64 = 16.0;
/// How far the confidence band may widen the y axis beyond the curve, in decades of power
/// (the 95 % band of one Welch segment, 2 degrees of freedom, spans about 3.2 decades).
const MAX_BAND_EXTENSION_POWER_DECADES: f64 = 3.0;
/// Room kept between the extreme values and the axis ends before rounding them outwards, in
/// decades of power.
const RANGE_PAD_POWER_DECADES: f64 = 0.02;
/// The y range shown when the PSD holds no positive finite value (silence), in decades of
/// power below 1 unit²/Hz.
const EMPTY_RANGE_POWER_DECADES: f64 = 12.0;
/// Points per dash (and per gap) of a reference trace.
const DASH_POINTS: usize = 6;
/// Significant digits of the numbers in the caption.
const CAPTION_DIGITS: i32 = 4;

/// Draws the PSD of `report` on `area` (filling it) and returns where the plotting area lies.
///
/// The frequency axis is logarithmic from the first bin above 0 Hz to f_s/2 (the DC bin cannot
/// be placed on it and is skipped). The y axis shows `options.mode`: density, ASD or power
/// spectrum on a logarithmic axis, decibels re 1 unit²/Hz on a linear one, each with its unit
/// in the axis description. With `show_ci`, each bin's confidence interval (converted to the
/// same mode) is a light band behind the curve. A caption states window, segment, RBW,
/// segments and degrees of freedom. One or two cursors are drawn as vertical lines; with two
/// the band between them is shaded.
///
/// When bins outnumber pixel columns, each column draws the smallest and largest value of its
/// bins ([`decimate_min_max`](super::decimate_min_max)), so narrow spurs stay visible. Values
/// that a logarithmic axis cannot show (zero, negative) and values more than 16 decades of power
/// below the peak are drawn at the bottom of the axis.
///
/// # Errors
/// [`PlotError::EmptyPsd`] for a PSD without bins, [`PlotError::NoPositiveFrequency`] when no
/// bin is above 0 Hz, [`PlotError::LengthMismatch`] for inconsistent arrays,
/// [`PlotError::TooManyCursors`], [`PlotError::PixelRatio`], [`PlotError::AreaTooSmall`], and
/// [`PlotError::Drawing`] when the backend fails.
pub fn draw_psd<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    report: &Report,
    options: &PsdPlotOptions,
) -> Result<PlotFrame, PlotError> {
    let scale = Scale::new(options.pixel_ratio)?;
    let psd = &report.psd;
    let bins = psd.frequency_hz.len();
    if bins == 0 || psd.density.is_empty() {
        return Err(PlotError::EmptyPsd);
    }
    check_len("psd.density", bins, &psd.density)?;
    check_len("psd.power_spectrum", bins, &psd.power_spectrum)?;
    check_len("psd.ci_lower", bins, &psd.ci_lower)?;
    check_len("psd.ci_upper", bins, &psd.ci_upper)?;
    for trace in &options.traces {
        check_len("a further PSD trace", bins, &trace.density)?;
    }
    if options.cursors_hz.len() > 2 {
        return Err(PlotError::TooManyCursors {
            count: options.cursors_hz.len(),
        });
    }
    let mode = options.mode;
    let first = psd
        .frequency_hz
        .iter()
        .position(|&f| f.is_finite() && f > 0.0)
        .ok_or(PlotError::NoPositiveFrequency { bins })?;
    let frequency_hz = psd.frequency_hz.get(first..).unwrap_or_default();

    // x in log10(Hz), from the first bin above 0 Hz to f_s/2.
    let x_lo = frequency_hz.first().map_or(1.0, |f| f.log10());
    let last_hz = frequency_hz.last().copied().unwrap_or(1.0);
    let top_hz = (report.sample_rate_hz / 2.0).max(last_hz);
    let first_hz = frequency_hz.first().copied().unwrap_or(1.0);
    let (x_hi, top_hz) = if top_hz.is_finite() && top_hz.log10() > x_lo {
        (top_hz.log10(), top_hz)
    } else {
        (x_lo + 1.0, first_hz * 10.0)
    };

    // y in axis space: log10 of the value, or dB.
    let to_axis = |v: f64| if mode.is_log() { v.log10() } else { v };
    let curve: Vec<f64> = (first..bins)
        .map(|bin| mode.value_at(psd, bin).map_or(f64::NAN, to_axis))
        .collect();
    let band: Option<(Vec<f64>, Vec<f64>)> = options.show_ci.then(|| {
        let convert = |values: &[f64]| -> Vec<f64> {
            values
                .get(first..)
                .unwrap_or_default()
                .iter()
                .map(|&p| to_axis(mode.from_density(p, psd.enbw_hz)))
                .collect()
        };
        (convert(&psd.ci_lower), convert(&psd.ci_upper))
    });
    // Further traces in axis space, plotted with the curve; they widen the range like it does.
    let traces: Vec<(TraceKind, Vec<f64>)> = options
        .traces
        .iter()
        .map(|trace| {
            let values = trace.density.get(first..).unwrap_or_default().iter();
            let axis = values.map(|&p| to_axis(mode.from_density(p, psd.enbw_hz)));
            (trace.kind, axis.collect())
        })
        .collect();
    let mut all_curves: Vec<f64> = curve.clone();
    for (_, values) in &traces {
        all_curves.extend_from_slice(values);
    }
    let (y_lo, y_hi) = y_range(mode, &all_curves, band.as_ref());

    let mut caption = vec![
        "Welch PSD".to_string(),
        format!("{} window", psd.window),
        format!(
            "segment {} samples ({})",
            psd.segment_len,
            format_seconds(psd.segment_len as f64 / report.sample_rate_hz)
        ),
        format!(
            "RBW (ENBW) {} Hz",
            format_significant(psd.enbw_hz, CAPTION_DIGITS)
        ),
        format!("{} segments", psd.segments),
        format!("{} dof", format_significant(psd.dof, CAPTION_DIGITS)),
    ];
    if options.show_ci {
        caption.push(format!(
            "{} % confidence band",
            format_significant(psd.confidence_level * 100.0, CAPTION_DIGITS)
        ));
    }
    let mut notes: Vec<String> = mode.unit_note(report).into_iter().collect();
    if !options.traces.is_empty() {
        let legend: Vec<String> = std::iter::once("average: dark blue".to_string())
            .chain(options.traces.iter().map(|t| match t.kind {
                TraceKind::PeakHold => format!("{}: pink", t.label),
                TraceKind::Reference => format!("{}: grey, dashed", t.label),
            }))
            .collect();
        notes.push(legend.join(" · "));
    }

    let x_label = |v: f64| format_hz(10f64.powf(v));
    let y_step = std::cell::Cell::new(0.0);
    let y_label = |v: f64| {
        if mode.is_log() {
            format_log_value(10f64.powf(v))
        } else {
            format_linear(v, y_step.get())
        }
    };
    let (chart, frame) = build_chart(
        area,
        scale,
        &caption,
        &notes,
        |max_labels| Axis {
            lo: x_lo,
            hi: x_hi,
            values: (first_hz, top_hz),
            log: true,
            ticks: log_ticks(x_lo, x_hi, max_labels),
            label: &x_label,
            description: "frequency (Hz)".to_string(),
        },
        |max_labels| {
            let ticks = if mode.is_log() {
                log_ticks(y_lo, y_hi, max_labels)
            } else {
                linear_ticks(y_lo, y_hi, max_labels)
            };
            y_step.set(ticks.step);
            let values = if mode.is_log() {
                (10f64.powf(y_lo), 10f64.powf(y_hi))
            } else {
                (y_lo, y_hi)
            };
            Axis {
                lo: y_lo,
                hi: y_hi,
                values,
                log: mode.is_log(),
                ticks,
                label: &y_label,
                description: mode.axis_label(report),
            }
        },
    )?;
    let plot = chart.plotting_area();
    let x_px: Vec<f64> = frequency_hz.iter().map(|&f| frame.px_at(f)).collect();
    let x_axis = |i: usize| frequency_hz.get(i).map_or(x_lo, |f| f.log10());
    let line = scale.stroke(LINE_WIDTH_PX);

    let cursors: Vec<f64> = options
        .cursors_hz
        .iter()
        .filter(|f| f.is_finite() && **f > 0.0)
        .map(|f| f.log10())
        .collect();
    if let [a, b] = cursors[..] {
        let (lo, hi) = (a.min(b).max(x_lo), a.max(b).min(x_hi));
        if lo < hi {
            plot.draw(&Rectangle::new(
                [(lo, y_hi), (hi, y_lo)],
                colours::CURSOR.mix(colours::CURSOR_BAND_ALPHA).filled(),
            ))?;
        }
    }

    if let Some((lower, upper)) = &band {
        let lower: Vec<f64> = lower
            .iter()
            .map(|&v| clamp_or_floor(v, y_lo, y_hi))
            .collect();
        let upper: Vec<f64> = upper
            .iter()
            .map(|&v| clamp_or_floor(v, y_lo, y_hi))
            .collect();
        let outline = band_envelope(&x_px, &lower, &upper);
        let to_x = |px: f64| frame.x_at(px).log10();
        let mut polygon: Vec<(f64, f64)> =
            outline.iter().map(|&(px, _, hi)| (to_x(px), hi)).collect();
        polygon.extend(outline.iter().rev().map(|&(px, lo, _)| (to_x(px), lo)));
        plot.draw(&Polygon::new(polygon, colours::BAND.filled()))?;
    }

    let curve: Vec<f64> = curve
        .iter()
        .map(|&v| clamp_or_floor(v, y_lo, y_hi))
        .collect();
    let points: Vec<(f64, f64)> = decimate_min_max_indices(&x_px, &curve)
        .into_iter()
        .filter_map(|i| Some((x_axis(i), *curve.get(i)?)))
        .collect();
    for (kind, values) in &traces {
        let values: Vec<f64> = values
            .iter()
            .map(|&v| clamp_or_floor(v, y_lo, y_hi))
            .collect();
        let points: Vec<(f64, f64)> = decimate_min_max_indices(&x_px, &values)
            .into_iter()
            .filter_map(|i| Some((x_axis(i), *values.get(i)?)))
            .collect();
        match kind {
            TraceKind::PeakHold => plot.draw(&PathElement::new(
                points,
                colours::PEAK_HOLD.stroke_width(line),
            ))?,
            TraceKind::Reference => {
                // Dashes: every other run of DASH_POINTS points.
                for dash in points.chunks(DASH_POINTS).step_by(2) {
                    plot.draw(&PathElement::new(
                        dash.to_vec(),
                        colours::REFERENCE.stroke_width(scale.stroke(CURVE_WIDTH_PX)),
                    ))?;
                }
            }
        }
    }
    plot.draw(&PathElement::new(
        points,
        colours::CURVE.stroke_width(scale.stroke(CURVE_WIDTH_PX)),
    ))?;

    for &c in &cursors {
        if (x_lo..=x_hi).contains(&c) {
            plot.draw(&PathElement::new(
                vec![(c, y_lo), (c, y_hi)],
                colours::CURSOR.stroke_width(line),
            ))?;
        }
    }
    area.present()?;
    Ok(frame)
}

/// The y axis range in axis space (log10 or dB) for a curve and its optional band, rounded out
/// to whole decades (10 dB steps for decibels).
fn y_range(mode: PsdMode, curve: &[f64], band: Option<&(Vec<f64>, Vec<f64>)>) -> (f64, f64) {
    let per_decade = mode.axis_units_per_power_decade();
    let finite = curve.iter().copied().filter(|v| v.is_finite());
    let (min, max) = finite.fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), v| {
        (lo.min(v), hi.max(v))
    });
    if min > max {
        return (-EMPTY_RANGE_POWER_DECADES * per_decade, 0.0);
    }
    let floor = min.max(max - MAX_DYNAMIC_RANGE_POWER_DECADES * per_decade);
    let (mut lo, mut hi) = (floor, max);
    if let Some((lower, upper)) = band {
        let reach = MAX_BAND_EXTENSION_POWER_DECADES * per_decade;
        for &v in lower.iter().filter(|v| v.is_finite()) {
            lo = lo.min(v.max(floor - reach));
        }
        for &v in upper.iter().filter(|v| v.is_finite()) {
            hi = hi.max(v.min(max + reach));
        }
    }
    let pad = RANGE_PAD_POWER_DECADES * per_decade;
    // Whole decades on a log axis; on the dB axis, whole 10 dB (one decade of power).
    let unit = per_decade.max(1.0);
    (
        ((lo - pad) / unit).floor() * unit,
        ((hi + pad) / unit).ceil() * unit,
    )
}

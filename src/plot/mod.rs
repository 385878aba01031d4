//! Plots of a [`Report`](crate::report::Report): the PSD against frequency, the
//! autocorrelation against lag, and the stationarity section (segment statistics over time,
//! stretch autocorrelations, spectrogram).
//!
//! Every function here is generic over a `plotters` [`DrawingBackend`], so the chart never knows
//! where it goes: the page draws on a `<canvas>`, tests draw into a recording backend, and an
//! export can draw SVG, all from the same code. Each drawing returns a [`PlotFrame`] that turns
//! backend pixels into data values and back, so a front end can read a mouse position as a
//! frequency without doing the axis maths itself.
//!
//! Pixels are those of the backend (on a canvas: the backing store, CSS size × device pixel
//! ratio); font sizes and line widths are given in CSS pixels and multiplied by the options'
//! `pixel_ratio`.
//!
//! Large spectra are decimated per pixel column with [`decimate_min_max`], which keeps the
//! smallest and largest value of each column, so a spur one bin wide is never dropped.

mod acf;
mod decimate;
mod options;
mod psd;
mod stationarity;
mod ticks;

use plotters::coord::ranged1d::{KeyPointHint, NoDefaultFormatting, Ranged, ValueFormatter};
use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::drawing::DrawingAreaErrorKind;
use plotters::prelude::{
    Cartesian2d, ChartBuilder, ChartContext, Color, DrawingArea, DrawingBackend, FontDesc,
    FontFamily, FontStyle, Text, TextStyle,
};
use serde::{Deserialize, Serialize};

pub use self::acf::draw_acf;
pub use self::decimate::{decimate_min_max, decimate_min_max_indices};
pub use self::options::{
    nearest_bin, AcfMode, AcfPlotOptions, ParsePlotModeError, PsdMode, PsdPlotOptions, PsdTrace,
    TraceKind,
};
pub use self::psd::draw_psd;
pub use self::stationarity::{
    colour_range_db, draw_ensemble_over_time, draw_segment_statistics, draw_spectrogram,
    draw_stretch_acf, sequential_colour, stretch_colour, whole_record_and_spread,
    SegmentPlotOptions, SpectrogramPlotOptions, StretchPlotOptions, POOLED, SEGMENT_POINTS,
    SEQUENTIAL_STOPS, STRETCH_COLOURS, WHOLE_RECORD,
};
pub use self::ticks::{format_hz, format_log_value};

/// Largest device pixel ratio accepted; screens ship with 1 to 4, so 16 leaves room for zoom.
pub const MAX_PIXEL_RATIO: f64 = 16.0;

/// Colours of the plots: white ground, dark text, and hues from the Okabe–Ito palette
/// (Okabe & Ito 2008, "Color Universal Design"), which stay distinct for the common forms of
/// colour blindness.
pub mod colours {
    use plotters::prelude::RGBColor;

    /// Background.
    pub const BACKGROUND: RGBColor = RGBColor(255, 255, 255);
    /// Text, axes and tick marks.
    pub const INK: RGBColor = RGBColor(34, 34, 34);
    /// Grid lines at labelled ticks.
    pub const GRID: RGBColor = RGBColor(214, 214, 214);
    /// Grid lines between labelled ticks.
    pub const GRID_LIGHT: RGBColor = RGBColor(238, 238, 238);
    /// The measured curve: a dark shade of Okabe–Ito blue.
    pub const CURVE: RGBColor = RGBColor(0, 78, 140);
    /// The confidence band behind the curve: Okabe–Ito sky blue lightened towards white.
    pub const BAND: RGBColor = RGBColor(200, 228, 246);
    /// Frequency cursors: Okabe–Ito vermillion.
    pub const CURSOR: RGBColor = RGBColor(213, 94, 0);
    /// Opacity of [`CURSOR`] over the band between two cursors (light enough to read the curve
    /// and the confidence band through it).
    pub const CURSOR_BAND_ALPHA: f64 = 0.16;
    /// The zero line of the autocorrelation.
    pub const ZERO_LINE: RGBColor = RGBColor(120, 120, 120);
    /// The 1/e marker of the autocorrelation: Okabe–Ito bluish green.
    pub const ONE_OVER_E: RGBColor = RGBColor(0, 130, 95);
    /// The first-zero marker of the autocorrelation: Okabe–Ito vermillion.
    pub const FIRST_ZERO: RGBColor = RGBColor(213, 94, 0);
    /// A live view's peak-hold trace: Okabe–Ito reddish purple.
    pub const PEAK_HOLD: RGBColor = RGBColor(204, 121, 167);
    /// A frozen reference trace: a mid grey.
    pub const REFERENCE: RGBColor = RGBColor(110, 110, 110);
}

/// Why a plot could not be drawn.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum PlotError {
    /// The report holds no PSD bins.
    #[error("the report has no PSD bins to plot: analyse a record of at least one segment first")]
    EmptyPsd,
    /// The PSD holds no bin above 0 Hz, which a logarithmic frequency axis needs.
    #[error(
        "the PSD has no bin above 0 Hz ({bins} bin(s)), so there is nothing to place on a \
         logarithmic frequency axis"
    )]
    NoPositiveFrequency {
        /// Bins in the PSD.
        bins: usize,
    },
    /// The report holds no autocorrelation lags.
    #[error("the report has no autocorrelation lags to plot")]
    EmptyAcf,
    /// The report has no stationarity section (the record was too short for the tests).
    #[error(
        "the report has no stationarity section: analyse a record long enough for the \
         stationarity tests"
    )]
    NoStationarity,
    /// The stationarity section holds no spectrogram (or one without columns).
    #[error("the report's stationarity section has no spectrogram to plot")]
    NoSpectrogram,
    /// Two arrays of the report that belong together have different lengths.
    #[error("the report is inconsistent: {what} has {found} values but {expected} were expected")]
    LengthMismatch {
        /// The array, e.g. `"psd.density"`.
        what: &'static str,
        /// Values expected (the length of the axis array).
        expected: usize,
        /// Values found.
        found: usize,
    },
    /// More frequency cursors than the plot draws.
    #[error("{count} cursors given: give 0, 1 or 2 (with 2 the band between them is shaded)")]
    TooManyCursors {
        /// Cursors given.
        count: usize,
    },
    /// A device pixel ratio that is not a finite number in (0, [`MAX_PIXEL_RATIO`]].
    #[error(
        "pixel ratio {pixel_ratio} is not usable: give the device pixel ratio, a number above 0 \
         and at most {max}",
        max = MAX_PIXEL_RATIO
    )]
    PixelRatio {
        /// The ratio given.
        pixel_ratio: f64,
    },
    /// The drawing area leaves no room for the plot.
    #[error(
        "the drawing area of {width_px} × {height_px} pixels is too small for a plot with its \
         labels at pixel ratio {pixel_ratio}: make it larger"
    )]
    AreaTooSmall {
        /// Width of the area, backend pixels.
        width_px: u32,
        /// Height of the area, backend pixels.
        height_px: u32,
        /// Pixel ratio of the plot.
        pixel_ratio: f64,
    },
    /// The drawing backend failed.
    #[error("drawing failed: {message}")]
    Drawing {
        /// The backend's own message.
        message: String,
    },
}

impl<E: std::error::Error + Send + Sync> From<DrawingAreaErrorKind<E>> for PlotError {
    fn from(error: DrawingAreaErrorKind<E>) -> Self {
        PlotError::Drawing {
            message: error.to_string(),
        }
    }
}

/// Where the plotting area of a drawn chart lies, in backend pixels, and which data values its
/// edges stand for.
///
/// The left edge (`left_px`) shows `x_min` and the right edge (`left_px + width_px`) `x_max`;
/// the top edge (`top_px`) shows `y_max` and the bottom edge (`top_px + height_px`) `y_min`.
/// Between the edges values are spaced linearly, or linearly in their logarithm when the axis is
/// logarithmic. Pixel positions are continuous: the backend draws the pixel column
/// `floor(px_at(x))` (to within 0.001 pixel).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct PlotFrame {
    /// Horizontal position of the left edge of the plotting area, backend pixels.
    pub left_px: f64,
    /// Vertical position of the top edge of the plotting area, backend pixels.
    pub top_px: f64,
    /// Distance from the left to the right edge, backend pixels.
    pub width_px: f64,
    /// Distance from the top to the bottom edge, backend pixels.
    pub height_px: f64,
    /// Data value at the left edge (Hz for a PSD, s for an ACF).
    pub x_min: f64,
    /// Data value at the right edge.
    pub x_max: f64,
    /// Data value at the bottom edge, in the unit of the plotted quantity.
    pub y_min: f64,
    /// Data value at the top edge.
    pub y_max: f64,
    /// Whether x is spaced logarithmically.
    pub x_log: bool,
    /// Whether y is spaced logarithmically.
    pub y_log: bool,
}

impl PlotFrame {
    /// The data x shown at horizontal backend pixel `px` (extrapolated outside the area).
    pub fn x_at(&self, px: f64) -> f64 {
        let t = (px - self.left_px) / self.width_px;
        from_unit(t, self.x_min, self.x_max, self.x_log)
    }

    /// The horizontal backend pixel where data x is shown (extrapolated outside the area; NaN for
    /// x ≤ 0 on a logarithmic axis).
    pub fn px_at(&self, x: f64) -> f64 {
        self.left_px + self.width_px * to_unit(x, self.x_min, self.x_max, self.x_log)
    }

    /// The data y shown at vertical backend pixel `py` (extrapolated outside the area).
    pub fn y_at(&self, py: f64) -> f64 {
        let t = (self.top_px + self.height_px - py) / self.height_px;
        from_unit(t, self.y_min, self.y_max, self.y_log)
    }

    /// The vertical backend pixel where data y is shown (extrapolated outside the area; NaN for
    /// y ≤ 0 on a logarithmic axis).
    pub fn py_at(&self, y: f64) -> f64 {
        self.top_px + self.height_px * (1.0 - to_unit(y, self.y_min, self.y_max, self.y_log))
    }

    /// Whether horizontal backend pixel `px` lies within the plotting area, edges included.
    pub fn contains_px(&self, px: f64) -> bool {
        px >= self.left_px && px <= self.left_px + self.width_px
    }

    /// Whether vertical backend pixel `py` lies within the plotting area, edges included.
    pub fn contains_py(&self, py: f64) -> bool {
        py >= self.top_px && py <= self.top_px + self.height_px
    }

    /// The frame of a chart whose plotting area covers `pixel_range` (as plotters reports it:
    /// end exclusive), showing data values `x` and `y` (not their logarithms) at its edges.
    fn from_pixel_range(
        pixel_range: (std::ops::Range<i32>, std::ops::Range<i32>),
        x: (f64, f64),
        y: (f64, f64),
        x_log: bool,
        y_log: bool,
    ) -> Self {
        let (xs, ys) = pixel_range;
        // plotters maps the range onto the first to the last pixel of the area (end − 1).
        PlotFrame {
            left_px: f64::from(xs.start),
            top_px: f64::from(ys.start),
            width_px: f64::from(xs.end - 1 - xs.start),
            height_px: f64::from(ys.end - 1 - ys.start),
            x_min: x.0,
            x_max: x.1,
            y_min: y.0,
            y_max: y.1,
            x_log,
            y_log,
        }
    }
}

/// Position of `v` between `lo` (0) and `hi` (1), linearly or in log10.
fn to_unit(v: f64, lo: f64, hi: f64, log: bool) -> f64 {
    if log {
        (v.log10() - lo.log10()) / (hi.log10() - lo.log10())
    } else {
        (v - lo) / (hi - lo)
    }
}

/// The value at position `t` between `lo` (0) and `hi` (1), linearly or in log10.
fn from_unit(t: f64, lo: f64, hi: f64, log: bool) -> f64 {
    if log {
        10f64.powf(lo.log10() + t * (hi.log10() - lo.log10()))
    } else {
        lo + t * (hi - lo)
    }
}

/// Sizes in backend pixels for one pixel ratio.
#[derive(Debug, Clone, Copy)]
struct Scale {
    pixel_ratio: f64,
}

/// Font size of tick labels and marker texts, CSS pixels.
const FONT_PX: f64 = 12.0;
/// Font size of axis descriptions, CSS pixels.
const AXIS_DESC_FONT_PX: f64 = 13.0;
/// Width of the measured curve, CSS pixels.
const CURVE_WIDTH_PX: f64 = 1.0;
/// Width of axes, cursors and markers, CSS pixels.
const LINE_WIDTH_PX: f64 = 1.0;
/// Length of tick marks, CSS pixels.
const TICK_PX: f64 = 4.0;
/// Space kept around the chart, CSS pixels.
const MARGIN_PX: f64 = 8.0;
/// Smallest plotting area drawn, CSS pixels each way.
const MIN_PLOT_PX: f64 = 16.0;

impl Scale {
    fn new(pixel_ratio: f64) -> Result<Self, PlotError> {
        if pixel_ratio.is_finite() && pixel_ratio > 0.0 && pixel_ratio <= MAX_PIXEL_RATIO {
            Ok(Self { pixel_ratio })
        } else {
            Err(PlotError::PixelRatio { pixel_ratio })
        }
    }

    /// A length in backend pixels (fractional).
    fn px(self, css_px: f64) -> f64 {
        css_px * self.pixel_ratio
    }

    /// A length in whole backend pixels, at least 1.
    fn whole_px(self, css_px: f64) -> u32 {
        // Saturating float → int conversion; the ratio is bounded, so this stays small.
        (css_px * self.pixel_ratio).round().max(1.0) as u32
    }

    /// A line width in whole backend pixels, at least 1.
    fn stroke(self, css_px: f64) -> u32 {
        self.whole_px(css_px)
    }
}

/// Font size of the caption, CSS pixels.
const CAPTION_FONT_PX: f64 = 12.0;
/// Line height as a multiple of the font size.
const LINE_HEIGHT: f64 = 1.35;
/// Vertical room per labelled tick on the y axis, in font sizes.
const Y_LABEL_PITCH_FONTS: f64 = 2.5;
/// Horizontal room per labelled tick on the x axis, in font sizes.
const X_LABEL_PITCH_FONTS: f64 = 5.0;
/// Separator between the parts of a caption.
const CAPTION_SEPARATOR: &str = " · ";

/// The coordinates of every chart here: x and y linear in axis space (log10 of the value on a
/// logarithmic axis), with ticks of our own.
type Coord = Cartesian2d<TickedAxis, TickedAxis>;

/// A linear f64 axis (in axis space) with our own labelled and grid-only ticks. plotters'
/// `WithKeyPoints` does the same but cannot be given label formatters.
struct TickedAxis {
    inner: RangedCoordf64,
    ticks: ticks::Ticks,
}

impl Ranged for TickedAxis {
    type FormatOption = NoDefaultFormatting;
    type ValueType = f64;

    fn map(&self, value: &f64, limit: (i32, i32)) -> i32 {
        self.inner.map(value, limit)
    }

    fn key_points<Hint: KeyPointHint>(&self, hint: Hint) -> Vec<f64> {
        if hint.weight().allow_light_points() {
            self.ticks.light.clone()
        } else {
            self.ticks.bold.clone()
        }
    }

    fn range(&self) -> std::ops::Range<f64> {
        self.inner.range()
    }
}

impl ValueFormatter<f64> for TickedAxis {
    fn format(value: &f64) -> String {
        value.to_string()
    }
}

/// One axis: its range in axis space, its ticks, how to label them and its description.
struct Axis<'l> {
    /// Ends in axis space.
    lo: f64,
    hi: f64,
    /// Ends as data values (10^lo and 10^hi on a log axis, exactly as the caller knows them).
    values: (f64, f64),
    log: bool,
    ticks: ticks::Ticks,
    label: &'l dyn Fn(f64) -> String,
    description: String,
}

/// A text style in the plots' font at `css_px` (scaled) in `INK`.
fn text_style(scale: Scale, css_px: f64) -> TextStyle<'static> {
    FontDesc::new(FontFamily::SansSerif, scale.px(css_px), FontStyle::Normal).color(&colours::INK)
}

/// Joins caption `parts` with [`CAPTION_SEPARATOR`] into lines no wider than `width_px`
/// (a part wider than that gets a line of its own); `notes` each start a new line.
fn caption_lines<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    style: &TextStyle,
    parts: &[String],
    notes: &[String],
    width_px: u32,
) -> Result<Vec<String>, PlotError> {
    let mut lines: Vec<String> = vec![];
    let mut line = String::new();
    for part in parts {
        let candidate = if line.is_empty() {
            part.clone()
        } else {
            format!("{line}{CAPTION_SEPARATOR}{part}")
        };
        let (w, _) = area.estimate_text_size(&candidate, style)?;
        if w <= width_px || line.is_empty() {
            line = candidate;
        } else {
            lines.push(std::mem::replace(&mut line, part.clone()));
        }
    }
    if !line.is_empty() {
        lines.push(line);
    }
    lines.extend(notes.iter().cloned());
    Ok(lines)
}

/// Lays out a chart on `area`: caption lines at the top, labels left and below, with ticks
/// fitted to the room. Fills the area with the background, draws caption, grid, axes and
/// labels, and returns the chart to draw series on, with its frame.
///
/// `y_axis` and `x_axis` get their ticks from the functions given, which receive the largest
/// number of labels that fits.
fn build_chart<'a, 'l, DB: DrawingBackend>(
    area: &'a DrawingArea<DB, Shift>,
    scale: Scale,
    caption_parts: &[String],
    notes: &[String],
    make_x: impl FnOnce(usize) -> Axis<'l>,
    make_y: impl FnOnce(usize) -> Axis<'l>,
) -> Result<(ChartContext<'a, DB, Coord>, PlotFrame), PlotError> {
    let (width_px, height_px) = area.dim_in_pixel();
    let margin = scale.whole_px(MARGIN_PX);
    let caption_style = text_style(scale, CAPTION_FONT_PX);
    let label_style = text_style(scale, FONT_PX);
    let desc_style = text_style(scale, AXIS_DESC_FONT_PX);
    let tick = scale.whole_px(TICK_PX);

    let lines = caption_lines(
        area,
        &caption_style,
        caption_parts,
        notes,
        width_px.saturating_sub(2 * margin),
    )?;
    let line_px = scale.px(CAPTION_FONT_PX * LINE_HEIGHT);
    let top = margin + (line_px * lines.len() as f64).ceil() as u32 + margin;

    // Below the plot: tick, gap (plotters leaves twice the tick length), labels, description.
    let x_area = 2 * tick + scale.whole_px(FONT_PX * LINE_HEIGHT + AXIS_DESC_FONT_PX * LINE_HEIGHT);
    let plot_height = f64::from(height_px) - f64::from(top + x_area + margin);
    let max_y_labels = (plot_height / scale.px(FONT_PX * Y_LABEL_PITCH_FONTS))
        .floor()
        .max(2.0);
    let y = make_y(max_y_labels as usize);

    // Left of the plot: description, labels as wide as the widest, gap, tick.
    let mut widest = 0;
    for &v in &y.ticks.bold {
        let (w, _) = area.estimate_text_size(&(y.label)(v), &label_style)?;
        widest = widest.max(w);
    }
    let y_area = scale.whole_px(AXIS_DESC_FONT_PX * LINE_HEIGHT) + widest + 2 * tick + margin / 2;

    let room_x = f64::from(width_px) - f64::from(y_area + 2 * margin);
    let min_plot = scale.px(MIN_PLOT_PX);
    if room_x < min_plot || plot_height < min_plot {
        return Err(PlotError::AreaTooSmall {
            width_px,
            height_px,
            pixel_ratio: scale.pixel_ratio,
        });
    }
    let max_x_labels = (room_x / scale.px(FONT_PX * X_LABEL_PITCH_FONTS))
        .floor()
        .max(2.0);
    let x = make_x(max_x_labels as usize);

    area.fill(&colours::BACKGROUND)?;
    for (k, line) in lines.iter().enumerate() {
        let y_px = f64::from(margin) + line_px * k as f64;
        area.draw(&Text::new(
            line.as_str(),
            (margin as i32, y_px.round() as i32),
            caption_style.clone(),
        ))?;
    }

    let x_coord = TickedAxis {
        inner: (x.lo..x.hi).into(),
        ticks: x.ticks.clone(),
    };
    let y_coord = TickedAxis {
        inner: (y.lo..y.hi).into(),
        ticks: y.ticks.clone(),
    };
    let mut chart = ChartBuilder::on(area)
        .margin_top(top)
        .margin_bottom(margin)
        .margin_left(margin)
        .margin_right(margin)
        .x_label_area_size(x_area)
        .y_label_area_size(y_area)
        .build_cartesian_2d(x_coord, y_coord)?;

    let x_format = |v: &f64| (x.label)(*v);
    let y_format = |v: &f64| (y.label)(*v);
    let line = scale.stroke(LINE_WIDTH_PX);
    chart
        .configure_mesh()
        .x_desc(x.description.as_str())
        .y_desc(y.description.as_str())
        .x_label_formatter(&x_format)
        .y_label_formatter(&y_format)
        .label_style(label_style.clone())
        .axis_desc_style(desc_style)
        .bold_line_style(colours::GRID.stroke_width(line))
        .light_line_style(colours::GRID_LIGHT.stroke_width(line))
        .axis_style(colours::INK.stroke_width(line))
        .set_all_tick_mark_size(tick)
        .draw()?;

    let frame = PlotFrame::from_pixel_range(
        chart.plotting_area().get_pixel_range(),
        x.values,
        y.values,
        x.log,
        y.log,
    );
    Ok((chart, frame))
}

/// Checks that `values` has `expected` entries.
fn check_len(what: &'static str, expected: usize, values: &[f64]) -> Result<(), PlotError> {
    if values.len() == expected {
        Ok(())
    } else {
        Err(PlotError::LengthMismatch {
            what,
            expected,
            found: values.len(),
        })
    }
}

/// `value` clamped into [lo, hi]; NaN and −∞ become `lo`, +∞ becomes `hi`.
fn clamp_or_floor(value: f64, lo: f64, hi: f64) -> f64 {
    if value.is_nan() {
        lo
    } else {
        value.clamp(lo, hi)
    }
}

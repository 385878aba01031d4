//! A report on the main thread: plots on canvases and read-outs for the page.

use plotters::prelude::IntoDrawingArea;
use plotters_canvas::CanvasBackend;
use wasm_bindgen::prelude::*;
use wasm_bindgen::JsCast;
use web_sys::HtmlCanvasElement;

use crate::bands;
use crate::plot::{
    draw_acf, draw_psd, draw_segment_statistics, draw_spectrogram, draw_stretch_acf, nearest_bin,
    AcfPlotOptions, PlotFrame, PsdMode, PsdPlotOptions, PsdTrace, SegmentPlotOptions,
    SpectrogramPlotOptions, StretchPlotOptions, TraceKind,
};
use crate::report::Report;

/// A report read back from JSON, with the frames of the plots last drawn from it.
///
/// Drawing needs the main thread: plotters measures text through the DOM.
#[wasm_bindgen]
pub struct ReportView {
    report: Report,
    traces: Vec<PsdTrace>,
    psd_frame: Option<PlotFrame>,
    acf_frame: Option<PlotFrame>,
    segments_frame: Option<PlotFrame>,
    stretches_frame: Option<PlotFrame>,
    spectrogram_frame: Option<PlotFrame>,
}

#[wasm_bindgen]
impl ReportView {
    /// Reads a whole report from JSON text (the command line's `--json`).
    ///
    /// # Errors
    /// When the text is not such a report.
    pub fn from_json(text: &str) -> Result<ReportView, JsError> {
        let report: Report = serde_json::from_str(text)
            .map_err(|e| JsError::new(&format!("the report could not be read: {e}")))?;
        Ok(Self::of(report))
    }

    /// Rebuilds a report from what `analyze_file` returns: the summary JSON and the object of
    /// `Float64Array`s by dotted path (copied once into wasm memory here).
    ///
    /// # Errors
    /// When the summary is not a report or an array is not a `Float64Array`.
    pub fn from_parts(summary: &str, arrays: &js_sys::Object) -> Result<ReportView, JsError> {
        let mut report: Report = serde_json::from_str(summary)
            .map_err(|e| JsError::new(&format!("the report could not be read: {e}")))?;
        let mut taken = crate::report::ReportArrays::default();
        // Paths the report has no part for (no stationarity section, no spectrogram) are
        // absent; anything present must be a Float64Array.
        for path in Report::ARRAY_PATHS {
            let value = js_sys::Reflect::get(arrays, &JsValue::from_str(path))
                .map_err(|_| JsError::new(&format!("the report's {path} could not be read")))?;
            if value.is_undefined() {
                continue;
            }
            let typed = value
                .dyn_into::<js_sys::Float64Array>()
                .map_err(|_| JsError::new(&format!("the report's {path} is not numbers")))?;
            taken.arrays.push((path, typed.to_vec()));
        }
        report.restore_arrays(taken);
        Ok(Self::of(report))
    }

    fn of(report: Report) -> ReportView {
        ReportView {
            report,
            traces: Vec::new(),
            psd_frame: None,
            acf_frame: None,
            segments_frame: None,
            stretches_frame: None,
            spectrogram_frame: None,
        }
    }

    /// The whole report as JSON, the same text as the command line's `--json` (the export).
    ///
    /// # Errors
    /// Only if serialisation fails.
    pub fn report_json(&self) -> Result<String, JsError> {
        serde_json::to_string(&self.report)
            .map_err(|e| JsError::new(&format!("the report could not be written: {e}")))
    }

    /// Draws the PSD on `canvas` at its backing-store size (`canvas.width` × `canvas.height`;
    /// the page sets these to CSS size × devicePixelRatio and passes that ratio as
    /// `pixel_ratio`). `options_json`: `{"mode": "density"|"asd"|"power"|"db", "show_ci": bool,
    /// "cursors_hz": [f1, f2], "pixel_ratio": number}`, every field optional.
    ///
    /// # Errors
    /// Unreadable options, a canvas without a 2D context, or a plot error.
    pub fn draw_psd(
        &mut self,
        canvas: &HtmlCanvasElement,
        options_json: &str,
    ) -> Result<(), JsError> {
        let mut options: PsdPlotOptions = parse_options(options_json, "PSD plot options")?;
        options.traces.clone_from(&self.traces);
        let area = canvas_area(canvas)?;
        let frame =
            draw_psd(&area, &self.report, &options).map_err(|e| JsError::new(&e.to_string()))?;
        self.psd_frame = Some(frame);
        Ok(())
    }

    /// Adds a further density (`unit`²/Hz per bin of this report's PSD) drawn over the PSD:
    /// `kind` is `"peak-hold"` or `"reference"`, `label` its name in the caption.
    ///
    /// # Errors
    /// An unknown kind or a length other than the PSD's.
    pub fn add_trace(
        &mut self,
        kind: &str,
        label: &str,
        density: &js_sys::Float64Array,
    ) -> Result<(), JsError> {
        let kind = match kind {
            "peak-hold" => TraceKind::PeakHold,
            "reference" => TraceKind::Reference,
            other => {
                return Err(JsError::new(&format!(
                    "unknown trace kind '{other}' (peak-hold, reference)"
                )))
            }
        };
        let bins = self.report.psd.density.len();
        if density.length() as usize != bins {
            return Err(JsError::new(&format!(
                "the {label} trace has {} values for {bins} bins; it belongs to other settings",
                density.length()
            )));
        }
        self.traces.push(PsdTrace {
            kind,
            label: label.to_string(),
            density: density.to_vec(),
        });
        Ok(())
    }

    /// Draws the autocorrelation on `canvas` at its backing-store size. `options_json`:
    /// `{"mode": "coefficient"|"autocovariance"|"autocorrelation", "pixel_ratio": number}`,
    /// every field optional.
    ///
    /// # Errors
    /// Unreadable options, a canvas without a 2D context, or a plot error.
    pub fn draw_acf(
        &mut self,
        canvas: &HtmlCanvasElement,
        options_json: &str,
    ) -> Result<(), JsError> {
        let options: AcfPlotOptions = parse_options(options_json, "ACF plot options")?;
        let area = canvas_area(canvas)?;
        let frame =
            draw_acf(&area, &self.report, &options).map_err(|e| JsError::new(&e.to_string()))?;
        self.acf_frame = Some(frame);
        Ok(())
    }

    /// Draws the segment means and mean squares of the stationarity section on `canvas` at its
    /// backing-store size. `options_json`: `{"pixel_ratio": number}`, optional.
    ///
    /// # Errors
    /// Unreadable options, a canvas without a 2D context, a report without a stationarity
    /// section, or another plot error.
    pub fn draw_segments(
        &mut self,
        canvas: &HtmlCanvasElement,
        options_json: &str,
    ) -> Result<(), JsError> {
        let options: SegmentPlotOptions = parse_options(options_json, "segment plot options")?;
        let area = canvas_area(canvas)?;
        let frame = draw_segment_statistics(&area, &self.report, &options)
            .map_err(|e| JsError::new(&e.to_string()))?;
        self.segments_frame = Some(frame);
        Ok(())
    }

    /// Draws each stretch's autocorrelation against the pooled one on `canvas` at its
    /// backing-store size. `options_json`: `{"pixel_ratio": number}`, optional.
    ///
    /// # Errors
    /// Unreadable options, a canvas without a 2D context, a report without a stationarity
    /// section, or another plot error.
    pub fn draw_stretches(
        &mut self,
        canvas: &HtmlCanvasElement,
        options_json: &str,
    ) -> Result<(), JsError> {
        let options: StretchPlotOptions = parse_options(options_json, "stretch plot options")?;
        let area = canvas_area(canvas)?;
        let frame = draw_stretch_acf(&area, &self.report, &options)
            .map_err(|e| JsError::new(&e.to_string()))?;
        self.stretches_frame = Some(frame);
        Ok(())
    }

    /// Draws the spectrogram on `canvas` at its backing-store size. `options_json`:
    /// `{"pixel_ratio": number}`, optional.
    ///
    /// # Errors
    /// Unreadable options, a canvas without a 2D context, a report without a stationarity
    /// section or spectrogram, or another plot error.
    pub fn draw_spectrogram(
        &mut self,
        canvas: &HtmlCanvasElement,
        options_json: &str,
    ) -> Result<(), JsError> {
        let options: SpectrogramPlotOptions =
            parse_options(options_json, "spectrogram plot options")?;
        let area = canvas_area(canvas)?;
        let frame = draw_spectrogram(&area, &self.report, &options)
            .map_err(|e| JsError::new(&e.to_string()))?;
        self.spectrogram_frame = Some(frame);
        Ok(())
    }

    /// The segment start time (s) under `x_css_px` of the segment chart last drawn; NaN outside
    /// its plotting area or before any drawing.
    pub fn segment_time_at(&self, x_css_px: f64, pixel_ratio: f64) -> f64 {
        value_at(self.segments_frame.as_ref(), x_css_px, pixel_ratio)
    }

    /// The lag (s) under `x_css_px` of the stretch chart last drawn; NaN outside its plotting
    /// area or before any drawing.
    pub fn stretch_lag_at(&self, x_css_px: f64, pixel_ratio: f64) -> f64 {
        value_at(self.stretches_frame.as_ref(), x_css_px, pixel_ratio)
    }

    /// The time (s) under `x_css_px` of the spectrogram last drawn; NaN outside its plotting
    /// area or before any drawing.
    pub fn spectrogram_time_at(&self, x_css_px: f64, pixel_ratio: f64) -> f64 {
        value_at(self.spectrogram_frame.as_ref(), x_css_px, pixel_ratio)
    }

    /// The frequency (Hz) under horizontal position `x_css_px` (CSS pixels from the canvas's
    /// left edge) of the PSD last drawn; NaN outside its plotting area or before any drawing.
    pub fn frequency_at(&self, x_css_px: f64, pixel_ratio: f64) -> f64 {
        value_at(self.psd_frame.as_ref(), x_css_px, pixel_ratio)
    }

    /// The lag (s) under horizontal position `x_css_px` of the ACF last drawn; NaN outside its
    /// plotting area or before any drawing.
    pub fn lag_at(&self, x_css_px: f64, pixel_ratio: f64) -> f64 {
        value_at(self.acf_frame.as_ref(), x_css_px, pixel_ratio)
    }

    /// The value of the bin nearest `frequency_hz` in the unit of `mode` (see `unit_label`);
    /// NaN for a non-finite frequency.
    ///
    /// # Errors
    /// An unknown mode.
    pub fn psd_value_at(&self, frequency_hz: f64, mode: &str) -> Result<f64, JsError> {
        let mode = parse_mode(mode)?;
        Ok(nearest_bin(&self.report.psd.frequency_hz, frequency_hz)
            .and_then(|bin| mode.value_at(&self.report.psd, bin))
            .unwrap_or(f64::NAN))
    }

    /// The frequency (Hz) of the bin nearest `frequency_hz`; NaN for a non-finite frequency.
    pub fn bin_frequency_at(&self, frequency_hz: f64) -> f64 {
        let f = &self.report.psd.frequency_hz;
        nearest_bin(f, frequency_hz)
            .and_then(|bin| f.get(bin).copied())
            .unwrap_or(f64::NAN)
    }

    /// RMS between two frequencies (either order), in the report's unit: √ of `band_power`.
    pub fn band_rms(&self, f_lo_hz: f64, f_hi_hz: f64) -> f64 {
        bands::band_rms(&self.report.psd, f_lo_hz, f_hi_hz)
    }

    /// Power between two frequencies (either order), in the report's unit squared, integrated
    /// from the PSD with partial edge bins.
    pub fn band_power(&self, f_lo_hz: f64, f_hi_hz: f64) -> f64 {
        bands::band_power(&self.report.psd, f_lo_hz, f_hi_hz)
    }

    /// The unit of `mode`'s values, e.g. `V^2/Hz`, `V/sqrt(Hz)`, `V^2`, `dB re 1 V^2/Hz`.
    ///
    /// # Errors
    /// An unknown mode.
    pub fn unit_label(&self, mode: &str) -> Result<String, JsError> {
        Ok(parse_mode(mode)?.unit(&self.report))
    }

    /// The PSD as CSV, the same text the command line's `--csv` writes.
    pub fn psd_csv(&self) -> String {
        crate::export::psd_csv(&self.report)
    }

    /// The autocorrelation as CSV, the same text the command line's `--csv` writes.
    pub fn acf_csv(&self) -> String {
        crate::export::acf_csv(&self.report)
    }
}

/// The whole backing store of `canvas` as a drawing area.
fn canvas_area(
    canvas: &HtmlCanvasElement,
) -> Result<plotters::drawing::DrawingArea<CanvasBackend, plotters::coord::Shift>, JsError> {
    CanvasBackend::with_canvas_object(canvas.clone())
        .map(IntoDrawingArea::into_drawing_area)
        .ok_or_else(|| JsError::new("the canvas has no 2D drawing context"))
}

/// Plot options from the page's JSON; empty text means the defaults.
fn parse_options<T: serde::de::DeserializeOwned + Default>(
    text: &str,
    what: &str,
) -> Result<T, JsError> {
    if text.trim().is_empty() {
        return Ok(T::default());
    }
    serde_json::from_str(text).map_err(|e| JsError::new(&format!("{what}: {e}")))
}

fn parse_mode(text: &str) -> Result<PsdMode, JsError> {
    text.parse::<PsdMode>()
        .map_err(|e| JsError::new(&e.to_string()))
}

/// The data x under a CSS-pixel position in `frame`, or NaN.
fn value_at(frame: Option<&PlotFrame>, x_css_px: f64, pixel_ratio: f64) -> f64 {
    let Some(frame) = frame else {
        return f64::NAN;
    };
    let px = x_css_px * pixel_ratio;
    if px.is_finite() && frame.contains_px(px) {
        frame.x_at(px)
    } else {
        f64::NAN
    }
}

/// Draws an ensemble report (the JSON `analyze_ensemble_files` returned) on `canvas`: the
/// averages across records over time (see [`crate::plot::draw_ensemble_over_time`]).
/// `options_json`: `{"pixel_ratio": number}`, optional.
///
/// # Errors
/// Unreadable report or options, a canvas without a 2D context, or a plot error.
#[wasm_bindgen]
pub fn draw_ensemble(
    canvas: &HtmlCanvasElement,
    report_json: &str,
    options_json: &str,
) -> Result<(), JsError> {
    let report: crate::ensemble_analysis::EnsembleReport = serde_json::from_str(report_json)
        .map_err(|e| JsError::new(&format!("the ensemble report could not be read: {e}")))?;
    let options: crate::plot::SegmentPlotOptions =
        parse_options(options_json, "ensemble plot options")?;
    let area = canvas_area(canvas)?;
    crate::plot::draw_ensemble_over_time(&area, &report, &options)
        .map(drop)
        .map_err(|e| JsError::new(&e.to_string()))
}

//! Browser bindings: thin wrappers that parse the page's JSON, call the library and turn its
//! errors into readable JavaScript errors. Compiled only for wasm32 with the `web` feature.
//!
//! | export | where | what |
//! | --- | --- | --- |
//! | `analyze_file(file, input_json, settings_json, on_progress)` | Web Worker | the report of a `File`: `{summary, arrays}`, the report's JSON (the command line's serializer) without its long arrays, and those arrays as `Float64Array`s the worker transfers to the page |
//! | `LiveSession` | Web Worker (live) | blocks from the capture worklet in, frames (`{summary, arrays, live}`) out; calibrator tone, recording |
//! | `ReportView` | main thread | a report rebuilt from that summary and those arrays (or read from whole JSON): draws the PSD and ACF on canvases, reads values under the mouse, integrates bands, writes the JSON and CSV exports |
//!
//! Enums cross as strings parsed with `FromStr`; errors become `Error` objects whose message is
//! the library's own (for example `cut.wav: header is truncated: …`).

mod file_reader;
mod live;
mod view;

use std::str::FromStr;

use serde::Deserialize;
use wasm_bindgen::prelude::*;
use wasm_bindgen::JsCast;

use crate::analysis::{analyze, Settings};
use crate::io::{ColumnSelector, InputOptions, RawFormat, ReadError};

pub use self::file_reader::{FileSliceReader, SLICE_BYTES};
pub use self::live::LiveBinding;
pub use self::view::{draw_ensemble, ReportView};

/// Runs when the module is instantiated: panics become readable JavaScript errors (with the
/// panic message and location) instead of a bare `RuntimeError: unreachable`.
#[wasm_bindgen(start)]
pub fn start() {
    console_error_panic_hook::set_once();
}

/// Analyses a `File` and returns the report as `{summary, arrays}`: `summary` is the JSON text
/// of the [`Report`](crate::report::Report) (`serde_json::to_string`, the serializer of the
/// command line's `--json`) with its long arrays emptied, and `arrays` maps each dotted path of
/// [`Report::ARRAY_PATHS`](crate::report::Report::ARRAY_PATHS) to a `Float64Array` in the
/// JavaScript heap (not a view of wasm memory), so the worker can transfer it to the page. The
/// arithmetic is wasm's, not a native build's: on the demo files PSD values agreed with the
/// native command line to a few ulp and ACF values to 1.4e-12 relative; moments were identical.
///
/// Runs in a Web Worker (it reads the file synchronously with `FileReaderSync`, in 4 MiB slices,
/// so memory stays bounded for files of several GB). `on_progress(bytes_read, total_bytes)` is
/// called at most once per 4 MiB read.
///
/// `input_json` is an object with any of `channel` (number), `column` and `time_column` (a
/// header name, or a 0-based index as a number or digits), `sample_rate_hz` (number), `raw`
/// (`i16le` … `f64be`) and `channels` (number); empty text, `null` and empty strings mean "not
/// given". `settings_json` is [`Settings`] as JSON; missing fields take their defaults.
///
/// # Errors
/// The library's message for unreadable options, settings or input, or a failed analysis.
#[wasm_bindgen]
pub fn analyze_file(
    file: web_sys::File,
    input_json: &str,
    settings_json: &str,
    on_progress: &js_sys::Function,
) -> Result<js_sys::Object, JsValue> {
    let options = parse_input(input_json).map_err(|e| JsError::new(&e))?;
    let settings = parse_settings(settings_json).map_err(|e| JsError::new(&e))?;
    let name = file.name();
    let reader = FileSliceReader::new(file.into(), Some(on_progress.clone()))
        .map_err(|e| JsError::new(&format!("{name}: {e}")))?;
    let mut source = crate::io::open(reader, &name, &options).map_err(read_error)?;
    let mut report = analyze(&mut *source, &settings).map_err(|e| JsError::new(&e.to_string()))?;
    let arrays = report.take_arrays();
    let summary = serde_json::to_string(&report)
        .map_err(|e| JsError::new(&format!("{name}: the report could not be written: {e}")))?;
    let typed = js_sys::Object::new();
    for (path, values) in &arrays.arrays {
        set(&typed, path, &js_sys::Float64Array::from(values.as_slice()))?;
    }
    let out = js_sys::Object::new();
    set(&out, "summary", &JsValue::from_str(&summary))?;
    set(&out, "arrays", &typed)?;
    Ok(out)
}

/// A reader's error as a JavaScript `Error` with its message and, where the page can help by
/// asking the user, a `kind`: `"layout"` (no header, and not a known other file type: raw
/// layout needed), `"sample_rate"` (text
/// without a time column) or `"channel"` (no such channel).
fn read_error(error: ReadError) -> JsValue {
    let kind = match error {
        ReadError::UnknownFormat { .. } if error.could_be_raw() => Some("layout"),
        ReadError::MissingSampleRate { .. } => Some("sample_rate"),
        ReadError::ChannelOutOfRange { .. } => Some("channel"),
        _ => None,
    };
    let value: JsValue = JsError::new(&error.to_string()).into();
    if let Some(kind) = kind {
        // A failure here only loses the hint; the message is still there.
        let _ = js_sys::Reflect::set(&value, &JsValue::from_str("kind"), &JsValue::from_str(kind));
    }
    value
}

/// Analyses K `File`s as realisations of one process (ergodicity) and returns the ensemble
/// report as JSON text (`serde_json::to_string` of
/// [`EnsembleReport`](crate::ensemble_analysis::EnsembleReport), the command line's
/// `ensemble --json`). The files are read in lockstep, each in 4 MiB slices;
/// `on_progress(bytes_read, total_bytes)` counts all of them.
///
/// `input_json` as for [`analyze_file`] (the same layout for every file); `settings_json` is
/// the file settings, of which the calibration and the stationarity settings are used.
///
/// # Errors
/// Fewer than two files, unreadable input (the message names the file), mismatched sample
/// rates, or a failed analysis.
#[wasm_bindgen]
pub fn analyze_ensemble_files(
    files: js_sys::Array,
    input_json: &str,
    settings_json: &str,
    on_progress: &js_sys::Function,
) -> Result<String, JsValue> {
    let options = parse_input(input_json).map_err(|e| JsError::new(&e))?;
    let settings = parse_settings(settings_json).map_err(|e| JsError::new(&e))?;
    let ensemble_settings = crate::ensemble_analysis::EnsembleSettings {
        calibration: settings.calibration.clone(),
        stationarity: settings.stationarity,
        lags_len: None,
    };
    let files: Vec<web_sys::File> = files
        .iter()
        .map(|f| f.dyn_into::<web_sys::File>())
        .collect::<Result<_, _>>()
        .map_err(|_| JsError::new("the ensemble must be a list of files"))?;
    let total: f64 = files.iter().map(|f| f.size()).sum();
    let progress = std::rc::Rc::new(std::cell::Cell::new(0.0f64));
    let mut sources = Vec::with_capacity(files.len());
    // The progress closures live until the analysis is over, then are dropped with this Vec.
    let mut closures = Vec::with_capacity(files.len());
    for file in files {
        let name = file.name();
        let counted = progress.clone();
        let callback = on_progress.clone();
        let previous = std::rc::Rc::new(std::cell::Cell::new(0.0f64));
        // Each file reports its own bytes; the page sees the sum over all files.
        let forward = Closure::<dyn Fn(f64, f64)>::new(move |bytes: f64, _total: f64| {
            counted.set(counted.get() + bytes - previous.get());
            previous.set(bytes);
            let _ = callback.call2(
                &JsValue::NULL,
                &JsValue::from_f64(counted.get()),
                &JsValue::from_f64(total),
            );
        });
        let function: js_sys::Function =
            forward.as_ref().unchecked_ref::<js_sys::Function>().clone();
        closures.push(forward);
        let reader = FileSliceReader::new(file.into(), Some(function))
            .map_err(|e| JsError::new(&format!("{name}: {e}")))?;
        sources.push(crate::io::open(reader, &name, &options).map_err(read_error)?);
    }
    let mut refs: Vec<&mut dyn crate::io::SampleSource> = sources
        .iter_mut()
        .map(|s| &mut **s as &mut dyn crate::io::SampleSource)
        .collect();
    let report = crate::ensemble_analysis::analyze_ensemble(&mut refs, &ensemble_settings)
        .map_err(|e| JsError::new(&e.to_string()))?;
    drop(refs);
    drop(sources);
    drop(closures);
    Ok(serde_json::to_string(&report)
        .map_err(|e| JsError::new(&format!("the ensemble report could not be written: {e}")))?)
}

/// `target[key] = value`, as a readable error if the engine refuses.
fn set(target: &js_sys::Object, key: &str, value: &JsValue) -> Result<(), JsError> {
    js_sys::Reflect::set(target, &JsValue::from_str(key), value)
        .map(drop)
        .map_err(|_| JsError::new(&format!("could not build the result object ({key})")))
}

/// The page's input options: [`InputOptions`] with enums as strings.
#[derive(Debug, Default, Deserialize)]
#[serde(default, deny_unknown_fields)]
struct InputJson {
    channel: Option<usize>,
    column: Option<ColumnJson>,
    time_column: Option<ColumnJson>,
    sample_rate_hz: Option<f64>,
    raw: Option<String>,
    channels: Option<usize>,
}

/// A column as the page sends it: an index or a name (digits in a string are an index, as on
/// the command line).
#[derive(Debug, Deserialize)]
#[serde(untagged)]
enum ColumnJson {
    Index(usize),
    Name(String),
}

impl ColumnJson {
    fn into_selector(self) -> Result<Option<ColumnSelector>, String> {
        match self {
            ColumnJson::Index(index) => Ok(Some(ColumnSelector::Index(index))),
            ColumnJson::Name(name) if name.trim().is_empty() => Ok(None),
            ColumnJson::Name(name) => ColumnSelector::from_str(&name)
                .map(Some)
                .map_err(|e| e.to_string()),
        }
    }
}

/// Parses the page's input options.
fn parse_input(text: &str) -> Result<InputOptions, String> {
    let json: InputJson = if text.trim().is_empty() {
        InputJson::default()
    } else {
        serde_json::from_str(text).map_err(|e| format!("input options: {e}"))?
    };
    let column = json.column.map(ColumnJson::into_selector).transpose()?;
    let time_column = json
        .time_column
        .map(ColumnJson::into_selector)
        .transpose()?;
    let raw = match json.raw.as_deref().map(str::trim) {
        None | Some("") => None,
        Some(name) => Some(RawFormat::from_str(name).map_err(|e| e.to_string())?),
    };
    Ok(InputOptions {
        channel: json.channel,
        column: column.flatten(),
        time_column: time_column.flatten(),
        sample_rate_hz: json.sample_rate_hz,
        raw,
        channels: json.channels,
    })
}

/// Parses the page's settings; empty text means the defaults.
fn parse_settings(text: &str) -> Result<Settings, String> {
    if text.trim().is_empty() {
        return Ok(Settings::default());
    }
    serde_json::from_str(text).map_err(|e| format!("settings: {e}"))
}

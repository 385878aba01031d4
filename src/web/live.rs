//! Live listening in the analysis worker: a thin wrapper over [`crate::listen::LiveSession`].

use std::str::FromStr;

use serde::Deserialize;
use wasm_bindgen::prelude::*;

use crate::io::{SourceInfo, WavEncoding};
use crate::listen::{LiveSession, LiveSettings};

/// What the page knows of the capture.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct CaptureJson {
    sample_rate_hz: f64,
    channels: usize,
    channel: usize,
}

/// A listening session in the worker: blocks in, frames out.
#[wasm_bindgen(js_name = LiveSession)]
pub struct LiveBinding {
    session: LiveSession,
}

#[wasm_bindgen(js_class = LiveSession)]
impl LiveBinding {
    /// `source_json`: `{"sample_rate_hz", "channels", "channel"}` of the capture;
    /// `settings_json`: the analysis settings (as for files); `live_json`: `LiveSettings`
    /// (`{"averaging": {"mode": "linear", "segments": 32}, "recent_s": 10, "record_s": 600}`).
    ///
    /// # Errors
    /// The first setting that cannot be used, with the library's message.
    #[wasm_bindgen(constructor)]
    pub fn new(
        source_json: &str,
        settings_json: &str,
        live_json: &str,
    ) -> Result<LiveBinding, JsError> {
        let capture: CaptureJson = serde_json::from_str(source_json)
            .map_err(|e| JsError::new(&format!("capture: {e}")))?;
        let settings = super::parse_settings(settings_json).map_err(|e| JsError::new(&e))?;
        let live: LiveSettings = if live_json.trim().is_empty() {
            LiveSettings::default()
        } else {
            serde_json::from_str(live_json)
                .map_err(|e| JsError::new(&format!("live settings: {e}")))?
        };
        let source = SourceInfo {
            name: "live input".to_string(),
            format: "live capture (32-bit float)".to_string(),
            channels: capture.channels,
            channel: capture.channel,
            channel_name: None,
            channel_names: Vec::new(),
            sample_rate_hz: capture.sample_rate_hz,
            bits_per_sample: Some(32),
            full_scale: true,
            clip_level_fs: Some(1.0),
            declared_frames: None,
        };
        let session = LiveSession::new(&source, &settings, &live)
            .map_err(|e| JsError::new(&e.to_string()))?;
        Ok(LiveBinding { session })
    }

    /// Feeds one block from the capture worklet (`frames` frames of `channels` channels, one
    /// channel after another); `dropped_frames` is the worklet's running count of lost frames.
    ///
    /// # Errors
    /// A block of the wrong shape or a non-finite sample.
    pub fn push(
        &mut self,
        block: &[f32],
        frames: usize,
        channels: usize,
        dropped_frames: f64,
    ) -> Result<(), JsError> {
        // Counts arrive as JavaScript numbers: whole and far below 2^53.
        let dropped = dropped_frames.max(0.0) as u64;
        self.session
            .push_block(block, frames, channels, dropped)
            .map_err(|e| JsError::new(&e.to_string()))
    }

    /// The next frame: `{summary, arrays, live}` as for files (summary: the report's JSON
    /// without its long arrays; arrays: `Float64Array`s by path, plus `live.peak_density`;
    /// live: the levels, bands, tone, floor and counts as JSON), or `undefined` before one whole
    /// segment.
    ///
    /// # Errors
    /// Only if the result cannot be built.
    pub fn frame(&mut self) -> Result<JsValue, JsError> {
        let Some((mut report, live)) = self.session.frame() else {
            return Ok(JsValue::UNDEFINED);
        };
        let arrays = report.take_arrays();
        let summary = serde_json::to_string(&report)
            .map_err(|e| JsError::new(&format!("the live report could not be written: {e}")))?;
        let extras = serde_json::to_string(&live)
            .map_err(|e| JsError::new(&format!("the live levels could not be written: {e}")))?;
        let typed = js_sys::Object::new();
        for (path, values) in &arrays.arrays {
            super::set(&typed, path, &js_sys::Float64Array::from(values.as_slice()))?;
        }
        super::set(
            &typed,
            "live.peak_density",
            &js_sys::Float64Array::from(live.peak_density.as_slice()),
        )?;
        let out = js_sys::Object::new();
        super::set(&out, "summary", &JsValue::from_str(&summary))?;
        super::set(&out, "arrays", &typed)?;
        super::set(&out, "live", &JsValue::from_str(&extras))?;
        Ok(out.into())
    }

    /// Starts the averages, peak hold and levels again.
    pub fn restart(&mut self) {
        self.session.restart();
    }

    /// Measures a calibrator's tone near `frequency_hz` and returns
    /// `{"frequency_hz", "rms", "factor"}` as JSON (factor: `reference_rms` / measured RMS).
    ///
    /// # Errors
    /// No clear tone there yet.
    pub fn calibrator_tone(
        &self,
        frequency_hz: f64,
        reference_rms: f64,
    ) -> Result<String, JsError> {
        let reading = self
            .session
            .calibrator(frequency_hz, reference_rms)
            .map_err(|e| JsError::new(&e.to_string()))?;
        serde_json::to_string(&reading).map_err(|e| JsError::new(&e.to_string()))
    }

    /// The last `seconds` of the analysed channel as a WAV file (`format`: `float32` or
    /// `pcm24`), in full-scale units as captured (the calibration goes in the report beside it).
    ///
    /// # Errors
    /// An unknown format, nothing captured yet, or a failed write.
    pub fn recording(&self, seconds: f64, format: &str) -> Result<js_sys::Uint8Array, JsError> {
        let encoding = WavEncoding::from_str(format).map_err(|e| JsError::new(&e.to_string()))?;
        let bytes = self
            .session
            .recording(seconds, encoding)
            .map_err(|e| JsError::new(&e.to_string()))?;
        Ok(js_sys::Uint8Array::from(bytes.as_slice()))
    }

    /// The current report (whole, the command line's JSON schema) with the live levels under
    /// `live`, for saving beside a recording.
    ///
    /// # Errors
    /// Before one whole segment, or if writing fails.
    pub fn report_json(&self) -> Result<String, JsError> {
        let (report, live) = self
            .session
            .peek()
            .ok_or_else(|| JsError::new("nothing to report yet: listen for a moment longer"))?;
        let mut value = serde_json::to_value(&report).map_err(|e| JsError::new(&e.to_string()))?;
        let live = serde_json::to_value(&live).map_err(|e| JsError::new(&e.to_string()))?;
        if let Some(object) = value.as_object_mut() {
            object.insert("live".to_string(), live);
        }
        serde_json::to_string_pretty(&value).map_err(|e| JsError::new(&e.to_string()))
    }
}

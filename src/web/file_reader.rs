//! `Read + Seek` over a browser `File` (or any `Blob`), in slices, so memory stays bounded for
//! files of several GB. Uses `FileReaderSync`, which exists only in Web Workers.

use std::io::{self, Read, Seek, SeekFrom};

use js_sys::{Function, Uint8Array};
use wasm_bindgen::{JsCast, JsValue};
use web_sys::{Blob, FileReaderSync};

/// Bytes read from the file per slice (and the least progress between two progress calls):
/// 4 MiB. Slices of 1 to 16 MiB read a 200 MiB file at about the same speed (TOOLCHAIN.md).
pub const SLICE_BYTES: u64 = 4 * 1024 * 1024;

/// Reads a `Blob` in slices of [`SLICE_BYTES`] into one reused buffer.
///
/// After loading a slice that reaches further into the file than any before, it calls
/// `on_progress(bytes_read, total_bytes)` (two numbers), so at most once per slice.
pub struct FileSliceReader {
    blob: Blob,
    reader: FileReaderSync,
    len: u64,
    pos: u64,
    slice: Vec<u8>,
    slice_start: u64,
    furthest: u64,
    on_progress: Option<Function>,
}

// SAFETY: `noisesonde::io::open` asks for `Send + Sync` because native readers may be moved to
// another thread. Without the `atomics` target feature a wasm32 module has exactly one thread,
// so the JavaScript handles in here can never be reached from another one. With `atomics`
// these impls do not exist and the code does not compile, rather than being unsound.
#[cfg(not(target_feature = "atomics"))]
unsafe impl Send for FileSliceReader {}
// SAFETY: as for `Send` above.
#[cfg(not(target_feature = "atomics"))]
unsafe impl Sync for FileSliceReader {}

impl FileSliceReader {
    /// A reader over `blob` from its start.
    ///
    /// # Errors
    /// When `FileReaderSync` cannot be created: outside a Web Worker.
    pub fn new(blob: Blob, on_progress: Option<Function>) -> io::Result<Self> {
        let reader = FileReaderSync::new().map_err(|e| {
            js_io_error(
                "FileReaderSync is not available (files are read in a Web Worker only)",
                &e,
            )
        })?;
        // Blob sizes are whole numbers of bytes below 2^53, so the conversion is exact.
        let len = blob.size().max(0.0) as u64;
        Ok(Self {
            blob,
            reader,
            len,
            pos: 0,
            slice: Vec::new(),
            slice_start: 0,
            furthest: 0,
            on_progress,
        })
    }

    /// Loads the slice that starts at byte `start`.
    fn load(&mut self, start: u64) -> io::Result<()> {
        let end = start.saturating_add(SLICE_BYTES).min(self.len);
        // Offsets below 2^53 are exact in f64.
        let part = self
            .blob
            .slice_with_f64_and_f64(start as f64, end as f64)
            .map_err(|e| js_io_error("cannot cut a slice of the file", &e))?;
        let buffer = self
            .reader
            .read_as_array_buffer(&part)
            .map_err(|e| js_io_error("cannot read the file", &e))?;
        let bytes = Uint8Array::new(&buffer);
        self.slice.resize(bytes.length() as usize, 0);
        bytes.copy_to(&mut self.slice);
        self.slice_start = start;
        let reached = start + self.slice.len() as u64;
        if reached > self.furthest {
            self.furthest = reached;
            if let Some(callback) = &self.on_progress {
                callback
                    .call2(
                        &JsValue::NULL,
                        &JsValue::from_f64(reached as f64),
                        &JsValue::from_f64(self.len as f64),
                    )
                    .map_err(|e| js_io_error("the progress callback failed", &e))?;
            }
        }
        Ok(())
    }
}

impl Read for FileSliceReader {
    fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
        if buf.is_empty() || self.pos >= self.len {
            return Ok(0);
        }
        let slice_end = self.slice_start + self.slice.len() as u64;
        if self.pos < self.slice_start || self.pos >= slice_end {
            self.load(self.pos)?;
        }
        // pos − slice_start < slice.len() ≤ SLICE_BYTES, so it fits in usize.
        let offset = (self.pos - self.slice_start) as usize;
        let available = self.slice.get(offset..).unwrap_or_default();
        // An empty slice here means the file shrank since it was opened: end of input.
        let n = available.len().min(buf.len());
        if let (Some(dst), Some(src)) = (buf.get_mut(..n), available.get(..n)) {
            dst.copy_from_slice(src);
        }
        self.pos += n as u64;
        Ok(n)
    }
}

impl Seek for FileSliceReader {
    fn seek(&mut self, from: SeekFrom) -> io::Result<u64> {
        let target = match from {
            SeekFrom::Start(offset) => i128::from(offset),
            SeekFrom::End(delta) => i128::from(self.len) + i128::from(delta),
            SeekFrom::Current(delta) => i128::from(self.pos) + i128::from(delta),
        };
        if target < 0 {
            return Err(io::Error::new(
                io::ErrorKind::InvalidInput,
                format!("seek to byte {target}, before the start of the file"),
            ));
        }
        self.pos = u64::try_from(target).unwrap_or(u64::MAX);
        Ok(self.pos)
    }
}

/// An I/O error carrying `context` and the JavaScript error's message.
fn js_io_error(context: &str, error: &JsValue) -> io::Error {
    io::Error::other(format!("{context}: {}", js_error_text(error)))
}

/// The message of a JavaScript error value (an `Error`, a `DOMException`, a string, …).
pub(crate) fn js_error_text(error: &JsValue) -> String {
    if let Some(e) = error.dyn_ref::<js_sys::Error>() {
        String::from(e.message())
    } else if let Some(text) = error.as_string() {
        text
    } else {
        format!("{error:?}")
    }
}

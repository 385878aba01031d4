// @ts-check
// The analysis worker: owns a wasm instance, reads the dropped File in slices (FileReaderSync is
// only available in workers) and streams it through the same Rust pipeline as the command line.
// The page compiles the wasm once and sends the module, so this file needs no network access.
// A second instance of this worker serves live listening: blocks arrive from the capture
// worklet on a MessagePort and go into the same pipeline (LiveSession); frames go to the page.
import init, { analyze_file, analyze_ensemble_files, LiveSession } from './pkg/noisesonde.js';
import { MSG, FRAME_MS } from './protocol.js';

/** @type {LiveSession | null} */
let live = null;
/** When the next frame is due (ms, performance.now()); frames follow a fixed clock so that
 * blocks arriving every ~21 ms give one frame per FRAME_MS on average, not one per third block. */
let nextFrame = 0;
/** Time spent analysing blocks and building frames since listening started, and when it did:
 * their ratio is the share of one core the live analysis takes. */
let busyMs = 0;
let startedMs = 0;

/** Arrays of a frame or result live in the JavaScript heap: transfer them, never copy. */
function buffersOf(/** @type {Record<string, Float64Array>} */ arrays) {
  return Object.values(arrays).map((a) => a.buffer);
}

function sendFrame() {
  if (!live) return;
  try {
    const frame = live.frame();
    if (!frame) return; // not one whole segment yet
    const { summary, arrays, live: extras } = frame;
    const load = { busy_ms: busyMs, wall_ms: performance.now() - startedMs };
    self.postMessage({ type: MSG.LIVE_FRAME, summary, arrays, live: extras, load }, buffersOf(arrays));
  } catch (err) {
    self.postMessage({ type: MSG.ERROR, id: -2, message: err instanceof Error ? err.message : String(err) });
  }
}

/** A block from the capture worklet: analyse it, hand its buffer back for reuse. */
function onBlock(/** @type {MessagePort} */ port, /** @type {MessageEvent} */ event) {
  const msg = event.data;
  if (msg.type !== 'block') return;
  const started = performance.now();
  if (live) {
    try {
      live.push(msg.block, msg.frames, msg.channels, msg.droppedFrames);
    } catch (err) {
      self.postMessage({ type: MSG.ERROR, id: -2, message: err instanceof Error ? err.message : String(err) });
    }
  }
  port.postMessage({ type: 'return', block: msg.block }, [msg.block.buffer]);
  if (started >= nextFrame) {
    nextFrame = Math.max(nextFrame + FRAME_MS, started);
    sendFrame();
  }
  busyMs += performance.now() - started;
}

/** @param {any} msg */
async function onLive(msg) {
  await ready;
  if (msg.type === MSG.LIVE_START) {
    live?.free();
    live = null;
    live = new LiveSession(JSON.stringify(msg.source), JSON.stringify(msg.settings), JSON.stringify(msg.live));
    busyMs = 0;
    startedMs = performance.now();
    nextFrame = startedMs;
    if (msg.port) {
      const port = /** @type {MessagePort} */ (msg.port);
      port.onmessage = (event) => onBlock(port, event);
    }
  } else if (msg.type === MSG.LIVE_RESTART) {
    live?.restart();
  } else if (msg.type === MSG.LIVE_TONE) {
    if (!live) throw new Error('not listening');
    const tone = live.calibrator_tone(msg.frequency_hz, msg.reference_rms);
    self.postMessage({ type: MSG.LIVE_TONE_RESULT, id: msg.id, tone });
  } else if (msg.type === MSG.LIVE_RECORD) {
    if (!live) throw new Error('not listening');
    const wav = live.recording(msg.seconds, msg.format);
    const report = live.report_json();
    self.postMessage({ type: MSG.LIVE_RECORDING, id: msg.id, wav, report }, [wav.buffer]);
  }
}

/** @type {Promise<unknown> | null} */
let ready = null;

self.onmessage = async (event) => {
  const msg = event.data;
  if (msg.type === MSG.INIT) {
    ready = init({ module_or_path: msg.module });
    ready.then(
      () => self.postMessage({ type: MSG.READY }),
      (err) => self.postMessage({ type: MSG.ERROR, id: -1, message: `could not start the analysis engine: ${err}` }),
    );
    return;
  }
  if (typeof msg.type === 'string' && msg.type.startsWith('live-')) {
    try {
      if (!ready) throw new Error('the analysis engine was not started');
      await onLive(msg);
    } catch (err) {
      const message = err instanceof Error ? err.message : String(err);
      self.postMessage({ type: MSG.ERROR, id: msg.id ?? -2, message });
    }
    return;
  }
  if (msg.type === MSG.ANALYZE_ENSEMBLE) {
    try {
      if (!ready) throw new Error('the analysis engine was not started');
      await ready;
      const reportJson = analyze_ensemble_files(
        msg.files,
        JSON.stringify(msg.input),
        JSON.stringify(msg.settings),
        (/** @type {number} */ bytes, /** @type {number} */ total) =>
          self.postMessage({ type: MSG.PROGRESS, id: msg.id, bytes, total }),
      );
      self.postMessage({ type: MSG.ENSEMBLE_RESULT, id: msg.id, reportJson });
    } catch (err) {
      self.postMessage({ type: MSG.ERROR, id: msg.id, message: err instanceof Error ? err.message : String(err) });
    }
    return;
  }
  if (msg.type !== MSG.ANALYZE) return;
  try {
    if (!ready) throw new Error('the analysis engine was not started');
    await ready;
    const { summary, arrays } = analyze_file(
      msg.file,
      JSON.stringify(msg.input),
      JSON.stringify(msg.settings),
      (/** @type {number} */ bytes, /** @type {number} */ total) =>
        self.postMessage({ type: MSG.PROGRESS, id: msg.id, bytes, total }),
    );
    self.postMessage({ type: MSG.RESULT, id: msg.id, summary, arrays }, buffersOf(arrays));
  } catch (err) {
    const message = err instanceof Error ? err.message : String(err);
    // `kind` (set by the Rust side) tells the page which question to ask: 'layout',
    // 'sample_rate' or 'channel'.
    const kind = err instanceof Error && 'kind' in err ? String(err.kind) : undefined;
    self.postMessage({ type: MSG.ERROR, id: msg.id, message, kind });
  }
};

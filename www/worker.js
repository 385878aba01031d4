// @ts-check
// The analysis worker: owns a wasm instance, reads the dropped File in slices (FileReaderSync is
// only available in workers) and streams it through the same Rust pipeline as the command line.
// The page compiles the wasm once and sends the module, so this file needs no network access.
import init, { analyze_file } from './pkg/noisesonde.js';
import { MSG } from './protocol.js';

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
    // The arrays live in the JavaScript heap (not wasm memory): transfer them, do not copy.
    const buffers = Object.values(arrays).map((/** @type {Float64Array} */ a) => a.buffer);
    self.postMessage({ type: MSG.RESULT, id: msg.id, summary, arrays }, buffers);
  } catch (err) {
    const message = err instanceof Error ? err.message : String(err);
    // `kind` (set by the Rust side) tells the page which question to ask: 'layout',
    // 'sample_rate' or 'channel'.
    const kind = err instanceof Error && 'kind' in err ? String(err.kind) : undefined;
    self.postMessage({ type: MSG.ERROR, id: msg.id, message, kind });
  }
};

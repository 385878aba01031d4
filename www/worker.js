// @ts-check
// The analysis worker: owns a wasm instance, reads the dropped File in slices (FileReaderSync is
// only available in workers) and streams it through the same Rust pipeline as the command line.
import init, { analyze_file } from './pkg/noisesonde.js';
import { MSG } from './protocol.js';

const ready = init();

self.onmessage = async (event) => {
  const msg = event.data;
  if (msg.type !== MSG.ANALYZE) return;
  try {
    await ready;
    const reportJson = analyze_file(
      msg.file,
      JSON.stringify(msg.input),
      JSON.stringify(msg.settings),
      (/** @type {number} */ bytes, /** @type {number} */ total) =>
        self.postMessage({ type: MSG.PROGRESS, id: msg.id, bytes, total }),
    );
    self.postMessage({ type: MSG.RESULT, id: msg.id, reportJson });
  } catch (err) {
    const message = err instanceof Error ? err.message : String(err);
    self.postMessage({ type: MSG.ERROR, id: msg.id, message });
  }
};

ready.then(
  () => self.postMessage({ type: MSG.READY }),
  (err) => self.postMessage({ type: MSG.ERROR, id: -1, message: `could not start the analysis engine: ${err}` }),
);

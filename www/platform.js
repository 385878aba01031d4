// @ts-check
// What differs between the served page and the single-file build: where the wasm bytes and the
// demo recording come from, and how the worker starts. `cargo xtask dist` replaces this file in
// dist/noisesonde.html with one that reads both from the page itself and starts a blob worker.

/** The wasm module's bytes, fetched from beside the glue (same origin). */
export async function wasmBytes() {
  const response = await fetch(new URL('./pkg/noisesonde_bg.wasm', import.meta.url));
  if (!response.ok) throw new Error(`the analysis engine could not be loaded (HTTP ${response.status})`);
  return response.arrayBuffer();
}

/** The analysis worker (a module worker beside this page). */
export function createWorker() {
  return new Worker(new URL('./worker.js', import.meta.url), { type: 'module' });
}

/** The demo recording, served beside the page, as a File. */
export async function demoFile() {
  const name = 'preamp-shorted-input-24bit-48000hz-mono.wav';
  const response = await fetch(new URL(`./demo/${name}`, import.meta.url));
  if (!response.ok) throw new Error(`HTTP ${response.status}`);
  return new File([await response.blob()], name, { type: 'audio/wav' });
}

/** The capture worklet's script (same origin), for live listening. */
export function captureWorkletUrl() {
  return new URL('./capture-worklet.js', import.meta.url);
}

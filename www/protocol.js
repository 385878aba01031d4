// @ts-check
/**
 * Messages between the page (main thread) and the analysis worker.
 * The worker owns a wasm instance and streams the File; the page draws.
 *
 * page → worker: { type: 'init', module }   (the compiled WebAssembly.Module, compiled once)
 *                { type: 'analyze', id, file, input, settings }
 * worker → page: { type: 'ready' }
 *                { type: 'progress', id, bytes, total }
 *                { type: 'result', id, summary, arrays }   (summary: the report's JSON without
 *                  its long arrays; arrays: { 'psd.density': Float64Array, … }, transferred)
 *                { type: 'error', id, message, kind }   (kind: 'layout' | 'sample_rate' |
 *                  'channel' when the page can ask the user; otherwise undefined)
 * Cancelling terminates the worker; the page starts a fresh one. Replies whose id is not the
 * newest request are dropped.
 */
export const MSG = Object.freeze({
  INIT: 'init',
  ANALYZE: 'analyze',
  READY: 'ready',
  PROGRESS: 'progress',
  RESULT: 'result',
  ERROR: 'error',
});

// @ts-check
/**
 * Messages between the page (main thread) and the analysis worker.
 * The worker owns a wasm instance and streams the File; the page draws.
 *
 * page → worker: { type: 'init', module }   (the compiled WebAssembly.Module, compiled once)
 *                { type: 'analyze', id, file, input, settings }
 *                { type: 'analyze-ensemble', id, files, input, settings }   (K ≥ 2 records)
 * worker → page: { type: 'ready' }
 *                { type: 'progress', id, bytes, total }
 *                { type: 'ensemble-result', id, reportJson }   (the CLI's `ensemble --json`)
 *                { type: 'result', id, summary, arrays }   (summary: the report's JSON without
 *                  its long arrays; arrays: { 'psd.density': Float64Array, … }, transferred)
 *                { type: 'error', id, message, kind }   (kind: 'layout' | 'sample_rate' |
 *                  'channel' when the page can ask the user; otherwise undefined)
 * Cancelling terminates the worker; the page starts a fresh one. Replies whose id is not the
 * newest request are dropped.
 *
 * Listening live uses a second worker of the same code:
 * page → worker: { type: 'live-start', port, source, settings, live }
 *                  (port: the MessagePort the capture worklet sends blocks to, only in the
 *                  first; later ones replace the session and keep the port; source:
 *                  { sample_rate_hz, channels, channel }; live: the live settings)
 *                { type: 'live-tone', id, frequency_hz, reference_rms }
 *                { type: 'live-record', id, seconds, format }     ('f32' or 's24')
 *                { type: 'live-restart' }                        (averages start again)
 * worker → page: { type: 'live-frame', summary, arrays, live, load }   (every FRAME_MS while
 *                  blocks arrive; summary/arrays as for 'result'; live: levels, bands, tone,
 *                  floor, counts; load: { busy_ms, wall_ms } of the worker since the start)
 *                { type: 'live-tone-result', id, tone }  { type: 'live-recording', id, wav, report }
 *                { type: 'error', id, message }
 * The worklet → worker port carries { type: 'block', block, frames, channels, droppedFrames }
 * (block transferred) and the worker returns each block with { type: 'return', block }.
 */
export const MSG = Object.freeze({
  INIT: 'init',
  ANALYZE: 'analyze',
  ANALYZE_ENSEMBLE: 'analyze-ensemble',
  ENSEMBLE_RESULT: 'ensemble-result',
  READY: 'ready',
  PROGRESS: 'progress',
  RESULT: 'result',
  ERROR: 'error',
  LIVE_START: 'live-start',
  LIVE_TONE: 'live-tone',
  LIVE_RECORD: 'live-record',
  LIVE_RESTART: 'live-restart',
  LIVE_FRAME: 'live-frame',
  LIVE_TONE_RESULT: 'live-tone-result',
  LIVE_RECORDING: 'live-recording',
});

/** Time between two live frames, ms: 25 frames per second while blocks arrive (the target is
 * 20 or more; blocks arrive every ~21 ms, so frames land within a block of their time). */
export const FRAME_MS = 40;

/**
 * Puts the transferred arrays back into the parsed summary at their dotted paths
 * ('psd.density', 'stationarity.segments.mean', …). Paths whose parent the report lacks (no
 * stationarity section) are skipped; extra arrays (the live peak hold) stay in `arrays` only.
 * @param {any} report @param {Record<string, Float64Array>} arrays
 */
export function rejoinArrays(report, arrays) {
  for (const [path, values] of Object.entries(arrays)) {
    const keys = path.split('.');
    const last = keys.pop();
    const parent = keys.reduce((node, key) => (node && typeof node === 'object' ? node[key] : undefined), report);
    if (parent && typeof parent === 'object' && last && last in parent) parent[last] = values;
  }
  return report;
}

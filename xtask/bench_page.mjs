// The page's half of `cargo xtask bench`: the Rust pipeline compiled to wasm, run by the page in
// headless Chromium, measured against the native command line on the same input.
//
// usage (normally run by `cargo xtask bench`, which builds the CLI and the page and serves it):
//   SITE_URL=http://127.0.0.1:PORT/ CHROMIUM=/usr/bin/chromium NOISESONDE_BIN=target/release/noisesonde \
//   OUT=target/bench-page.md [SITE_DIR=target/site] node xtask/bench_page.mjs
// Optional, for a quick trial: BENCH_PAGE_REPEATS (default 3), BENCH_PAGE_WAV_BYTES (default 1 GiB).
//
// What it measures (targets are printed beside the results as met/not met, never asserted):
// 1. wasm vs native on the same raw f64le files (1e6 and 1e7 samples of deterministic noise plus
//    a tone, in target/bench-data/): the CLI's whole-process wall time and the page's time from
//    the file input's `change` event until the report is on the page (#progress hidden and
//    #source-line naming the file), medians of interleaved runs; a file of 8192 samples is the
//    no-op baseline (fixed cost: messages, report JSON, drawing).
// 2. the demo's first plot: navigation start until the demo's report is on the page, in fresh
//    browser profiles (cold) and in new pages of a profile that loaded the page before (warm).
// 3. the wasm module's size, raw and gzipped (node's zlib, level 9).
// 4. a 1 GiB 16-bit mono 48 kHz WAV analysed by the page: throughput, progress updates, and the
//    resident memory (VmRSS) of Chromium's renderer processes, polled every 100 ms.
//
// How the page is observed: an init script (added to the browser context, so it runs before the
// page's own scripts) records, with the page's own clock (performance.now(), from navigation
// start), the file input's `change` events, every state of #source-line / #progress /
// #progress-text / #error-box (MutationObserver), the animation frame after a report appears,
// messages to and from the analysis worker (by wrapping the Worker constructor), and
// WebAssembly.compile. To split file handling from computation, a small probe worker that only
// reads the chosen File the way the page's worker does is served at a same-origin path through
// playwright's request routing (never from the site's folder). Nothing in the page is changed.
import { createRequire } from 'node:module';
import { execFileSync, spawnSync } from 'node:child_process';
import {
  closeSync, existsSync, mkdirSync, openSync, readdirSync, readFileSync, renameSync, rmSync,
  statSync, writeFileSync, writeSync,
} from 'node:fs';
import { availableParallelism, endianness } from 'node:os';
import { basename, dirname, join, relative, resolve } from 'node:path';
import { performance } from 'node:perf_hooks';
import { fileURLToPath } from 'node:url';
import { gzipSync, constants as zlibConstants } from 'node:zlib';

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '..');
// playwright-core is installed for the browser tests; resolve it from there (ES modules ignore
// NODE_PATH, so a require anchored in that folder is the reliable way).
const requireFromTests = createRequire(join(ROOT, 'tests', 'browser', 'package.json'));
const { chromium } = requireFromTests('playwright-core');
const PLAYWRIGHT_VERSION = requireFromTests('playwright-core/package.json').version;

const SITE_URL = process.env.SITE_URL;
const CHROMIUM = process.env.CHROMIUM ?? '/usr/bin/chromium';
const CLI = resolve(ROOT, process.env.NOISESONDE_BIN ?? 'target/release/noisesonde');
const OUT = resolve(ROOT, process.env.OUT ?? 'target/bench-page.md');
const SITE_DIR = resolve(ROOT, process.env.SITE_DIR ?? 'target/site');
const REPEATS = Number(process.env.BENCH_PAGE_REPEATS ?? 3);
const WAV_BYTES = Number(process.env.BENCH_PAGE_WAV_BYTES ?? 1024 ** 3);
const DATA_DIR = join(ROOT, 'target', 'bench-data');
const PROFILE_DIR = join(DATA_DIR, 'chromium-profiles');

/** Launch flags of the page tests (tests/browser/page.test.mjs). */
const CHROMIUM_ARGS = ['--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run',
  '--disable-background-networking', '--disable-component-update', '--disable-sync'];

const FS_HZ = 48000;
const TONE_HZ = 1000;
// Amplitudes well inside full scale (1.0 for float input), so no sample counts as clipped.
const NOISE_STD = 0.1;
const TONE_AMPLITUDE = 0.1;
const SEED = 1;
const SIZES = [1_000_000, 10_000_000];
/** The no-op baseline: two Welch segments of the default 4096 samples. */
const BASELINE_SAMPLES = 8192;
const DEMO_NAME = 'preamp-shorted-input-24bit-48000hz-mono.wav';
const WASM_PATH = join(SITE_DIR, 'pkg', 'noisesonde_bg.wasm');
const GLUE_PATH = join(SITE_DIR, 'pkg', 'noisesonde.js');
/** Samples per chunk when writing inputs (keeps this process small). */
const WRITE_CHUNK_SAMPLES = 1 << 21;
const MEMORY_POLL_MS = 100;
/** Bytes per FileReaderSync read, as the page's worker reads (src/web/file_reader.rs). */
const SLICE_BYTES = 4 * 1024 * 1024;

/**
 * A worker that only reads a File the way the page's worker does (FileReaderSync, 4 MiB slices,
 * each copied into one reused buffer, as into wasm memory) and reports how long that took: the
 * file-handling share of an analysis. Served to the page by playwright's request routing at a
 * same-origin path (the page's policy allows same-origin workers only); the site is not changed.
 */
const PROBE_PATH = '__bench-read-probe.js';
const PROBE_SOURCE = `
self.onmessage = (event) => {
  const { file, slice } = event.data;
  const reader = new FileReaderSync();
  const into = new Uint8Array(slice);
  const started = performance.now();
  let check = 0;
  for (let start = 0; start < file.size; start += slice) {
    const bytes = new Uint8Array(reader.readAsArrayBuffer(file.slice(start, Math.min(file.size, start + slice))));
    into.set(bytes);
    check = (check + bytes[bytes.length - 1]) | 0;
  }
  self.postMessage({ ms: performance.now() - started, bytes: file.size, check });
};
`;

// Targets from the issue (reported, never asserted).
const TARGET_WASM_OVER_NATIVE = 1.5;
const TARGET_DEMO_MS = 1000;
const TARGET_WASM_BYTES = 1e6;
const TARGET_WAV_MB_PER_S = 200;

const SMALL_TIMEOUT_MS = 5 * 60_000;
const WAV_TIMEOUT_MS = 30 * 60_000;

function log(line) {
  console.log(`bench-page: ${line}`);
}

function fail(message) {
  throw new Error(message);
}

const median = (values) => {
  const s = [...values].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2;
};
const ms = (v) => (Number.isFinite(v) ? v.toFixed(0) : '—');
const sec = (v) => (Number.isFinite(v) ? (v / 1000).toFixed(3) : '—');
const met = (ok) => (ok ? 'met' : 'not met');
const mb = (bytes) => (bytes / 1e6).toFixed(1);

// ---------------------------------------------------------------- inputs

/** Deterministic uniform numbers in [0, 1) (mulberry32). */
function uniform(seed) {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** Writes `path` chunk by chunk through a .part file unless a file of `bytes` bytes is there. */
function ensureFile(path, bytes, writeChunks) {
  if (existsSync(path) && statSync(path).size === bytes) return 'reused';
  mkdirSync(dirname(path), { recursive: true });
  const started = performance.now();
  const part = `${path}.part`;
  const fd = openSync(part, 'w');
  try {
    writeChunks((chunk) => {
      let off = 0;
      while (off < chunk.byteLength) off += writeSync(fd, chunk, off, chunk.byteLength - off);
    });
  } finally {
    closeSync(fd);
  }
  if (statSync(part).size !== bytes) fail(`${part}: wrote ${statSync(part).size} bytes, not ${bytes}`);
  renameSync(part, path);
  return `written in ${((performance.now() - started) / 1000).toFixed(1)} s`;
}

/** Raw little-endian f64: NOISE_STD·normal noise (Box–Muller) + TONE_AMPLITUDE·sin(2π·TONE_HZ·t). */
function ensureF64(n) {
  const path = join(DATA_DIR, `page-normal${NOISE_STD}-seed${SEED}-tone${TONE_AMPLITUDE}x${TONE_HZ}hz-${n}.f64`);
  const note = ensureFile(path, 8 * n, (write) => {
    const next = uniform(SEED);
    const buf = new Float64Array(WRITE_CHUNK_SAMPLES);
    for (let start = 0; start < n; start += WRITE_CHUNK_SAMPLES) {
      const count = Math.min(WRITE_CHUNK_SAMPLES, n - start);
      for (let i = 0; i < count; i += 2) {
        const r = Math.sqrt(-2 * Math.log(1 - next()));
        const phi = 2 * Math.PI * next();
        for (let k = 0; k < 2 && i + k < count; k += 1) {
          const idx = start + i + k;
          const z = k === 0 ? r * Math.cos(phi) : r * Math.sin(phi);
          buf[i + k] = NOISE_STD * z + TONE_AMPLITUDE * Math.sin((2 * Math.PI * TONE_HZ * idx) / FS_HZ);
        }
      }
      write(new Uint8Array(buf.buffer, 0, count * 8));
    }
  });
  return { path, n, bytes: 8 * n, note };
}

/**
 * A 16-bit PCM mono WAV of `totalBytes` bytes (44-byte RIFF header written by hand, then the
 * samples): uniform noise of ±4096 counts from xorshift32 plus a 1 kHz tone of 8000 counts.
 */
function ensureWav(totalBytes) {
  const dataBytes = totalBytes - 44;
  if (dataBytes <= 0 || dataBytes % 2) fail(`a WAV of ${totalBytes} bytes cannot hold 16-bit samples`);
  const samples = dataBytes / 2;
  const label = totalBytes === 1024 ** 3 ? '1GiB' : `${totalBytes}B`;
  const path = join(DATA_DIR, `page-pcm16-48000hz-mono-${label}.wav`);
  const note = ensureFile(path, totalBytes, (write) => {
    const header = Buffer.alloc(44);
    header.write('RIFF', 0, 'ascii');
    header.writeUInt32LE(36 + dataBytes, 4);
    header.write('WAVE', 8, 'ascii');
    header.write('fmt ', 12, 'ascii');
    header.writeUInt32LE(16, 16); // fmt chunk size
    header.writeUInt16LE(1, 20); // PCM
    header.writeUInt16LE(1, 22); // channels
    header.writeUInt32LE(FS_HZ, 24);
    header.writeUInt32LE(FS_HZ * 2, 28); // bytes per second
    header.writeUInt16LE(2, 32); // block align
    header.writeUInt16LE(16, 34); // bits per sample
    header.write('data', 36, 'ascii');
    header.writeUInt32LE(dataBytes, 40);
    write(header);
    const period = FS_HZ / TONE_HZ; // 48 samples
    const tone = Int16Array.from({ length: period }, (_, k) => Math.round(8000 * Math.sin((2 * Math.PI * k) / period)));
    const buf = new Int16Array(WRITE_CHUNK_SAMPLES);
    let x = 2463534242;
    for (let start = 0; start < samples; start += WRITE_CHUNK_SAMPLES) {
      const count = Math.min(WRITE_CHUNK_SAMPLES, samples - start);
      for (let i = 0; i < count; i += 1) {
        x ^= x << 13; x ^= x >>> 17; x ^= x << 5;
        buf[i] = tone[(start + i) % period] + ((x >>> 19) - 4096);
      }
      write(new Uint8Array(buf.buffer, 0, count * 2));
    }
  });
  return { path, n: samples, bytes: totalBytes, note };
}

// ---------------------------------------------------------------- native CLI

function nativeArgs(path, raw) {
  const args = ['analyze', path];
  if (raw) args.push('--raw', 'f64le', '--sample-rate', String(FS_HZ));
  return args;
}

/** Wall time (ms) of one whole CLI process writing its JSON to /dev/null. */
function nativeRun(path, raw) {
  const started = performance.now();
  const r = spawnSync(CLI, [...nativeArgs(path, raw), '--json', '/dev/null', '--quiet'], { stdio: ['ignore', 'ignore', 'pipe'] });
  const wall = performance.now() - started;
  if (r.error) fail(`cannot run ${CLI}: ${r.error.message}`);
  if (r.status !== 0) fail(`${CLI} ${basename(path)} exited with ${r.status}: ${r.stderr}`);
  return wall;
}

function nativeReport(path, raw) {
  return JSON.parse(execFileSync(CLI, [...nativeArgs(path, raw), '--json', '-', '--quiet'], { encoding: 'utf8', maxBuffer: 1 << 28 }));
}

// ---------------------------------------------------------------- the browser

/** Runs in every page before its scripts: records what the page does, with the page's clock. */
function instrument() {
  const now = () => performance.now();
  const bench = { log: [], worker: [], compile: [] };
  Object.defineProperty(window, '__bench', { value: bench });

  document.addEventListener('change', (event) => {
    const target = /** @type {HTMLInputElement} */ (event.target);
    if (target && target.id === 'file-input') {
      bench.log.push({ kind: 'change', t: now(), name: target.files && target.files[0] ? target.files[0].name : '' });
    }
  }, true);

  let last = '';
  new MutationObserver(() => {
    const source = document.getElementById('source-line');
    const progress = document.getElementById('progress');
    if (!source || !progress) return;
    const errorBox = document.getElementById('error-box');
    const text = document.getElementById('progress-text');
    const state = {
      kind: 'state',
      source: source.textContent || '',
      progressHidden: progress.hidden,
      progressText: text ? text.textContent || '' : '',
      error: errorBox && !errorBox.hidden ? errorBox.textContent || '' : '',
    };
    const key = JSON.stringify(state);
    if (key === last) return;
    const wasHidden = last !== '' && JSON.parse(last).progressHidden;
    last = key;
    const entry = { ...state, t: now() };
    bench.log.push(entry);
    if (state.progressHidden && !wasHidden) {
      requestAnimationFrame(() => bench.log.push({ kind: 'frame', t: now(), after: entry.t }));
    }
  }).observe(document, { subtree: true, childList: true, characterData: true, attributes: true, attributeFilter: ['hidden'] });

  const NativeWorker = window.Worker;
  window.Worker = class extends NativeWorker {
    constructor(...args) {
      super(...args);
      this.addEventListener('message', (event) => {
        const d = event.data || {};
        bench.worker.push({ type: d.type, id: d.id, bytes: d.bytes, total: d.total, t: now() });
      });
    }

    postMessage(message, ...rest) {
      if (message && message.type) bench.worker.push({ type: `post:${message.type}`, id: message.id, t: now() });
      return super.postMessage(message, ...rest);
    }
  };

  const compile = WebAssembly.compile;
  WebAssembly.compile = function benchCompile(bytes, ...rest) {
    const start = now();
    return compile.call(this, bytes, ...rest).then((module) => {
      bench.compile.push({ start, end: now(), bytes: bytes && bytes.byteLength });
      return module;
    });
  };
}

const contexts = new Set();
/** The blank page a persistent context opens with, used as the context's first page. */
const spare = new WeakMap();
const foreignRequests = [];

async function launch(name, { probe = false } = {}) {
  const dir = join(PROFILE_DIR, name);
  rmSync(dir, { recursive: true, force: true });
  mkdirSync(dir, { recursive: true });
  const context = await chromium.launchPersistentContext(dir, {
    executablePath: CHROMIUM,
    headless: true,
    args: CHROMIUM_ARGS,
  });
  contexts.add(context);
  if (context.pages().length > 0) spare.set(context, context.pages()[0]);
  await context.addInitScript(instrument);
  if (probe) {
    await context.route(new URL(PROBE_PATH, SITE_URL).href, (route) => route.fulfill({
      status: 200, contentType: 'text/javascript', body: PROBE_SOURCE,
    }));
  }
  const origin = new URL(SITE_URL).origin;
  context.on('request', (r) => {
    const url = r.url();
    if (!(url.startsWith(origin) || url.startsWith('blob:') || url.startsWith('data:'))) foreignRequests.push(url);
  });
  const close = async () => {
    contexts.delete(context);
    await context.close();
    rmSync(dir, { recursive: true, force: true });
  };
  return { context, close };
}

async function newPage(context) {
  // The context's initial blank page first, so no idle extra renderer sits in the memory figures.
  const page = spare.get(context) ?? await context.newPage();
  spare.delete(context);
  page.on('pageerror', (e) => log(`page error: ${e.message}`));
  return page;
}

/** Index marks into the page's logs, to read what happened after them. */
async function marks(page) {
  return page.evaluate(() => ({ log: window.__bench.log.length, worker: window.__bench.worker.length }));
}

/** Waits until a report naming `name` is on the page (or an error shows); returns the logs since `from`. */
async function waitReport(page, name, from, timeout) {
  await page.waitForFunction(({ name: n, from: f }) => {
    const entries = window.__bench.log;
    for (let i = f.log; i < entries.length; i += 1) {
      const e = entries[i];
      if (e.kind === 'state' && (e.error || (e.progressHidden && e.source.startsWith(n)))) return true;
    }
    return false;
  }, { name, from }, { timeout, polling: 'raf' });
  // One more frame, so the frame after the report is in the log.
  return page.evaluate(async (f) => {
    await new Promise((r) => requestAnimationFrame(() => requestAnimationFrame(r)));
    const b = window.__bench;
    return { log: b.log.slice(f.log), worker: b.worker.slice(f.worker), compile: b.compile.slice() };
  }, from);
}

/** The times of one analysis in the page, from its logs (page clock, ms). */
function analysisTimes(got, name) {
  const error = got.log.find((e) => e.kind === 'state' && e.error);
  if (error) fail(`the page showed an error for ${name}: ${error.error}`);
  const change = got.log.find((e) => e.kind === 'change' && e.name === name);
  const shown = got.log.find((e) => e.kind === 'state' && e.progressHidden && e.source.startsWith(name));
  if (!shown) fail(`no report for ${name} in the page's log`);
  const frame = got.log.find((e) => e.kind === 'frame' && e.after === shown.t);
  const post = got.worker.find((e) => e.type === 'post:analyze');
  const id = post?.id;
  const progress = got.worker.filter((e) => e.type === 'progress' && e.id === id);
  const result = got.worker.find((e) => e.type === 'result' && e.id === id);
  const start = change?.t;
  const texts = new Set(got.log
    .filter((e) => e.kind === 'state' && !e.progressHidden && e.t >= (start ?? 0) && e.t <= shown.t && e.progressText)
    .map((e) => e.progressText));
  return {
    change: start,
    post: post?.t,
    firstProgress: progress[0]?.t,
    lastProgress: progress[progress.length - 1]?.t,
    progressMessages: progress.length,
    progressTexts: texts.size,
    result: result?.t,
    shown: shown.t,
    frame: frame?.t,
    total: shown.t - start,
    worker: result && post ? result.t - post.t : NaN,
    render: result ? shown.t - result.t : NaN,
  };
}

/** Reads the page's data-quantity values into { path: number }. */
async function pageQuantities(page) {
  return page.$$eval('[data-quantity]', (nodes) => Object.fromEntries(nodes
    .filter((n) => n.dataset.value !== undefined && n.dataset.value !== '')
    .map((n) => [n.dataset.quantity, Number(n.dataset.value)])));
}

/** Opens the page, waits for the demo, and sets the layout and calibration fields for the CLI's defaults. */
async function openPage(context, raw) {
  const page = await newPage(context);
  const from = { log: 0, worker: 0 };
  await page.goto(SITE_URL);
  await waitReport(page, 'preamp-shorted-input', from, SMALL_TIMEOUT_MS);
  await page.selectOption('#raw-format', raw ? 'f64le' : '');
  await page.fill('#raw-channels', '1');
  await page.fill('#sample-rate', raw ? String(FS_HZ) : '');
  await page.fill('#channel', '0');
  // The CLI's defaults (the page keeps the demo's 2 V calibration otherwise); timing does not
  // depend on them, but the equal-work check compares numbers.
  await page.fill('#scale', '1');
  await page.fill('#unit', '');
  return page;
}

/** One analysis of `file` in the page: node-side wall time and the page's own times. */
async function pageRun(page, file, timeout) {
  const name = basename(file.path);
  const from = await marks(page);
  const started = performance.now();
  await page.setInputFiles('#file-input', file.path);
  const got = await waitReport(page, name, from, timeout);
  const nodeMs = performance.now() - started;
  const times = analysisTimes(got, name);
  const samples = await page.$eval('[data-quantity="samples"]', (n) => Number(n.dataset.value));
  if (samples !== file.n) fail(`the page read ${samples} samples of ${name}, not ${file.n}`);
  return { ...times, nodeMs };
}

/** Reads the file now in #file-input with the probe worker; returns milliseconds. */
async function readProbe(page) {
  const got = await page.evaluate(async ({ url, slice }) => {
    const input = /** @type {HTMLInputElement} */ (document.getElementById('file-input'));
    const file = input.files && input.files[0];
    if (!file) throw new Error('no file in #file-input');
    const worker = new Worker(url);
    try {
      return await new Promise((resolve, reject) => {
        worker.onmessage = (event) => resolve(event.data);
        worker.onerror = (event) => reject(new Error(event.message || 'the read probe failed'));
        worker.postMessage({ file, slice });
      });
    } finally {
      worker.terminate();
    }
  }, { url: new URL(PROBE_PATH, SITE_URL).href, slice: SLICE_BYTES });
  return got.ms;
}

// ---------------------------------------------------------------- memory of Chromium's processes

function readText(path) {
  try {
    return readFileSync(path, 'utf8');
  } catch {
    return null;
  }
}

/** pid → { ppid, rssKiB, renderer } for the processes started (directly or not) by this node process. */
function descendants() {
  const all = new Map();
  for (const entry of readdirSync('/proc')) {
    if (!/^\d+$/.test(entry)) continue;
    const stat = readText(`/proc/${entry}/stat`);
    if (!stat) continue;
    const ppid = Number(stat.slice(stat.lastIndexOf(')') + 2).split(' ')[1]);
    all.set(Number(entry), ppid);
  }
  const mine = new Set([process.pid]);
  let grew = true;
  while (grew) {
    grew = false;
    for (const [pid, ppid] of all) {
      if (!mine.has(pid) && mine.has(ppid)) {
        mine.add(pid);
        grew = true;
      }
    }
  }
  mine.delete(process.pid);
  const out = [];
  for (const pid of mine) {
    const status = readText(`/proc/${pid}/status`);
    const cmdline = readText(`/proc/${pid}/cmdline`);
    if (!status || cmdline === null) continue;
    const m = /^VmRSS:\s+(\d+) kB/m.exec(status);
    // Zygote-forked processes rewrite their command line as one space-separated string.
    out.push({ pid, rssKiB: m ? Number(m[1]) : 0, renderer: cmdline.includes('--type=renderer') });
  }
  return out;
}

/** Polls VmRSS of Chromium's processes every MEMORY_POLL_MS until stopped. */
function memoryMonitor() {
  const peak = { rendererSum: 0, rendererLargest: 0, allSum: 0, polls: 0, renderers: 0, timeline: [] };
  const started = performance.now();
  const poll = () => {
    const procs = descendants();
    const renderers = procs.filter((p) => p.renderer);
    const sum = renderers.reduce((s, p) => s + p.rssKiB, 0) * 1024;
    const largest = Math.max(0, ...renderers.map((p) => p.rssKiB)) * 1024;
    const all = procs.reduce((s, p) => s + p.rssKiB, 0) * 1024;
    peak.rendererSum = Math.max(peak.rendererSum, sum);
    peak.rendererLargest = Math.max(peak.rendererLargest, largest);
    peak.allSum = Math.max(peak.allSum, all);
    peak.renderers = Math.max(peak.renderers, renderers.length);
    peak.polls += 1;
    peak.timeline.push({ t: performance.now() - started, largest });
  };
  poll();
  const timer = setInterval(poll, MEMORY_POLL_MS);
  return {
    stop() {
      clearInterval(timer);
      poll();
      return peak;
    },
  };
}

// ---------------------------------------------------------------- facts

function machineFacts() {
  const cpuinfo = readText('/proc/cpuinfo') ?? '';
  const cpu = /^model name\s*:\s*(.*)$/m.exec(cpuinfo)?.[1] ?? 'unknown';
  let nproc = String(availableParallelism());
  try {
    nproc = execFileSync('nproc', { encoding: 'utf8' }).trim();
  } catch { /* keep node's count */ }
  let chromiumVersion = 'unknown';
  try {
    chromiumVersion = execFileSync(CHROMIUM, ['--version'], { encoding: 'utf8', stdio: ['ignore', 'pipe', 'ignore'] }).trim();
  } catch { /* reported as unknown */ }
  const memKiB = Number(/^MemTotal:\s+(\d+)/m.exec(readText('/proc/meminfo') ?? '')?.[1] ?? 0);
  return {
    date: new Date().toISOString().replace('T', ' ').replace(/:\d\d\.\d+Z$/, ' UTC'),
    cpu,
    nproc,
    memGiB: (memKiB / 1024 ** 2).toFixed(1),
    chromiumVersion,
    node: process.version,
  };
}

/** Load averages read before each section: [section, "1 5 15 min"]. */
const loads = [];
const loadavg = () => (readText('/proc/loadavg') ?? '').split(' ').slice(0, 3).join(' ');

// ---------------------------------------------------------------- the four measurements

async function wasmSize() {
  const wasm = readFileSync(WASM_PATH);
  const glue = readFileSync(GLUE_PATH);
  const gz = (b) => gzipSync(b, { level: zlibConstants.Z_BEST_COMPRESSION }).length;
  return { wasm: wasm.length, wasmGz: gz(wasm), glue: glue.length, glueGz: gz(glue) };
}

async function demoFirstPlot() {
  loads.push(['2 (demo)', loadavg()]);
  const one = async (page) => {
    const started = performance.now();
    await page.goto(SITE_URL);
    const got = await waitReport(page, 'preamp-shorted-input', { log: 0, worker: 0 }, SMALL_TIMEOUT_MS);
    const nodeMs = performance.now() - started;
    const t = analysisTimes({ ...got, log: [{ kind: 'change', t: 0, name: DEMO_NAME }, ...got.log] }, DEMO_NAME);
    const timing = await page.evaluate(() => {
      const nav = performance.getEntriesByType('navigation')[0];
      const res = performance.getEntriesByType('resource').map((e) => ({ name: e.name, end: e.responseEnd }));
      return { dcl: nav ? nav.domContentLoadedEventEnd : NaN, res };
    });
    const resEnd = (suffix) => timing.res.find((r) => r.name.endsWith(suffix))?.end ?? NaN;
    const ready = got.worker.find((e) => e.type === 'ready');
    return {
      nodeMs,
      shown: t.shown,
      frame: t.frame,
      dcl: timing.dcl,
      wasmFetched: resEnd('noisesonde_bg.wasm'),
      compiled: got.compile[0]?.end ?? NaN,
      workerReady: ready?.t ?? NaN,
      demoFetched: resEnd(DEMO_NAME),
      posted: t.post,
      result: t.result,
    };
  };
  const cold = [];
  for (let i = 0; i < REPEATS; i += 1) {
    const { context, close } = await launch(`demo-cold-${i}`);
    try {
      cold.push(await one(await newPage(context)));
    } finally {
      await close();
    }
    log(`demo, fresh profile ${i + 1}/${REPEATS}: report drawn ${ms(cold[i].shown)} ms after navigation start (node side ${ms(cold[i].nodeMs)} ms)`);
  }
  const warm = [];
  const { context, close } = await launch('demo-warm');
  try {
    const first = await newPage(context);
    await one(first); // fills the HTTP cache; not counted
    await first.close();
    for (let i = 0; i < REPEATS; i += 1) {
      const page = await newPage(context);
      warm.push(await one(page));
      await page.close();
      log(`demo, new page in a used profile ${i + 1}/${REPEATS}: report drawn ${ms(warm[i].shown)} ms after navigation start (node side ${ms(warm[i].nodeMs)} ms)`);
    }
  } finally {
    await close();
  }
  return { cold, warm };
}

async function wasmVsNative(files, baseline) {
  loads.push(['1 (wasm vs native)', loadavg()]);
  const { context, close } = await launch('wasm-vs-native', { probe: true });
  try {
    const page = await openPage(context, true);
    // Equal work: the page's numbers for the smallest size against the CLI's JSON.
    const check = files[0];
    await pageRun(page, check, SMALL_TIMEOUT_MS);
    const report = nativeReport(check.path, true);
    const quantities = await pageQuantities(page);
    let compared = 0;
    let worst = 0;
    for (const [path, value] of Object.entries(quantities)) {
      const expected = path.split('.').reduce((v, k) => (v === undefined || v === null ? v : v[k]), report);
      if (typeof expected !== 'number') continue;
      compared += 1;
      const rel = expected === 0 ? Math.abs(value) : Math.abs(value - expected) / Math.abs(expected);
      worst = Math.max(worst, rel);
    }
    log(`equal work: ${compared} quantities on the page agree with the CLI's JSON within ${worst.toExponential(1)} (relative)`);
    // The run above also warmed the wasm code (V8 compiles wasm lazily and tiers up hot code).
    const all = [baseline, ...files];
    const runs = new Map(all.map((f) => [f.path, { native: [], page: [], read: [] }]));
    for (let rep = 0; rep < REPEATS; rep += 1) {
      for (const file of all) {
        const r = runs.get(file.path);
        r.native.push(nativeRun(file.path, true));
        r.page.push(await pageRun(page, file, SMALL_TIMEOUT_MS));
        r.read.push(await readProbe(page));
        const p = r.page[r.page.length - 1];
        log(`${file.n} samples run ${rep + 1}/${REPEATS}: native ${ms(r.native[r.native.length - 1])} ms, page ${ms(p.total)} ms (worker ${ms(p.worker)}, drawing ${ms(p.render)}; node side ${ms(p.nodeMs)}); reading alone ${ms(r.read[r.read.length - 1])} ms`);
      }
    }
    return { check: { compared, worst }, runs };
  } finally {
    await close();
  }
}

async function bigWav(wav) {
  loads.push(['4 (WAV)', loadavg()]);
  const { context, close } = await launch('wav-1gib', { probe: true });
  try {
    const page = await openPage(context, false);
    // Resident memory with the page idle (demo shown), for comparison.
    const idleMonitor = memoryMonitor();
    await new Promise((r) => setTimeout(r, 1000));
    const idle = idleMonitor.stop();
    const monitor = memoryMonitor();
    let run;
    let peak;
    try {
      run = await pageRun(page, wav, WAV_TIMEOUT_MS);
    } finally {
      peak = monitor.stop();
    }
    log(`WAV ${mb(wav.bytes)} MB: page ${sec(run.total)} s, ${(wav.bytes / 1e6 / (run.total / 1000)).toFixed(0)} MB/s; renderer peak ${mb(peak.rendererSum)} MB (sum), ${mb(peak.rendererLargest)} MB (largest)`);
    // After the measured run and outside the memory polling: how long reading alone takes.
    const read = await readProbe(page);
    log(`WAV, reading alone in a worker: ${sec(read)} s, ${(wav.bytes / 1e6 / (read / 1000)).toFixed(0)} MB/s`);
    return { run, idle, peak, read };
  } finally {
    await close();
  }
}

// ---------------------------------------------------------------- report

function render(r) {
  const f = r.facts;
  const out = [
    '# noisesonde page benchmark (wasm in headless Chromium)',
    '',
    `- date: ${f.date}`,
    `- browser: ${f.chromiumVersion}, headless, launched by playwright-core ${PLAYWRIGHT_VERSION} with the page tests' flags; node ${f.node}`,
    `- machine: ${f.nproc} cores (nproc), ${f.cpu}, ${f.memGiB} GiB; load average (1/5/15 min) ${r.loadStart} at the start, `
      + `${loads.map(([section, load]) => `${load} before section ${section}`).join(', ')}, ${r.loadEnd} at the end `
      + '(other work on the machine shares its 2 cores with the measurements: read the numbers with that in mind)',
    `- page: ${SITE_URL} (python3 http.server on 127.0.0.1), assembled by \`cargo xtask bench\` (release wasm32, wasm-bindgen --target web); native: ${relative(ROOT, CLI)} (release)`,
    `- requests outside the page's origin during the run: ${r.foreign.length}`,
    '- targets (from the issue) are printed beside the results as met/not met; nothing here is asserted',
    '',
    '## 1. wasm in the page vs the native command line, same file and settings',
    '',
    `Input: raw little-endian f64 in target/bench-data/, ${NOISE_STD}·normal noise (mulberry32 seed ${SEED}, Box–Muller) + ${TONE_AMPLITUDE}·sin(2π·${TONE_HZ} Hz·t), fs ${FS_HZ} Hz; `
      + 'default settings on both sides (Hann, segment 4096, overlap 0.5, mean detrend and averaging, ACF to one segment, biased, 95 % interval, scale 1). '
      + `Native: \`noisesonde analyze FILE --raw f64le --sample-rate ${FS_HZ} --json /dev/null --quiet\`, whole-process wall clock. `
      + 'Page: raw format f64le and sample rate 48000 set in the form, `setInputFiles(\'#file-input\', FILE)`; '
      + 'time on the page\'s clock from the input\'s `change` event until #progress is hidden and #source-line names the file (report parsed, tables filled, both plots drawn). '
      + `Medians of ${REPEATS} runs, native and page interleaved, after one untimed page run that also served the equal-work check. `
      + `The ${BASELINE_SAMPLES}-sample file is the no-op baseline: its page time is the fixed cost (messages, report JSON of the same size, drawing).`,
    '',
    `Equal work: ${r.vs.check.compared} quantities shown by the page for the ${SIZES[0].toLocaleString('en-US')}-sample file agree with the CLI's JSON within ${r.vs.check.worst.toExponential(1)} relative.`,
    '',
    'Columns: "worker" is the analysis worker alone (request posted → result received: file read, decode, pipeline, report JSON); '
      + '"read alone" is a probe worker reading the same File the same way (FileReaderSync, 4 MiB slices copied into one buffer) and nothing else; '
      + '"worker − read" is then the wasm decode + pipeline + JSON; "drawing" is result received → report on the page (JSON parsed by ReportView, tables, both plots); '
      + '"node side" is setInputFiles called → report seen by playwright. The target is judged on page/native; the finer ratios are for reading, not judging.',
    '',
    '| samples | file MB | native s | page s | page/native | page − baseline s | (page − baseline)/native | worker s | read alone s | worker − read s | (worker − read)/native | drawing s | node side s | target: wasm ≤ 1.5× native |',
    '| ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | --- |',
  ];
  const base = r.vs.runs.get(r.baseline.path);
  const basePage = median(base.page.map((p) => p.total));
  const x = (v) => (Number.isFinite(v) ? `${v.toFixed(2)}×` : '—');
  for (const file of [r.baseline, ...r.files]) {
    const runs = r.vs.runs.get(file.path);
    const native = median(runs.native);
    const page = median(runs.page.map((p) => p.total));
    const worker = median(runs.page.map((p) => p.worker));
    const read = median(runs.read);
    const compute = median(runs.page.map((p, i) => p.worker - runs.read[i]));
    const render = median(runs.page.map((p) => p.render));
    const node = median(runs.page.map((p) => p.nodeMs));
    const isBase = file === r.baseline;
    const net = page - basePage;
    out.push(`| ${file.n.toLocaleString('en-US')}${isBase ? ' (baseline)' : ''} | ${mb(file.bytes)} | ${sec(native)} | ${sec(page)} | ${x(page / native)} `
      + `| ${isBase ? '—' : sec(net)} | ${isBase ? '—' : x(net / native)} | ${sec(worker)} | ${sec(read)} | ${sec(compute)} | ${x(compute / native)} | ${sec(render)} | ${sec(node)} `
      + `| ${isBase ? '—' : `page/native ${x(page / native)}: ${met(page / native <= TARGET_WASM_OVER_NATIVE)}`} |`);
  }
  out.push('', 'Individual runs (ms), in order: native / page (worker; read alone; first → last progress message):', '');
  for (const file of [r.baseline, ...r.files]) {
    const runs = r.vs.runs.get(file.path);
    out.push(`- ${file.n.toLocaleString('en-US')} samples: ${runs.native.map((n, i) => {
      const p = runs.page[i];
      return `${ms(n)} / ${ms(p.total)} (${ms(p.worker)}; ${ms(runs.read[i])}; ${ms(p.lastProgress - p.firstProgress)})`;
    }).join(' · ')}`);
  }

  const d = r.demo;
  const row = (label, runs) => {
    const m = (k) => median(runs.map((x) => x[k]));
    return `| ${label} | ${ms(m('shown'))} | ${runs.map((x) => ms(x.shown)).join(', ')} | ${ms(m('frame'))} | ${ms(m('nodeMs'))} | ${ms(m('dcl'))} | ${ms(m('wasmFetched'))} | ${ms(m('compiled'))} | ${ms(m('demoFetched'))} | ${ms(m('posted'))} | ${ms(m('workerReady'))} | ${ms(m('result'))} | ≤ ${TARGET_DEMO_MS} ms: ${met(m('shown') <= TARGET_DEMO_MS)} |`;
  };
  out.push(
    '',
    '## 2. The demo\'s first plot after the page loads',
    '',
    `Navigation to ${SITE_URL}, until the demo's report is on the page (#source-line names preamp-shorted-input, #progress hidden, plots drawn); `
      + `page clock, from navigation start. Median of ${REPEATS}: "fresh profile" is a new browser profile each time (empty HTTP cache); `
      + '"used profile" is a new page in a profile that loaded the page once before. The other columns are medians of when each stage ended, in ms from navigation start.',
    '',
    '| pages | report on page ms | runs ms | next frame ms | node side ms (goto → seen) | DOMContentLoaded | wasm fetched | wasm compiled (main thread) | demo WAV fetched | request posted to the worker | worker ready | worker result | target |',
    '| --- | ---: | --- | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | --- |',
    row('fresh profile', d.cold),
    row('used profile', d.warm),
  );

  const s = r.size;
  out.push(
    '',
    '## 3. Size of the wasm module',
    '',
    `The module the page loaded in this run${SITE_DIR === join(ROOT, 'target', 'site') ? '' : ` (${relative(ROOT, SITE_DIR)} is the served copy of target/site/ as \`build_site\` assembled it)`}; gzip by node's zlib at level 9.`,
    '',
    '| file | bytes | gzip -9 bytes | target: < 1 MB raw |',
    '| --- | ---: | ---: | --- |',
    `| ${relative(ROOT, WASM_PATH)} | ${s.wasm.toLocaleString('en-US')} | ${s.wasmGz.toLocaleString('en-US')} | < 10^6 bytes: ${met(s.wasm < TARGET_WASM_BYTES)}; < 2^20 bytes (1 MiB): ${met(s.wasm < 1024 ** 2)} |`,
    `| ${relative(ROOT, GLUE_PATH)} (glue, for reference) | ${s.glue.toLocaleString('en-US')} | ${s.glueGz.toLocaleString('en-US')} | — |`,
  );

  const w = r.wav;
  const run = w.run;
  const mbps = r.wavFile.bytes / 1e6 / (run.total / 1000);
  const workerMbps = r.wavFile.bytes / 1e6 / (run.worker / 1000);
  const nativeMbps = r.wavFile.bytes / 1e6 / (r.wavNative / 1000);
  out.push(
    '',
    `## 4. A ${r.wavFile.bytes === 1024 ** 3 ? '1 GiB' : `${mb(r.wavFile.bytes)} MB`} WAV in the page`,
    '',
    `Input: ${relative(ROOT, r.wavFile.path)}, ${r.wavFile.bytes.toLocaleString('en-US')} bytes, 16-bit PCM mono ${FS_HZ} Hz, ${r.wavFile.n.toLocaleString('en-US')} samples `
      + '(uniform noise ±4096 counts from xorshift32 + a 1 kHz tone of 8000 counts; header written by hand). One run in a fresh profile, default settings. '
      + 'Time on the page\'s clock from the `change` event until the report is on the page; MB = 10^6 bytes. '
      + `Memory: VmRSS from /proc/PID/status every ${MEMORY_POLL_MS} ms (${w.peak.polls} polls) of this run's Chromium processes (${w.peak.renderers} renderers at most); "idle before": the same, for 1 s with the demo shown just before the file was chosen; `
      + '"renderer" = command line containing --type=renderer (the page and its worker live there). RSS counts shared pages in each process, so sums overstate. '
      + '"read alone": the probe worker of section 1 reading the same File after the run (not during the memory polling). '
      + '"distinct progress texts": different texts #progress-text showed during the run, the initial "reading …" included. '
      + 'Every input had just been written or read, so it was most likely in the OS page cache, for both sides.',
    '',
    '| page s | MB/s | worker s (post → result) | worker MB/s | read alone s | read alone MB/s | native CLI s (1 run) | native MB/s | progress messages | distinct progress texts | renderer RSS peak, sum MB | largest renderer peak MB | largest peak − idle largest MB | largest / file size | all Chromium processes peak, sum MB | idle before: renderers sum / largest MB | targets |',
    '| ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | --- |',
    `| ${sec(run.total)} | ${mbps.toFixed(0)} | ${sec(run.worker)} | ${workerMbps.toFixed(0)} | ${sec(w.read)} | ${(r.wavFile.bytes / 1e6 / (w.read / 1000)).toFixed(0)} | ${sec(r.wavNative)} | ${nativeMbps.toFixed(0)} | ${run.progressMessages} | ${run.progressTexts} `
      + `| ${mb(w.peak.rendererSum)} | ${mb(w.peak.rendererLargest)} | ${mb(w.peak.rendererLargest - w.idle.rendererLargest)} | ${(w.peak.rendererLargest / r.wavFile.bytes * 100).toFixed(1)} % | ${mb(w.peak.allSum)} | ${mb(w.idle.rendererSum)} / ${mb(w.idle.rendererLargest)} `
      + `| ≥ ${TARGET_WAV_MB_PER_S} MB/s: ${met(mbps >= TARGET_WAV_MB_PER_S)} |`,
    '',
    `Largest renderer's RSS through the run (polls nearest to 0, 25, 50, 75 and 100 % of it): ${[0, 0.25, 0.5, 0.75, 1].map((q) => {
      const tl = w.peak.timeline;
      const at = q * tl[tl.length - 1].t;
      return mb(tl.reduce((best, e) => (Math.abs(e.t - at) < Math.abs(best.t - at) ? e : best)).largest);
    }).join(' / ')} MB. `
      + `Drawing (worker result → report on page): ${ms(run.render)} ms. Node side (setInputFiles → report seen): ${sec(run.nodeMs)} s. `
      + `First progress message ${ms(run.firstProgress - run.post)} ms after the request was posted, last one ${ms(run.result - run.lastProgress)} ms before the result.`,
    '',
  );
  return out.join('\n');
}

// ---------------------------------------------------------------- main

async function main() {
  if (!SITE_URL) fail('SITE_URL is not set (run `cargo xtask bench`)');
  const host = new URL(SITE_URL).hostname;
  if (!['127.0.0.1', 'localhost', '[::1]'].includes(host)) fail(`SITE_URL must be on the loopback address, not ${host}`);
  if (endianness() !== 'LE') fail('inputs are written from native arrays, which assumes a little-endian machine');
  if (!existsSync(CLI)) fail(`${CLI} not found (run \`cargo xtask bench\`)`);
  if (!existsSync(WASM_PATH)) fail(`${WASM_PATH} not found (run \`cargo xtask bench\`)`);
  const facts = machineFacts();
  const loadStart = loadavg();
  log(`${facts.date}; ${facts.chromiumVersion}; ${facts.nproc} cores; ${facts.cpu}; load ${loadStart}`);

  const size = await wasmSize();
  log(`wasm ${size.wasm} bytes, ${size.wasmGz} gzipped`);

  const files = SIZES.map(ensureF64);
  const baseline = ensureF64(BASELINE_SAMPLES);
  for (const f of [baseline, ...files]) log(`input ${relative(ROOT, f.path)} (${f.note})`);
  const wavFile = ensureWav(WAV_BYTES);
  log(`input ${relative(ROOT, wavFile.path)} (${wavFile.note})`);

  const demo = await demoFirstPlot();
  const vs = await wasmVsNative(files, baseline);
  const wav = await bigWav(wavFile);
  const wavNative = nativeRun(wavFile.path, false);
  log(`WAV, native CLI: ${sec(wavNative)} s`);

  const loadEnd = loadavg();
  const table = render({ facts, loadStart, loadEnd, foreign: foreignRequests, size, demo, vs, files, baseline, wav, wavFile, wavNative });
  console.log(`\n${table}`);
  mkdirSync(dirname(OUT), { recursive: true });
  writeFileSync(OUT, table);
  log(`results written to ${relative(ROOT, OUT)}`);
}

main().then(() => {
  rmSync(PROFILE_DIR, { recursive: true, force: true });
}, async (err) => {
  console.error(`bench-page: ${err instanceof Error ? err.stack : err}`);
  for (const context of contexts) await context.close().catch(() => {});
  rmSync(PROFILE_DIR, { recursive: true, force: true });
  process.exitCode = 1;
});

// End-to-end tests of the page in Debian's headless Chromium, driven by playwright-core.
// Run by `cargo xtask test`, which builds the page, serves it on 127.0.0.1 and sets SITE_URL,
// CHROMIUM and NOISESONDE_BIN. The outside truth for the numbers is the command line's JSON for
// the same file and settings (itself checked against scipy/numpy in tests/python).
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { execFileSync } from 'node:child_process';
import { mkdtempSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, dirname } from 'node:path';
import { fileURLToPath } from 'node:url';
import { chromium } from 'playwright-core';
import { writeWav, gaussian } from './signals.mjs';

const SITE_URL = process.env.SITE_URL ?? 'http://127.0.0.1:8700/';
const CHROMIUM = process.env.CHROMIUM ?? '/usr/bin/chromium';
const CLI = process.env.NOISESONDE_BIN ?? 'target/release/noisesonde';
const ROOT = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
const ARTIFACTS = join(ROOT, 'tests', 'artifacts');
const DEMO = join(ROOT, 'demo-data', 'preamp-shorted-input-24bit-48000hz-mono.wav');
/** Agreement required between the page and the CLI (the 1e-12 relative). */
const REL = 1e-12;
/** Longest wait for an analysis in the page. */
const ANALYSIS_TIMEOUT_MS = 60_000;

const CHROMIUM_ARGS = ['--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run',
  '--disable-background-networking', '--disable-component-update', '--disable-sync'];
let context;
const requests = [];

before(async () => {
  mkdirSync(ARTIFACTS, { recursive: true });
  context = await chromium.launchPersistentContext(mkdtempSync(join(tmpdir(), 'noisesonde-chromium-')), {
    executablePath: CHROMIUM,
    headless: true,
    args: CHROMIUM_ARGS,
  });
  context.on('request', (r) => requests.push({ url: r.url(), method: r.method() }));
});

after(async () => {
  await context?.close();
});

/** The CLI's report for a file, as the outside truth for the page. */
function cliReport(path, ...args) {
  return JSON.parse(execFileSync(CLI, ['analyze', path, '--json', '-', '--quiet', ...args], { encoding: 'utf8', maxBuffer: 1 << 28 }));
}

/** Reads every data-quantity on the page into { path: number }. */
async function pageQuantities(page) {
  return page.$$eval('[data-quantity]', (nodes) => Object.fromEntries(
    nodes.filter((n) => n.dataset.value !== undefined && n.dataset.value !== '')
      .map((n) => [n.dataset.quantity, Number(n.dataset.value)])));
}

/** Value at a dotted path of the report ("acf.autocorrelation.0"). */
function at(report, path) {
  return path.split('.').reduce((v, key) => (v === undefined || v === null ? v : v[key]), report);
}

function assertMatchesReport(quantities, report) {
  let compared = 0;
  for (const [path, value] of Object.entries(quantities)) {
    const expected = at(report, path);
    if (typeof expected !== 'number') continue; // page-only read-outs (cursors, band)
    const tol = REL * Math.abs(expected);
    assert.ok(Math.abs(value - expected) <= tol, `${path}: page ${value}, CLI ${expected}`);
    compared += 1;
  }
  assert.ok(compared >= 20, `only ${compared} quantities compared`);
}

async function waitForReport(page, sourceName, alsoContains = '') {
  await page.waitForFunction(([name, part]) => {
    const line = document.getElementById('source-line')?.textContent ?? '';
    return line.startsWith(name) && line.includes(part) && document.getElementById('progress')?.hidden;
  }, [sourceName, alsoContains], { timeout: ANALYSIS_TIMEOUT_MS });
}

test('the demo is analysed on arrival and matches the command line', async () => {
  const page = await context.newPage();
  const errors = [];
  page.on('pageerror', (e) => errors.push(e.message));
  const started = Date.now();
  await page.goto(SITE_URL);
  await waitForReport(page, 'preamp-shorted-input');
  console.log(`demo analysed and drawn ${Date.now() - started} ms after navigation`);
  assert.deepEqual(errors, []);
  const expected = cliReport(DEMO, '--scale', '2', '--unit', 'V');
  assertMatchesReport(await pageQuantities(page), expected);
  assert.equal(await page.locator('#error-box').isHidden(), true);
  await page.close();
});

test('a file chosen in the picker gives the numbers of the command line; a bad file keeps the result', async () => {
  const page = await context.newPage();
  await page.goto(SITE_URL);
  await waitForReport(page, 'preamp-shorted-input');
  const dir = mkdtempSync(join(tmpdir(), 'noisesonde-page-'));
  const wav = join(dir, 'bench-fan.wav');
  const rate = 8000;
  let seed = 12345;
  const noise = () => { seed = (seed * 1103515245 + 12345) % 2147483648; return seed / 2147483648 - 0.5; };
  writeWav(wav, Array.from({ length: 40000 }, (_, n) => 0.3 * Math.sin(2 * Math.PI * 440 * n / rate) + 0.1 * noise()), rate);
  // A new recording does not inherit the demo's calibration (2 V per full scale): it is in FS.
  await page.setInputFiles('#file-input', wav);
  await waitForReport(page, 'bench-fan.wav');
  const expected = cliReport(wav);
  assert.equal(expected.unit, 'FS');
  const before = await pageQuantities(page);
  assertMatchesReport(before, expected);
  // The arrays crossed from the worker as transferred typed arrays: the exported JSON report
  // holds them whole and equal to the CLI's.
  const [download] = await Promise.all([page.waitForEvent('download'), page.click('#export-json')]);
  const exported = JSON.parse(readFileSync(await download.path(), 'utf8'));
  assert.equal(exported.schema, expected.schema);
  for (const path of ['psd.frequency_hz', 'psd.density', 'psd.ci_upper', 'acf.lag_s', 'acf.coefficient']) {
    const [got, want] = [at(exported, path), at(expected, path)];
    assert.equal(got.length, want.length, path);
    // PSD bins: relative to each bin. ACF: relative to its lag-0 value, as near-zero lags are
    // differences of large sums (wasm and native round those differently).
    const scale = path.startsWith('acf.') && path !== 'acf.lag_s' ? Math.abs(want[0]) : 0;
    want.forEach((w, i) => assert.ok(Math.abs(got[i] - w) <= REL * Math.max(Math.abs(w), scale),
      `${path}[${i}]: ${got[i]} vs ${w}`));
  }

  const bad = join(dir, 'archive.wav');
  writeFileSync(bad, Buffer.concat([Buffer.from('PK\x03\x04'), Buffer.alloc(200)]));
  await page.setInputFiles('#file-input', bad);
  await page.waitForSelector('#error-box:not([hidden])', { timeout: ANALYSIS_TIMEOUT_MS });
  const message = await page.textContent('#error-box');
  assert.match(message, /archive\.wav/);
  assert.match(message, /ZIP/);
  assert.deepEqual(await pageQuantities(page), before, 'the previous result stays on screen');
  await page.close();
});

test('cursors give the band RMS of the command line\'s PSD', async () => {
  const page = await context.newPage();
  await page.goto(SITE_URL);
  await waitForReport(page, 'preamp-shorted-input');
  const canvas = page.locator('#psd-canvas');
  await canvas.scrollIntoViewIfNeeded();
  const box = await canvas.boundingBox();
  await canvas.click({ position: { x: box.width * 0.3, y: box.height / 2 } });
  await canvas.click({ position: { x: box.width * 0.7, y: box.height / 2 } });
  const q = await pageQuantities(page);
  const a = q['cursor.a.frequency_hz'];
  const b = q['cursor.b.frequency_hz'];
  assert.ok(a > 0 && b > a, `cursors at ${a} and ${b} Hz`);
  // Outside truth for the band: the CLI's density integrated here the same way
  // (each bin's power spread evenly over its width), written out independently.
  const psd = cliReport(DEMO, '--scale', '2', '--unit', 'V').psd;
  const df = psd.bin_width_hz;
  const last = psd.frequency_hz[psd.frequency_hz.length - 1];
  let power = 0;
  psd.frequency_hz.forEach((f, k) => {
    const lo = Math.max(0, f - df / 2); const hi = Math.min(last, f + df / 2);
    const overlap = Math.max(0, Math.min(hi, b) - Math.max(lo, a));
    if (hi > lo) power += psd.density[k] * df * overlap / (hi - lo);
  });
  const rms = q['band.rms'];
  assert.ok(Math.abs(rms - Math.sqrt(power)) <= 1e-9 * Math.sqrt(power), `band RMS ${rms} vs ${Math.sqrt(power)}`);
  await page.close();
});

test('screenshots at 1x and 2x pixel ratios; the canvas backing store follows the ratio', async () => {
  const browser = await chromium.launch({ executablePath: CHROMIUM, headless: true, args: CHROMIUM_ARGS });
  try {
    for (const scale of [1, 2]) {
      const ctx = await browser.newContext({ deviceScaleFactor: scale, viewport: { width: 1100, height: 900 } });
      const page = await ctx.newPage();
      await page.goto(SITE_URL);
      await waitForReport(page, 'preamp-shorted-input');
      const [backing, css, ratio] = await page.$eval('#psd-canvas', (c) => [c.width, c.clientWidth, window.devicePixelRatio]);
      assert.equal(ratio, scale);
      assert.equal(backing, Math.round(css * scale), 'canvas backing store = CSS width × devicePixelRatio');
      await page.screenshot({ path: join(ARTIFACTS, `page-${scale}x.png`), fullPage: true });
      // A tablet-width view keeps everything reachable (no horizontal scrolling).
      await page.setViewportSize({ width: 768, height: 1024 });
      await page.waitForTimeout(300);
      const overflow = await page.evaluate(() => document.documentElement.scrollWidth - window.innerWidth);
      assert.ok(overflow <= 0, `page is ${overflow} px wider than a 768 px viewport`);
      await page.screenshot({ path: join(ARTIFACTS, `page-tablet-${scale}x.png`), fullPage: true });
      await ctx.close();
    }
  } finally {
    await browser.close();
  }
});

test('nothing leaves the machine: only same-origin GETs, and the policy blocks the rest', async () => {
  const origin = new URL(SITE_URL).origin;
  const page = await context.newPage();
  await page.goto(SITE_URL);
  await waitForReport(page, 'preamp-shorted-input');
  const blocked = await page.evaluate(async () => {
    try { await fetch('https://example.invalid/x'); return false; } catch { return true; }
  });
  assert.equal(blocked, true);
  const csp = await page.$eval('meta[http-equiv="Content-Security-Policy"]', (m) => m.content);
  assert.match(csp, /default-src 'none'/);
  assert.match(csp, /connect-src 'self'/);
  const foreign = requests.filter((r) => !(r.url.startsWith(origin) || r.url.startsWith('blob:') || r.url.startsWith('data:')) || r.method !== 'GET');
  assert.deepEqual(foreign, []);
  await page.close();
});

test('the single file works from file:// with no network at all', { skip: !process.env.SINGLE_FILE }, async () => {
  const page = await context.newPage();
  const seen = [];
  page.on('request', (r) => seen.push(r.url()));
  const errors = [];
  page.on('pageerror', (e) => errors.push(e.message));
  await page.goto(`file://${process.env.SINGLE_FILE}`);
  await waitForReport(page, 'preamp-shorted-input');
  assert.deepEqual(errors, []);
  assertMatchesReport(await pageQuantities(page), cliReport(DEMO, '--scale', '2', '--unit', 'V'));
  const remote = seen.filter((u) => !(u.startsWith('file:') || u.startsWith('blob:') || u.startsWith('data:')));
  assert.deepEqual(remote, []);
  await page.screenshot({ path: join(ARTIFACTS, 'single-file.png'), fullPage: true });
  await page.close();
});

test('a raw file makes the page ask for its layout; its channels are listed; the settings link reproduces the view', async () => {
  const page = await context.newPage();
  await page.goto(SITE_URL);
  await waitForReport(page, 'preamp-shorted-input');
  const dir = mkdtempSync(join(tmpdir(), 'noisesonde-raw-'));
  const raw = join(dir, 'adc-capture.bin');
  const rate = 250000;
  const frames = 200000;
  const data = Buffer.alloc(frames * 2 * 2); // two interleaved i16le channels
  let seed = 777;
  for (let n = 0; n < frames; n += 1) {
    seed = (seed * 1103515245 + 12345) % 2147483648;
    data.writeInt16LE(Math.round(8000 * Math.sin(2 * Math.PI * 1000 * n / rate)), 4 * n);
    data.writeInt16LE(Math.round((seed / 2147483648 - 0.5) * 3000), 4 * n + 2);
  }
  writeFileSync(raw, data);
  assert.equal(await page.locator('#layout-form').getAttribute('open'), null, 'the layout form starts folded');
  await page.selectOption('#window', 'blackman-harris');
  await page.selectOption('#segment', '8192');
  await page.fill('#overlap', '0.75');
  await page.fill('#scale', '1');
  await page.fill('#unit', 'V');
  const before = await pageQuantities(page);
  // No header: the page says so, opens the layout form at the format, and keeps the demo's result.
  await page.setInputFiles('#file-input', raw);
  await page.waitForSelector('#layout-form[open].needed', { timeout: ANALYSIS_TIMEOUT_MS });
  assert.match(await page.textContent('#error-box'), /adc-capture\.bin/);
  assert.equal(await page.evaluate(() => document.activeElement?.id), 'raw-format');
  assert.deepEqual(await pageQuantities(page), before);
  await page.selectOption('#raw-format', 'i16le');
  await page.fill('#raw-channels', '2');
  await page.dispatchEvent('#raw-channels', 'change');
  await page.fill('#sample-rate', String(rate));
  await page.click('#layout-apply');
  await waitForReport(page, 'adc-capture.bin', 'channel 0 of 2');
  const cliArgs = ['--raw', 'i16le', '--channels', '2', '--sample-rate', String(rate),
    '--window', 'blackman-harris', '--segment', '8192', '--overlap', '0.75', '--unit', 'V'];
  assertMatchesReport(await pageQuantities(page), cliReport(raw, ...cliArgs, '--channel', '0'));
  // The channels are listed; choosing the second analyses it.
  assert.deepEqual(await page.$$eval('#channel option', (o) => o.map((x) => x.value)), ['0', '1']);
  await page.selectOption('#channel', '1');
  await waitForReport(page, 'adc-capture.bin', 'channel 1 of 2');
  const expected = cliReport(raw, ...cliArgs, '--channel', '1');
  assertMatchesReport(await pageQuantities(page), expected);

  // The link carries the settings (never the data): a fresh page opened with it shows them.
  const link = await page.getAttribute('#share-link', 'href');
  assert.match(link, /window=blackman-harris/);
  assert.match(link, /segment=8192/);
  assert.doesNotMatch(link, /adc-capture/);
  const again = await context.newPage();
  await again.goto(new URL(link, SITE_URL).href);
  assert.equal(await again.inputValue('#window'), 'blackman-harris');
  assert.equal(await again.inputValue('#segment'), '8192');
  assert.equal(await again.inputValue('#overlap'), '0.75');
  await again.close();
  await page.close();
});

test('a long analysis shows progress and can be cancelled, keeping the previous result', async () => {
  const page = await context.newPage();
  await page.goto(SITE_URL);
  await waitForReport(page, 'preamp-shorted-input');
  const before = await pageQuantities(page);
  const dir = mkdtempSync(join(tmpdir(), 'noisesonde-long-'));
  const big = join(dir, 'long-capture.f32');
  writeFileSync(big, Buffer.alloc(384 * 1024 * 1024)); // 100 M samples of f32 silence
  await page.click('#layout-form summary'); // the layout can also be given before the file
  await page.selectOption('#raw-format', 'f32le');
  await page.fill('#sample-rate', '1000000');
  await page.setInputFiles('#file-input', big);
  await page.waitForFunction(() => {
    const text = document.getElementById('progress-text')?.textContent ?? '';
    return /MB/.test(text) && !document.getElementById('progress')?.hidden;
  }, null, { timeout: ANALYSIS_TIMEOUT_MS });
  await page.click('#cancel-button');
  await page.waitForSelector('#error-box:not([hidden])');
  assert.match(await page.textContent('#error-box'), /cancelled/i);
  assert.equal(await page.locator('#progress').isHidden(), true);
  assert.deepEqual(await pageQuantities(page), before);
  // The page still works after a cancel: analyse the demo again.
  await page.selectOption('#raw-format', '');
  await page.fill('#sample-rate', '');
  await page.setInputFiles('#file-input', DEMO);
  await waitForReport(page, 'preamp-shorted-input');
  await page.close();
});

test('stationarity and ergodicity: the page judges unseen records as the command line does', async () => {
  const page = await context.newPage();
  await page.goto(SITE_URL);
  await waitForReport(page, 'preamp-shorted-input');
  const dir = mkdtempSync(join(tmpdir(), 'noisesonde-stationarity-'));
  const rate = 8000;
  const n = 400_000; // 50 s: at M = 20 the segments are 16384 samples
  const noise = gaussian(21);
  // A steady record (seeded white noise), one whose level drifts (a ramp of 0.2 FS over the
  // record under noise of σ = 0.05) and one whose power grows (σ from 0.02 to 0.1).
  const records = {
    'steady-bench.wav': Array.from({ length: n }, () => 0.05 * noise()),
    'drifting-offset.wav': Array.from({ length: n }, (_, i) => 0.2 * i / n + 0.05 * noise()),
    'growing-hiss.wav': Array.from({ length: n }, (_, i) => (0.02 + 0.08 * i / n) * noise()),
  };
  const lines = ['mean', 'mean_square', 'autocorrelation'];
  const verdicts = {};
  for (const [name, samples] of Object.entries(records)) {
    const path = join(dir, name);
    writeWav(path, samples, rate);
    await page.setInputFiles('#file-input', path);
    await waitForReport(page, name);
    const cli = cliReport(path);
    const shown = await pageQuantities(page);
    verdicts[name] = {};
    for (const line of lines) {
      const want = cli.stationarity[line].stationary;
      assert.equal(shown[`stationarity.${line}.stationary`], want ? 1 : 0, `${name}: ${line}`);
      verdicts[name][line] = want;
    }
    assertMatchesReport(shown, cli);
  }
  // What the records are (closed forms of how they were made): the seeded steady record passes
  // every line; a ramp in level fails the mean line; a ramp in σ fails the mean-square line.
  assert.deepEqual(verdicts['steady-bench.wav'], { mean: true, mean_square: true, autocorrelation: true });
  assert.equal(verdicts['drifting-offset.wav'].mean, false);
  assert.equal(verdicts['growing-hiss.wav'].mean_square, false);
  await page.screenshot({ path: join(ARTIFACTS, 'stationarity.png'), fullPage: true });

  // Three realisations, each a constant offset of its own plus steady noise: each record alone
  // is steady, but the time averages disagree with each other: not ergodic in the mean.
  const offsets = [0.2, -0.3, 0.5];
  const paths = offsets.map((offset, k) => {
    const path = join(dir, `unit-${k + 1}.wav`);
    writeWav(path, Array.from({ length: 200_000 }, () => offset + 0.05 * noise()), rate);
    return path;
  });
  await page.setInputFiles('#ensemble-input', paths);
  await page.waitForSelector('#ensemble-results:not([hidden])', { timeout: ANALYSIS_TIMEOUT_MS });
  const cliEnsemble = JSON.parse(execFileSync(CLI, ['ensemble', ...paths, '--json', '-', '--quiet'], { encoding: 'utf8', maxBuffer: 1 << 28 }));
  assert.equal(cliEnsemble.ensemble.mean.ergodic, false);
  const shown = await pageQuantities(page);
  assert.equal(shown['ensemble.mean.ergodic'], 0);
  assert.equal(shown['ensemble.mean_square.ergodic'], cliEnsemble.ensemble.mean_square.ergodic ? 1 : 0);
  // The chart of the averages across records was drawn (something other than white on it).
  const inked = await page.$eval('#ensemble-canvas', (c) => {
    const d = c.getContext('2d').getImageData(0, 0, c.width, c.height).data;
    let n = 0;
    for (let i = 0; i < d.length; i += 4) if (d[i] < 200 || d[i + 1] < 200 || d[i + 2] < 200) n += 1;
    return n;
  });
  assert.ok(inked > 1000, `ensemble chart: ${inked} inked pixels`);
  const f = cliEnsemble.ensemble.mean.anova.f_statistic;
  assert.ok(Math.abs(shown['ensemble.mean.anova.f_statistic'] - f) <= 1e-9 * Math.abs(f));
  await page.close();
});

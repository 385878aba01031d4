// Live listening end to end: Debian's Chromium plays a known WAV file as its (fake) capture
// device, the real page listens to it, and the readouts must match what was written into the
// file. The outside truth is arithmetic on the signal: a sine of amplitude A has mean square
// A²/2; white noise of standard deviation σ sampled at f_s has the one-sided density 2σ²/f_s;
// levels follow from those (AES17 full scale for dBFS, 20 µPa for dB SPL).
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { mkdtempSync, mkdirSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, dirname } from 'node:path';
import { fileURLToPath } from 'node:url';
import { chromium } from 'playwright-core';
import { writeWav, toneAndNoise } from './signals.mjs';

const SITE_URL = process.env.SITE_URL ?? 'http://127.0.0.1:8700/';
const CHROMIUM = process.env.CHROMIUM ?? '/usr/bin/chromium';
const ROOT = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
const ARTIFACTS = join(ROOT, 'tests', 'artifacts');
/** How long the page may take to show settled live readouts. */
const SETTLE_TIMEOUT_MS = 60_000;

const RATE_HZ = 48_000;
/** The measured signal: a 1 kHz tone at −20 dBFS (AES17) over white noise. */
const MEASURED = { rate: RATE_HZ, seconds: 8, frequencyHz: 1000, amplitude: 0.1, noiseSd: 0.003, seed: 7 };
/** A calibrator-like tone: 1 kHz at amplitude 0.25 of full scale, a little noise. */
const CALIBRATOR = { rate: RATE_HZ, seconds: 4, frequencyHz: 1000, amplitude: 0.25, noiseSd: 1e-4, seed: 9 };
/** Reference sound pressure, Pa (ISO 1683: 20 µPa). */
const P0_PA = 20e-6;

const dir = mkdtempSync(join(tmpdir(), 'noisesonde-live-'));

/** A browser whose microphone plays `wav` in a loop, with permission granted. */
async function browserPlaying(wav) {
  return chromium.launchPersistentContext(mkdtempSync(join(tmpdir(), 'noisesonde-live-chromium-')), {
    executablePath: CHROMIUM,
    headless: true,
    args: ['--no-sandbox', '--disable-gpu', '--no-first-run', '--disable-background-networking',
      '--use-fake-device-for-media-stream', '--use-fake-ui-for-media-stream', `--use-file-for-fake-audio-capture=${wav}`],
    permissions: ['microphone'],
  });
}

/** Every data-quantity of the live section into { path: number } (the file's report, shown
 * elsewhere on the page, uses the same names). */
async function quantities(page) {
  return page.$$eval('#live-section [data-quantity]', (nodes) => Object.fromEntries(
    nodes.filter((n) => n.dataset.value !== undefined && n.dataset.value !== '')
      .map((n) => [n.dataset.quantity, Number(n.dataset.value)])));
}

/** Starts listening and waits until at least `seconds` of input have been analysed. */
async function listen(page, seconds) {
  await page.goto(SITE_URL);
  await page.waitForSelector('#results [data-quantity="sample_rate_hz"]', { timeout: SETTLE_TIMEOUT_MS }); // the demo is in
  await page.click('[data-action="listen"]');
  await page.waitForFunction((s) => Number(document.querySelector('#live-duration [data-quantity="duration_s"]')?.getAttribute('data-value')) >= s,
    seconds, { timeout: SETTLE_TIMEOUT_MS });
}

function near(actual, expected, relative, what) {
  assert.ok(Number.isFinite(actual), `${what}: not shown (${actual})`);
  assert.ok(Math.abs(actual - expected) <= relative * Math.abs(expected), `${what}: ${actual}, expected ${expected} ± ${relative * 100} %`);
}

function within(actual, expected, tolerance, what) {
  assert.ok(Number.isFinite(actual), `${what}: not shown (${actual})`);
  assert.ok(Math.abs(actual - expected) <= tolerance, `${what}: ${actual}, expected ${expected} ± ${tolerance}`);
}

let measuredWav;
let calibratorWav;
before(() => {
  mkdirSync(ARTIFACTS, { recursive: true });
  measuredWav = join(dir, 'tone-and-noise.wav');
  writeWav(measuredWav, toneAndNoise(MEASURED), RATE_HZ);
  calibratorWav = join(dir, 'calibrator.wav');
  writeWav(calibratorWav, toneAndNoise(CALIBRATOR), RATE_HZ);
});

test('live readouts match the tone and the noise written into the capture', async () => {
  const context = await browserPlaying(measuredWav);
  try {
    const page = await context.newPage();
    const errors = [];
    page.on('pageerror', (e) => errors.push(e.message));
    await listen(page, 4);
    const q = await quantities(page);
    assert.deepEqual(errors, []);
    const toneMs = MEASURED.amplitude ** 2 / 2; // mean square of a sine
    // One-sided white density of the noise as written (2σ²/f_s at the file's rate); the
    // browser may resample the capture (Chromium's fake device runs at 44.1 kHz), which keeps
    // the density in the passband.
    const noiseDensity = 2 * MEASURED.noiseSd ** 2 / MEASURED.rate;
    within(q['live.tone.frequency_hz'], MEASURED.frequencyHz, 0.5, 'tone frequency (Hz)');
    near(q['live.tone.rms'], Math.sqrt(toneMs), 0.01, 'tone RMS (FS)');
    // dBFS after AES17: a full-scale sine (mean square 1/2) is 0 dBFS.
    within(q['live.tone.level_db'], 10 * Math.log10(toneMs / 0.5), 0.1, 'tone level (dBFS)');
    near(q['live.floor.density'], noiseDensity, 0.1, 'noise density (FS²/Hz)');
    near(q['moments.rms'], Math.sqrt(toneMs + MEASURED.noiseSd ** 2), 0.01, 'RMS (FS)');
    within(q['live.levels.z.leq_session_db'], 10 * Math.log10((toneMs + MEASURED.noiseSd ** 2) / 0.5), 0.1, 'LZeq (dBFS)');
    // A-weighting is 0 dB at 1 kHz (IEC 61672-1 Table 3): the tone dominates, so LAeq ≈ LZeq
    // less the weighted-away part of the noise (under 0.05 dB here).
    within(q['live.levels.a.leq_session_db'], q['live.levels.z.leq_session_db'], 0.1, 'LAeq vs LZeq (dB)');
    // The third-octave band at 1 kHz holds the tone and 231 Hz of noise; the bands sum to the
    // overall level of their span.
    within(q['live.bands.third.z.1000'], 10 * Math.log10((toneMs + noiseDensity * 230.77) / 0.5), 0.1, '1 kHz third-octave band (dBFS)');
    assert.equal(q['moments.clipped_samples'], 0);
    assert.ok(await page.locator('#overload').isHidden());
    await page.screenshot({ path: join(ARTIFACTS, 'live.png'), fullPage: true });

    // The processing report shows what the browser granted for the same request.
    const granted = await page.evaluate(async () => {
      const stream = await navigator.mediaDevices.getUserMedia({ audio: { echoCancellation: false, noiseSuppression: false, autoGainControl: false } });
      const settings = stream.getAudioTracks()[0].getSettings();
      stream.getTracks().forEach((t) => t.stop());
      return settings;
    });
    for (const flag of ['echoCancellation', 'noiseSuppression', 'autoGainControl']) {
      const shown = await page.textContent(`[data-capture="capture.${flag}"]`);
      const expected = granted[flag] === undefined ? 'not reported' : granted[flag] ? 'ON' : 'off';
      assert.equal(shown, expected, flag);
    }
    const rate = await page.textContent('[data-capture="capture.context_sample_rate_hz"]');
    assert.equal(rate, `${q.sample_rate_hz} Hz`);

    // "Save as WAV": the last 2 s as 24-bit PCM, and the report beside it with its calibration.
    await page.fill('#record-seconds', '2');
    await page.selectOption('#record-format', 'pcm24');
    const downloads = [];
    page.on('download', (d) => downloads.push(d));
    await page.click('#record-save');
    for (let i = 0; i < 50 && downloads.length < 2; i += 1) await page.waitForTimeout(100);
    assert.equal(downloads.length, 2, `a WAV and its report (page says: ${await page.textContent("#live-unavailable")} | ${await page.textContent("#record-status")})`);
    const wavBytes = readFileSync(await downloads.find((d) => d.suggestedFilename().endsWith('.wav')).path());
    // RIFF/WAVE, PCM (tag 1), mono, 24 bits, 2 s of samples (Multimedia Programming Interface spec).
    assert.equal(wavBytes.toString('latin1', 8, 12), 'WAVE');
    const fmt = wavBytes.indexOf('fmt ');
    assert.equal(wavBytes.readUInt16LE(fmt + 8), 1);
    assert.equal(wavBytes.readUInt16LE(fmt + 10), 1);
    assert.equal(wavBytes.readUInt32LE(fmt + 12), q.sample_rate_hz);
    assert.equal(wavBytes.readUInt16LE(fmt + 22), 24);
    const data = wavBytes.indexOf('data');
    assert.equal(wavBytes.readUInt32LE(data + 4), 2 * q.sample_rate_hz * 3);
    const saved = JSON.parse(readFileSync(await downloads.find((d) => d.suggestedFilename().endsWith('.json')).path(), 'utf8'));
    assert.equal(saved.calibration.scale_units_per_fs, 1);
    assert.equal(saved.unit, 'FS');
    assert.ok(saved.live.levels.length === 3);
  } finally {
    await context.close();
  }
});

test('calibrating from a calibrator tone gives the factor of its known level', async () => {
  const context = await browserPlaying(calibratorWav);
  try {
    const page = await context.newPage();
    await listen(page, 2);
    await page.selectOption('#cal-level', '94');
    await page.click('#cal-from-tone');
    await page.waitForFunction(() => document.getElementById('unit')?.value === 'Pa', null, { timeout: SETTLE_TIMEOUT_MS });
    const scale = Number(await page.inputValue('#scale'));
    // 94 dB SPL is 20 µPa × 10^(94/20) = 1.002374 Pa rms (REFERENCES §9); the tone's rms is
    // A/√2 of full scale, so one full scale is that many pascals.
    const expected = (P0_PA * 10 ** (94 / 20)) / (CALIBRATOR.amplitude / Math.SQRT2);
    near(scale, expected, 0.005, 'calibration factor (Pa per full scale)');
    const stored = await page.evaluate(() => JSON.parse(localStorage.getItem('noisesonde.live-calibration') ?? 'null'));
    near(stored.scale_units_per_fs, expected, 0.005, 'stored factor');
    assert.match(stored.set_at, /^\d{4}-\d{2}-\d{2}T/);
    // Now calibrated, the calibrator reads 94 dB SPL.
    await page.waitForFunction(() => /dB SPL/.test(document.getElementById('level-convention')?.textContent ?? ''), null, { timeout: SETTLE_TIMEOUT_MS });
    await page.waitForFunction(() => Number(document.querySelector('#live-duration [data-quantity="duration_s"]')?.getAttribute('data-value')) >= 1.5,
      null, { timeout: SETTLE_TIMEOUT_MS });
    const q = await quantities(page);
    within(q['live.tone.level_db'], 94, 0.1, 'calibrator level after calibration (dB SPL)');
  } finally {
    await context.close();
  }
});

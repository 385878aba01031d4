// Live listening under load: Debian's headless Chromium plays a 48 kHz tone-plus-noise WAV as
// its fake capture device, the page listens with default settings (4096-point Hann segments,
// 50 % overlap, linear averaging over 32 segments), and after a warm-up this measures, over a
// fixed window: the frames per second the page received, and the share of one core the live
// worker spent analysing (its own busy time / wall time, measured with performance.now()
// around each block and frame in www/worker.js), plus blocks the capture dropped.
// Run by `cargo xtask bench`; writes a Markdown table to $OUT (target/bench-live.md).
import { mkdirSync, mkdtempSync, writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { cpus, loadavg, tmpdir } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '..');
const requireFromTests = createRequire(join(ROOT, 'tests', 'browser', 'package.json'));
const { chromium } = requireFromTests('playwright-core');
const { writeWav, toneAndNoise } = await import(join(ROOT, 'tests', 'browser', 'signals.mjs'));

const SITE_URL = process.env.SITE_URL;
const CHROMIUM = process.env.CHROMIUM ?? '/usr/bin/chromium';
const OUT = resolve(ROOT, process.env.OUT ?? 'target/bench-live.md');
const WARM_UP_S = 5;
const WINDOW_S = 20;
const TARGET_FPS = 20;

if (!SITE_URL) throw new Error('SITE_URL is not set (run `cargo xtask bench`)');
const dir = mkdtempSync(join(tmpdir(), 'noisesonde-bench-live-'));
const wav = join(dir, 'bench-tone-and-noise.wav');
writeWav(wav, toneAndNoise({ rate: 48000, seconds: 10, frequencyHz: 1000, amplitude: 0.1, noiseSd: 0.01, seed: 3 }), 48000);
const context = await chromium.launchPersistentContext(mkdtempSync(join(tmpdir(), 'noisesonde-bench-live-chromium-')), {
  executablePath: CHROMIUM,
  headless: true,
  args: ['--no-sandbox', '--disable-gpu', '--no-first-run', '--disable-background-networking',
    '--use-fake-device-for-media-stream', '--use-fake-ui-for-media-stream', `--use-file-for-fake-audio-capture=${wav}`],
  permissions: ['microphone'],
});
try {
  const page = await context.newPage();
  await page.goto(SITE_URL);
  await page.waitForSelector('#results [data-quantity="sample_rate_hz"]', { timeout: 60_000 });
  await page.click('[data-action="listen"]');
  const read = () => page.evaluate(() => {
    const value = (id) => Number(document.querySelector(`#${id} [data-value]`)?.getAttribute('data-value'));
    return { duration: value('live-duration'), fps: value('live-fps'), load: value('live-load'), dropped: value('live-dropped'), rate: value('live-rate') };
  });
  await page.waitForTimeout(WARM_UP_S * 1000);
  // Frames counted by the page over the window, from its own frame clock.
  await page.evaluate(() => {
    window.__frames = 0;
    new MutationObserver(() => { window.__frames += 1; }).observe(document.getElementById('live-duration'), { childList: true });
  });
  const start = await read();
  const t0 = Date.now();
  await page.waitForTimeout(WINDOW_S * 1000);
  const end = await read();
  const frames = await page.evaluate(() => window.__frames);
  const wall = (Date.now() - t0) / 1000;
  const fps = frames / wall;
  const rows = [
    `# Live listening under load (${new Date().toISOString().slice(0, 10)})`,
    '',
    `Headless Chromium (${CHROMIUM}) on ${cpus().length} cores (${cpus()[0]?.model ?? 'unknown'}), load average ${loadavg().map((l) => l.toFixed(2)).join(' ')}. `
      + `Fake capture device playing a ${wav.split('/').pop()} (1 kHz tone + white noise, 48 kHz); the audio engine ran at ${end.rate} Hz. `
      + `Default settings: Hann, 4096-point segments, 50 % overlap, linear average of 32 segments. Warm-up ${WARM_UP_S} s, window ${wall.toFixed(1)} s.`,
    '',
    '| frames drawn per s (page) | worker busy, share of one core (whole session) | captured audio analysed in the window (s) | dropped frames | target |',
    '| ---: | ---: | ---: | ---: | --- |',
    `| ${fps.toFixed(1)} | ${(end.load * 100).toFixed(2)} % | ${(end.duration - start.duration).toFixed(1)} | ${end.dropped} | ≥ ${TARGET_FPS} frames/s: ${fps >= TARGET_FPS ? 'met' : 'NOT met'} |`,
    '',
  ];
  const table = rows.join('\n');
  console.log(table);
  mkdirSync(dirname(OUT), { recursive: true });
  writeFileSync(OUT, table);
} finally {
  await context.close();
}

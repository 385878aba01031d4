// @ts-check
// The page: collects the file and settings, hands them to the analysis worker, shows the report.
// No signal processing here: numbers come from the Rust pipeline (worker) and plots are drawn
// by Rust (ReportView) on the canvases.
import init, { ReportView, draw_ensemble } from './pkg/noisesonde.js';
import { MSG, rejoinArrays } from './protocol.js';
import { wasmBytes, createWorker, demoFile, captureWorkletUrl } from './platform.js';
import { initLive } from './live.js';
import { byId, download } from './dom.js';

/** The demo recording's calibration, as its README states: 1.0 full scale = 2 V. */
const DEMO = { scale: '2', unit: 'V' };

const $ = {
  fileInput: /** @type {HTMLInputElement} */ (byId('file-input')),
  dropZone: byId('drop-zone'),
  sourceLine: byId('source-line'),
  errorBox: byId('error-box'),
  progress: byId('progress'),
  progressBar: /** @type {HTMLProgressElement} */ (byId('progress-bar')),
  progressText: byId('progress-text'),
  cancel: byId('cancel-button'),
  rawFormat: /** @type {HTMLSelectElement} */ (byId('raw-format')),
  rawChannels: /** @type {HTMLInputElement} */ (byId('raw-channels')),
  sampleRate: /** @type {HTMLInputElement} */ (byId('sample-rate')),
  channel: /** @type {HTMLSelectElement} */ (byId('channel')),
  channelLabel: byId('channel-label'),
  layoutForm: /** @type {HTMLDetailsElement} */ (byId('layout-form')),
  layoutApply: byId('layout-apply'),
  form: /** @type {HTMLFormElement} */ (byId('settings-form')),
  window: /** @type {HTMLSelectElement} */ (byId('window')),
  kaiserLabel: byId('kaiser-beta-label'),
  kaiserBeta: /** @type {HTMLInputElement} */ (byId('kaiser-beta')),
  segment: /** @type {HTMLSelectElement} */ (byId('segment')),
  resolution: /** @type {HTMLOutputElement} */ (byId('resolution')),
  overlap: /** @type {HTMLInputElement} */ (byId('overlap')),
  detrend: /** @type {HTMLSelectElement} */ (byId('detrend')),
  average: /** @type {HTMLSelectElement} */ (byId('average')),
  maxLag: /** @type {HTMLInputElement} */ (byId('max-lag')),
  confidence: /** @type {HTMLInputElement} */ (byId('confidence')),
  statSegments: /** @type {HTMLInputElement} */ (byId('stat-segments')),
  statAlpha: /** @type {HTMLInputElement} */ (byId('stat-alpha')),
  statVerdict: byId('stationarity-verdict'),
  statTable: /** @type {HTMLTableElement} */ (byId('stationarity-table')),
  statErgodicity: byId('stationarity-ergodicity'),
  ensembleInput: /** @type {HTMLInputElement} */ (byId('ensemble-input')),
  ensembleResults: byId('ensemble-results'),
  ensembleVerdict: byId('ensemble-verdict'),
  ensembleTable: /** @type {HTMLTableElement} */ (byId('ensemble-table')),
  ensembleCanvas: /** @type {HTMLCanvasElement} */ (byId('ensemble-canvas')),
  segmentsCanvas: /** @type {HTMLCanvasElement} */ (byId('segments-canvas')),
  stretchesCanvas: /** @type {HTMLCanvasElement} */ (byId('stretches-canvas')),
  spectrogramCanvas: /** @type {HTMLCanvasElement} */ (byId('spectrogram-canvas')),
  scale: /** @type {HTMLInputElement} */ (byId('scale')),
  unit: /** @type {HTMLInputElement} */ (byId('unit')),
  share: /** @type {HTMLAnchorElement} */ (byId('share-link')),
  results: byId('results'),
  runLine: byId('run-line'),
  warnings: byId('warnings'),
  psdMode: /** @type {HTMLSelectElement} */ (byId('psd-mode')),
  showCi: /** @type {HTMLInputElement} */ (byId('show-ci')),
  psdCanvas: /** @type {HTMLCanvasElement} */ (byId('psd-canvas')),
  acfMode: /** @type {HTMLSelectElement} */ (byId('acf-mode')),
  acfCanvas: /** @type {HTMLCanvasElement} */ (byId('acf-canvas')),
  cursorA: byId('cursor-a'),
  cursorAValue: byId('cursor-a-value'),
  cursorB: byId('cursor-b'),
  cursorBValue: byId('cursor-b-value'),
  bandRms: byId('band-rms'),
  quantities: /** @type {HTMLTableElement} */ (byId('quantities')),
};

/** What the page shows now. The previous result stays until a new one replaces it. */
const state = {
  /** @type {File | null} */ file: null,
  /** @type {any} */ report: null,
  /** @type {ReportView | null} */ view: null,
  /** @type {(number | null)[]} */ cursors: [null, null],
  activeCursor: 0,
  /** @type {{ id: number, started: number } | null} */ running: null,
  requestId: 0,
  /** The scale and unit fields still hold the demo's calibration, untouched by the user. */
  demoCalibration: false,
};

// ---------------------------------------------------------------- worker lifecycle
/** @type {Worker} */
let worker;
/** @type {WebAssembly.Module} */
let wasmModule;
function startWorker() {
  worker = createWorker();
  worker.postMessage({ type: MSG.INIT, module: wasmModule });
  worker.onmessage = onWorkerMessage;
  worker.onerror = (event) => {
    showError(`the analysis engine stopped: ${event.message || 'unknown error'}`);
    finishRun();
  };
}

/** @param {MessageEvent} event */
function onWorkerMessage(event) {
  const msg = event.data;
  if (msg.type === MSG.READY) return;
  if (msg.type === MSG.ERROR && msg.id === -1) {
    showError(msg.message);
    return;
  }
  if (!state.running || msg.id !== state.running.id) return; // a stale reply
  if (msg.type === MSG.PROGRESS) {
    showProgress(msg.bytes, msg.total);
  } else if (msg.type === MSG.RESULT) {
    finishRun();
    showReport(msg.summary, msg.arrays);
  } else if (msg.type === MSG.ENSEMBLE_RESULT) {
    finishRun();
    showEnsemble(msg.reportJson);
  } else if (msg.type === MSG.ERROR) {
    finishRun();
    showError(msg.message);
    if (msg.kind === 'layout' || msg.kind === 'sample_rate') askForLayout(msg.kind);
  }
}

/**
 * The file cannot be read without its layout: open the form at the field that is missing. The
 * file is kept; "Analyse with this layout" reads it again.
 * @param {'layout' | 'sample_rate'} kind
 */
function askForLayout(kind) {
  $.layoutForm.open = true;
  $.layoutForm.classList.add('needed');
  $.errorBox.append(' Fill in the input layout below, then choose “Analyse with this layout”.');
  (kind === 'layout' ? $.rawFormat : $.sampleRate).focus();
}

/**
 * The channel list: from the report (names where the file has them) after a run, or from the
 * layout form's channel count for a raw file before one.
 * @param {number} count @param {number} chosen @param {string[]} [names]
 */
function listChannels(count, chosen, names = []) {
  const options = [];
  for (let c = 0; c < Math.min(count, 4096); c += 1) {
    const option = document.createElement('option');
    option.value = String(c);
    option.textContent = names[c] ? `${c}: ${names[c]}` : String(c);
    options.push(option);
  }
  $.channel.replaceChildren(...options);
  $.channel.value = String(Math.min(chosen, Math.max(0, count - 1)));
  $.channelLabel.hidden = count <= 1;
}

/** @param {File} file */
function analyze(file) {
  state.file = file;
  const id = ++state.requestId;
  state.running = { id, started: performance.now() };
  hideError();
  $.progress.hidden = false;
  $.progressBar.value = 0;
  $.progressText.textContent = `reading ${file.name}…`;
  worker.postMessage({ type: MSG.ANALYZE, id, file, input: readInput(), settings: readSettings() });
}

/** @param {File[]} files */
function analyzeEnsemble(files) {
  const id = ++state.requestId;
  state.running = { id, started: performance.now() };
  hideError();
  $.progress.hidden = false;
  $.progressBar.value = 0;
  $.progressText.textContent = `reading ${files.length} recordings…`;
  worker.postMessage({ type: MSG.ANALYZE_ENSEMBLE, id, files, input: readInput(), settings: readSettings() });
}

/**
 * The ensemble verdict: for the mean, the mean square and R at each lag, whether the records'
 * time averages agree with each other (and so with the ensemble average) within their spread.
 * @param {string} json
 */
function showEnsemble(json) {
  const e = JSON.parse(json).ensemble;
  $.ensembleVerdict.textContent = e.verdict;
  $.ensembleVerdict.classList.toggle('fails', !(e.mean.ergodic && e.mean_square.ergodic));
  const unit = JSON.parse(json).unit;
  /** @type {[string, string, any][]} */
  const lines = [['mean (DC level)', 'ensemble.mean', e.mean], ['mean square (power)', 'ensemble.mean_square', e.mean_square],
    ...e.autocorrelation.map((/** @type {any} */ l, /** @type {number} */ i) => /** @type {[string, string, any]} */ ([`R at lag ${formatNumber(l.lag_s)} s`, `ensemble.autocorrelation.${i}`, l]))];
  $.ensembleTable.tBodies[0].replaceChildren(...lines.map(([name, path, line]) => {
    const tr = document.createElement('tr');
    const th = document.createElement('th');
    th.scope = 'row';
    th.append(name, document.createElement('br'), line.finding);
    const judged = document.createElement('td');
    const flag = document.createElement('span');
    flag.dataset.quantity = `${path}.ergodic`;
    flag.dataset.value = line.ergodic ? '1' : '0';
    flag.textContent = line.ergodic ? 'ergodic' : 'NOT ergodic';
    judged.className = line.ergodic ? 'judged-yes' : 'judged-no';
    judged.append(flag);
    const average = document.createElement('td');
    average.append(quantity(`${path}.ensemble_average`, line.ensemble_average, path.endsWith('mean') ? unit : `${unit}^2`));
    const each = document.createElement('td');
    each.textContent = line.time_averages.map((/** @type {number} */ v, /** @type {number} */ i) => `${formatNumber(v)} ± ${formatNumber(line.standard_errors[i])}`).join('; ');
    const f = document.createElement('td');
    f.append(quantity(`${path}.anova.f_statistic`, line.anova.f_statistic), ` (${formatNumber(line.anova.f_critical)})`);
    const p = document.createElement('td');
    p.append(quantity(`${path}.anova.p_value`, line.anova.p_value));
    tr.append(th, judged, average, each, f, p);
    return tr;
  }));
  $.ensembleResults.hidden = false;
  try {
    draw_ensemble($.ensembleCanvas, json, JSON.stringify({ pixel_ratio: sizeCanvas($.ensembleCanvas) }));
  } catch (err) {
    showError(`could not draw the ensemble: ${err instanceof Error ? err.message : err}`);
  }
}

function finishRun() {
  state.running = null;
  $.progress.hidden = true;
}

function cancelRun() {
  if (!state.running) return;
  worker.terminate();
  startWorker();
  finishRun();
  showError('Analysis cancelled; the previous result is still shown.');
}

/** @param {number} bytes @param {number} total */
function showProgress(bytes, total) {
  if (!state.running || total <= 0) return;
  const fraction = Math.min(1, bytes / total);
  $.progressBar.value = fraction;
  const elapsedS = (performance.now() - state.running.started) / 1000;
  const leftS = fraction > 0 ? (elapsedS * (1 - fraction)) / fraction : NaN;
  const left = Number.isFinite(leftS) ? `, about ${leftS < 1 ? '<1' : Math.round(leftS)} s left` : '';
  $.progressText.textContent = `${(bytes / 1e6).toFixed(1)} of ${(total / 1e6).toFixed(1)} MB${left}`;
}

// ---------------------------------------------------------------- settings
function readInput() {
  /** @type {Record<string, unknown>} */
  const input = {};
  if ($.rawFormat.value) {
    input.raw = $.rawFormat.value;
    input.channels = Number($.rawChannels.value) || 1;
  }
  if ($.sampleRate.value !== '') input.sample_rate_hz = Number($.sampleRate.value);
  if ($.channel.value !== '' && Number($.channel.value) > 0) input.channel = Number($.channel.value);
  return input;
}

function windowSetting() {
  return $.window.value === 'kaiser'
    ? { name: 'kaiser', beta: Number($.kaiserBeta.value) }
    : { name: $.window.value };
}

function readSettings() {
  const unit = $.unit.value.trim();
  return {
    welch: {
      window: windowSetting(),
      segment_len: Number($.segment.value),
      overlap_frac: Number($.overlap.value),
      detrend: $.detrend.value,
      average: $.average.value,
    },
    max_lag_s: $.maxLag.value === '' ? null : Number($.maxLag.value),
    acf_estimator: 'biased',
    calibration: { scale_units_per_fs: Number($.scale.value), unit: unit === '' ? null : unit },
    confidence_level: Number($.confidence.value),
    stationarity: { segments: Number($.statSegments.value), alpha: Number($.statAlpha.value) },
  };
}

/** Fields kept in the URL fragment: settings and view, never data. */
const FRAGMENT_FIELDS = {
  window: $.window, beta: $.kaiserBeta, segment: $.segment, overlap: $.overlap, detrend: $.detrend,
  average: $.average, maxlag: $.maxLag, confidence: $.confidence, scale: $.scale, unit: $.unit,
  m: $.statSegments, alpha: $.statAlpha,
  psd: $.psdMode, acf: $.acfMode,
};

function fragment() {
  const params = new URLSearchParams();
  for (const [key, input] of Object.entries(FRAGMENT_FIELDS)) params.set(key, input.value);
  params.set('ci', $.showCi.checked ? '1' : '0');
  state.cursors.forEach((f, i) => { if (f !== null) params.set(i === 0 ? 'a' : 'b', String(f)); });
  return `#${params.toString()}`;
}

/** @returns {boolean} whether the fragment held settings */
function applyFragment() {
  const text = location.hash.replace(/^#/, '');
  if (!text) return false;
  const params = new URLSearchParams(text);
  for (const [key, input] of Object.entries(FRAGMENT_FIELDS)) {
    const value = params.get(key);
    if (value !== null) input.value = value;
  }
  if (params.has('ci')) $.showCi.checked = params.get('ci') === '1';
  const a = Number(params.get('a'));
  const b = Number(params.get('b'));
  state.cursors = [params.has('a') && a > 0 ? a : null, params.has('b') && b > 0 ? b : null];
  return true;
}

function updateShareLink() {
  $.share.href = fragment();
}

function updateDerived() {
  $.kaiserLabel.hidden = $.window.value !== 'kaiser';
  const rate = state.report ? state.report.sample_rate_hz : NaN;
  if (Number.isFinite(rate)) {
    const binHz = rate / Number($.segment.value);
    $.resolution.textContent = `bins every ${formatNumber(binHz)} Hz`;
    $.resolution.dataset.value = String(binHz);
  } else {
    $.resolution.textContent = '';
  }
}

// ---------------------------------------------------------------- showing a report
/** @param {number | null | undefined} v */
function formatNumber(v) {
  if (v === null || v === undefined || !Number.isFinite(v)) return '—';
  if (v === 0) return '0';
  const a = Math.abs(v);
  return a >= 1e-3 && a < 1e6 ? String(Number(v.toPrecision(6))) : v.toExponential(4);
}

/**
 * A value with its machine-readable twin: data-quantity names the path in the JSON report,
 * data-value holds the number in the report's unit (SI where the unit is).
 * @param {string} path @param {number | null | undefined} value @param {string} [unit]
 */
function quantity(path, value, unit = '') {
  const span = document.createElement('span');
  span.dataset.quantity = path;
  span.dataset.value = value === null || value === undefined ? '' : String(value);
  span.textContent = formatNumber(value) + (unit ? ` ${unit}` : '');
  return span;
}

/**
 * Shows a report that arrived as a JSON summary plus its long arrays (transferred typed arrays).
 * @param {string} summary @param {Record<string, Float64Array>} arrays
 */
function showReport(summary, arrays) {
  let view;
  try {
    view = ReportView.from_parts(summary, arrays);
  } catch (err) {
    showError(`could not read the report: ${err instanceof Error ? err.message : err}`);
    return;
  }
  state.view?.free();
  state.view = view;
  // The page reads scalars from the summary and the few array entries it shows from the arrays.
  const r = rejoinArrays(JSON.parse(summary), arrays);
  state.report = r;
  $.sourceLine.textContent = `${r.source.name}: ${r.source.format}, channel ${r.channel}${r.source.channel_name ? ` (${r.source.channel_name})` : ''} of ${r.source.channels}`;
  listChannels(r.source.channels, r.channel, r.source.channel_names);
  $.layoutForm.classList.remove('needed');
  renderRunLine(r);
  renderWarnings(r.warnings);
  renderQuantities($.quantities, r);
  renderStationarity(r);
  $.results.hidden = false;
  updateDerived();
  drawPlots();
  updateShareLink();
}

/** @param {any} r */
function renderRunLine(r) {
  const p = r.psd;
  const windowName = `${p.window.name}${p.window.beta !== undefined ? ` β=${p.window.beta}` : ''}`;
  /** @type {(string | Node)[]} */
  const parts = [
    'sample rate ', quantity('sample_rate_hz', r.sample_rate_hz, 'Hz'),
    ', ', quantity('samples', r.samples), ' samples (', quantity('duration_s', r.duration_s, 's'), '). ',
    `Window ${windowName}, segment `, quantity('psd.segment_len', p.segment_len),
    ', overlap ', quantity('psd.overlap_len', p.overlap_len), ' samples, ENBW ',
    quantity('psd.enbw_bins', p.enbw_bins, 'bins'), ' = RBW ', quantity('psd.enbw_hz', p.enbw_hz, 'Hz'), ', ',
    quantity('psd.segments', p.segments), ' segments, ', quantity('psd.dof', p.dof),
    ` degrees of freedom; ${Math.round(p.confidence_level * 100)} % interval ×`,
    quantity('psd.ci_factor_lower', p.ci_factor_lower), ' to ×', quantity('psd.ci_factor_upper', p.ci_factor_upper), '. ',
    'Calibration: ', quantity('calibration.scale_units_per_fs', r.calibration.scale_units_per_fs, r.unit),
    r.source.full_scale ? ' per digital full scale.' : ' per input unit.',
  ];
  $.runLine.replaceChildren(...parts);
}

/** @param {string[]} warnings */
function renderWarnings(warnings) {
  $.warnings.replaceChildren(...warnings.map((w) => {
    const li = document.createElement('li');
    li.textContent = w;
    return li;
  }));
}

/**
 * The lab-quantities table of a report (a file's, or a live frame's).
 * @param {HTMLTableElement} table @param {any} r
 */
function renderQuantities(table, r) {
  const u = r.units;
  const m = r.moments;
  const c = r.checks;
  /** @type {[string, string, number | null, string, string][]} */
  const rows = [
    ['DC level', 'moments.mean', m.mean, u.amplitude, 'mean of the samples'],
    ['RMS (total)', 'moments.rms', m.rms, u.amplitude, '√ of the total power'],
    ['AC RMS', 'moments.std_dev', m.std_dev, u.amplitude, 'standard deviation: the noise'],
    ['Total power', 'moments.mean_square', m.mean_square, u.power, 'mean square = R(0), DC + AC'],
    ['AC power', 'moments.variance', m.variance, u.power, 'variance = C(0) = ∫ PSD df'],
    ['DC power', 'moments.dc_power', m.dc_power, u.power, 'mean²'],
    ['R(0) from the autocorrelation', 'acf.autocorrelation.0', r.acf.autocorrelation[0], u.power, 'equals the total power'],
    ['C(0) from the autocovariance', 'acf.autocovariance.0', r.acf.autocovariance[0], u.power, 'equals the AC power'],
    ['∫ PSD df', 'checks.parseval.integrated_psd', c.parseval.integrated_psd, u.power, `the area under the PSD; compare with the ${c.parseval.compared_with.replace('_', ' ')}`],
    ['Parseval ratio', 'checks.parseval.ratio', c.parseval.ratio, '', `∫ PSD df ÷ ${c.parseval.compared_with.replace('_', ' ')}; 1 when the numbers agree`],
    ['Wiener–Khinchin deviation', 'checks.wiener_khinchin.max_deviation', c.wiener_khinchin.max_deviation, 'of R(0)', `largest gap between the ACF from the PSD and the direct ACF over ${c.wiener_khinchin.lags_compared} lags`],
    ['Correlation time (1/e)', 'acf.one_over_e_s', r.acf.one_over_e_s, 's', 'lag where the coefficient falls to 1/e'],
    ['First zero crossing', 'acf.zero_crossing_s', r.acf.zero_crossing_s, 's', 'lag where the coefficient first reaches 0'],
    ['Minimum', 'moments.min', m.min, u.amplitude, 'smallest sample'],
    ['Maximum', 'moments.max', m.max, u.amplitude, 'largest sample'],
    ['Crest factor', 'moments.crest_factor', m.crest_factor, '', 'peak ÷ RMS'],
    ['Clipped samples', 'moments.clipped_samples', m.clipped_samples, '', 'samples at or beyond full scale'],
  ];
  const body = table.tBodies[0];
  body.replaceChildren(...rows.map(([label, path, value, unit, meaning]) => {
    const tr = document.createElement('tr');
    const th = document.createElement('th');
    th.scope = 'row';
    th.textContent = label;
    const tdValue = document.createElement('td');
    tdValue.append(quantity(path, value));
    const tdUnit = document.createElement('td');
    tdUnit.textContent = unit;
    const tdMeaning = document.createElement('td');
    tdMeaning.textContent = meaning;
    tr.append(th, tdValue, tdUnit, tdMeaning);
    return tr;
  }));
}

/**
 * The stationarity verdict and its evidence: each line with both tests' statistics and
 * acceptance intervals (never a bare tick), what a failure would mean, and what to try.
 * @param {any} r
 */
function renderStationarity(r) {
  const s = r.stationarity;
  const body = $.statTable.tBodies[0];
  if (!s) {
    $.statVerdict.textContent = 'No stationarity tests: the record is too short for the chosen number of segments (see the warnings).';
    $.statVerdict.classList.remove('fails');
    body.replaceChildren();
    $.statErgodicity.textContent = '';
    return;
  }
  $.statVerdict.replaceChildren(s.verdict);
  const fails = !(s.mean.stationary && s.mean_square.stationary && s.autocorrelation.stationary);
  $.statVerdict.classList.toggle('fails', fails);
  /** @type {HTMLTableRowElement[]} */
  const rows = [];
  const cell = (/** @type {(string | Node)[]} */ ...parts) => {
    const td = document.createElement('td');
    td.append(...parts);
    return td;
  };
  const judged = (/** @type {string} */ path, /** @type {boolean} */ ok) => {
    const span = document.createElement('span');
    span.dataset.quantity = path;
    span.dataset.value = ok ? '1' : '0';
    span.textContent = ok ? 'stationary' : 'NOT stationary';
    const td = cell(span);
    td.className = ok ? 'judged-yes' : 'judged-no';
    return td;
  };
  for (const [name, key] of [['mean (DC level)', 'mean'], ['mean square (power)', 'mean_square']]) {
    const line = s[key];
    const tests = [['reverse arrangements', 'reverse_arrangements', 'A'], ['runs about the median', 'runs', 'r']];
    tests.forEach(([testName, testKey, symbol], i) => {
      const t = line[testKey];
      const tr = document.createElement('tr');
      if (i === 0) {
        const th = document.createElement('th');
        th.scope = 'row';
        th.rowSpan = 2;
        th.append(name, document.createElement('br'), line.finding, document.createElement('br'), `If not: ${line.advice}.`);
        tr.append(th, judged(`stationarity.${key}.stationary`, line.stationary));
      } else {
        tr.append(cell(''));
      }
      tr.append(
        cell(`${testName} (${t.accepted ? 'accepts' : 'rejects'})`),
        cell(`${symbol} = `, quantity(`stationarity.${key}.${testKey}.statistic`, t.statistic)),
        cell(`${t.lower} < ${symbol} ≤ ${t.upper} (exact, α = ${s.alpha})`),
        cell(t.meaning),
      );
      rows.push(tr);
    });
  }
  const a = s.autocorrelation;
  const c = a.comparison;
  const tr = document.createElement('tr');
  const th = document.createElement('th');
  th.scope = 'row';
  th.append('autocorrelation (a function of lag alone)', document.createElement('br'), a.finding, document.createElement('br'), `If not: ${a.advice}.`);
  tr.append(
    th,
    judged('stationarity.autocorrelation.stationary', a.stationary),
    cell(`${c.stretches} stretches against the pooled curve, Bartlett standard errors`),
    cell('largest deviation ', quantity('stationarity.autocorrelation.comparison.largest_deviation', c.largest_deviation), ' standard errors'),
    cell('below ', quantity('stationarity.autocorrelation.comparison.threshold', c.threshold)),
    cell(c.meaning),
  );
  rows.push(tr);
  body.replaceChildren(...rows);
  $.statErgodicity.textContent = `${s.ergodicity} Segments: ${s.segments.count} of ${formatNumber(s.segments.segment_s)} s.`;
}

// ---------------------------------------------------------------- plots and cursors
/** @param {HTMLCanvasElement} canvas */
function sizeCanvas(canvas) {
  const ratio = window.devicePixelRatio || 1;
  const cssWidth = Math.max(240, canvas.clientWidth || 600);
  const cssHeight = Math.round(Math.min(420, Math.max(220, cssWidth * 0.55)));
  canvas.style.height = `${cssHeight}px`;
  canvas.width = Math.round(cssWidth * ratio);
  canvas.height = Math.round(cssHeight * ratio);
  return ratio;
}

function drawPlots() {
  if (!state.view) return;
  try {
    const ratio = sizeCanvas($.psdCanvas);
    state.view.draw_psd($.psdCanvas, JSON.stringify({
      mode: $.psdMode.value,
      show_ci: $.showCi.checked,
      cursors_hz: state.cursors.filter((f) => f !== null),
      pixel_ratio: ratio,
    }));
    const acfRatio = sizeCanvas($.acfCanvas);
    state.view.draw_acf($.acfCanvas, JSON.stringify({ mode: $.acfMode.value, pixel_ratio: acfRatio }));
    if (state.report?.stationarity) {
      const view = state.view;
      for (const [canvas, draw] of /** @type {[HTMLCanvasElement, (c: HTMLCanvasElement, o: string) => void][]} */ ([
        [$.segmentsCanvas, (c, o) => view.draw_segments(c, o)],
        [$.stretchesCanvas, (c, o) => view.draw_stretches(c, o)],
        ...(state.report.stationarity.spectrogram ? [[$.spectrogramCanvas, (c, o) => view.draw_spectrogram(c, o)]] : []),
      ])) {
        draw(canvas, JSON.stringify({ pixel_ratio: sizeCanvas(canvas) }));
      }
    }
  } catch (err) {
    showError(`could not draw: ${err instanceof Error ? err.message : err}`);
  }
  renderCursors();
}

function renderCursors() {
  const view = state.view;
  if (!view) return;
  const mode = $.psdMode.value;
  const unit = view.unit_label(mode);
  const outputs = [[$.cursorA, $.cursorAValue], [$.cursorB, $.cursorBValue]];
  state.cursors.forEach((f, i) => {
    const [fOut, vOut] = outputs[i];
    fOut.replaceChildren(f === null ? '—' : quantity(`cursor.${i === 0 ? 'a' : 'b'}.frequency_hz`, f, 'Hz'));
    vOut.replaceChildren(f === null ? '' : quantity(`cursor.${i === 0 ? 'a' : 'b'}.value`, view.psd_value_at(f, mode), unit));
  });
  const [a, b] = state.cursors;
  $.bandRms.replaceChildren(a !== null && b !== null
    ? quantity('band.rms', view.band_rms(a, b), state.report.unit)
    : 'place two cursors');
}

/** @param {MouseEvent} event */
function onPsdClick(event) {
  if (!state.view) return;
  const f = state.view.frequency_at(event.offsetX, window.devicePixelRatio || 1);
  if (!Number.isFinite(f)) return;
  state.cursors[state.activeCursor] = f;
  state.activeCursor = 1 - state.activeCursor;
  drawPlots();
  updateShareLink();
}

/** @param {KeyboardEvent} event */
function onPsdKey(event) {
  if (!state.view || !state.report) return;
  const step = state.report.psd.bin_width_hz;
  if (event.key === 'Enter' || event.key === ' ') {
    // Keyboard placement: a new cursor starts in the middle of the band, then arrows move it.
    event.preventDefault();
    state.cursors[state.activeCursor] = state.report.psd.frequency_hz[Math.floor(state.report.psd.frequency_hz.length / 2)];
    state.activeCursor = 1 - state.activeCursor;
    drawPlots();
    updateShareLink();
    return;
  }
  const index = 1 - state.activeCursor; // the cursor placed last
  const f = state.cursors[index];
  if (f === null || (event.key !== 'ArrowLeft' && event.key !== 'ArrowRight')) return;
  event.preventDefault();
  const next = f + (event.key === 'ArrowRight' ? step : -step);
  state.cursors[index] = Math.max(step, Math.min(state.report.sample_rate_hz / 2, next));
  drawPlots();
  updateShareLink();
}

// ---------------------------------------------------------------- errors and exports
/** @param {string} message */
function showError(message) {
  $.errorBox.textContent = message;
  $.errorBox.hidden = false;
}
function hideError() {
  $.errorBox.hidden = true;
  $.errorBox.textContent = '';
}

function baseName() {
  return (state.report?.source.name ?? 'recording').replace(/\.[^.]*$/, '');
}

/** @param {HTMLCanvasElement} canvas @param {string} suffix */
function exportPng(canvas, suffix) {
  canvas.toBlob((blob) => { if (blob) download(blob, `${baseName()}-${suffix}.png`); }, 'image/png');
}

function wireExports() {
  byId('export-json').addEventListener('click', () => {
    if (state.view) download(new Blob([state.view.report_json()], { type: 'application/json' }), `${baseName()}-report.json`);
  });
  byId('export-psd-csv').addEventListener('click', () => {
    if (state.view) download(new Blob([state.view.psd_csv()], { type: 'text/csv' }), `${baseName()}-psd.csv`);
  });
  byId('export-acf-csv').addEventListener('click', () => {
    if (state.view) download(new Blob([state.view.acf_csv()], { type: 'text/csv' }), `${baseName()}-acf.csv`);
  });
  byId('export-psd-png').addEventListener('click', () => exportPng($.psdCanvas, 'psd'));
  byId('export-acf-png').addEventListener('click', () => exportPng($.acfCanvas, 'acf'));
}

// ---------------------------------------------------------------- start
/** @param {Promise<File>} demo */
async function loadDemo(demo) {
  $.progress.hidden = false;
  $.progressText.textContent = 'loading the demo recording…';
  try {
    analyze(await demo);
  } catch (err) {
    $.progress.hidden = true;
    showError(`The demo recording could not be loaded (${err instanceof Error ? err.message : err}); choose a file instead.`);
  }
}

async function main() {
  // Settings from a shared link first, before anything waits, so the form shows them at once.
  const fromLink = applyFragment();
  if (!fromLink) {
    $.scale.value = DEMO.scale;
    $.unit.value = DEMO.unit;
    state.demoCalibration = true;
  }
  updateDerived();
  updateShareLink();
  // The demo downloads while the engine compiles.
  const demo = demoFile();
  demo.catch(() => {}); // reported by loadDemo
  wasmModule = await WebAssembly.compile(await wasmBytes());
  await init({ module_or_path: wasmModule });
  startWorker();

  /** A new recording or a live input does not inherit the demo's 2 V calibration unless the
   * user set it. */
  const dropDemoCalibration = () => {
    if (state.demoCalibration) {
      $.scale.value = '1';
      $.unit.value = '';
      state.demoCalibration = false;
    }
  };
  const openOwn = (/** @type {File} */ file) => {
    dropDemoCalibration();
    // A new file starts on its first channel (a raw layout keeps its channel count).
    listChannels($.rawFormat.value ? Number($.rawChannels.value) || 1 : 1, 0);
    analyze(file);
  };
  $.channel.addEventListener('change', () => { if (state.file) analyze(state.file); });
  $.ensembleInput.addEventListener('change', () => {
    const files = [...($.ensembleInput.files ?? [])];
    if (files.length < 2) {
      showError('Ergodicity needs two or more recordings of the same process: one record cannot show it. Choose several files at once.');
      return;
    }
    dropDemoCalibration();
    analyzeEnsemble(files);
  });
  $.layoutApply.addEventListener('click', () => { if (state.file) analyze(state.file); });
  for (const input of [$.rawFormat, $.rawChannels]) {
    input.addEventListener('change', () => {
      const count = $.rawFormat.value ? Number($.rawChannels.value) || 1 : 1;
      listChannels(count, Number($.channel.value) || 0);
    });
  }
  for (const input of [$.scale, $.unit]) {
    input.addEventListener('input', () => { state.demoCalibration = false; });
  }
  $.fileInput.addEventListener('change', () => {
    const file = $.fileInput.files?.[0];
    if (file) openOwn(file);
  });
  $.dropZone.addEventListener('dragover', (event) => {
    event.preventDefault();
    $.dropZone.classList.add('dragging');
  });
  $.dropZone.addEventListener('dragleave', () => $.dropZone.classList.remove('dragging'));
  $.dropZone.addEventListener('drop', (event) => {
    event.preventDefault();
    $.dropZone.classList.remove('dragging');
    const file = event.dataTransfer?.files?.[0];
    if (file) openOwn(file);
  });
  $.cancel.addEventListener('click', cancelRun);
  $.form.addEventListener('submit', (event) => {
    event.preventDefault();
    updateShareLink();
    if (state.file) analyze(state.file);
  });
  $.form.addEventListener('change', () => { updateDerived(); updateShareLink(); });
  for (const control of [$.psdMode, $.showCi, $.acfMode]) {
    control.addEventListener('change', () => { drawPlots(); updateShareLink(); });
  }
  $.psdCanvas.addEventListener('click', onPsdClick);
  $.psdCanvas.addEventListener('keydown', onPsdKey);
  let resizeTimer = 0;
  window.addEventListener('resize', () => {
    clearTimeout(resizeTimer);
    resizeTimer = window.setTimeout(drawPlots, 150);
  });
  wireExports();
  const live = initLive({
    module: () => wasmModule,
    createWorker,
    workletUrl: captureWorkletUrl,
    ReportView,
    readSettings,
    quantity,
    renderQuantities,
    sizeCanvas,
    formatNumber,
    calibrationFields: { scale: $.scale, unit: $.unit },
    ownInput: dropDemoCalibration,
  });
  $.form.addEventListener('submit', () => live.restart());
  await loadDemo(demo);
}

main().catch((err) => showError(`The page could not start: ${err instanceof Error ? err.message : err}`));

// @ts-check
// Live listening on the main thread: asks for the microphone with the browser's processing off,
// shows what the browser actually granted, starts the capture worklet and a live worker, and
// draws the frames the worker sends. No signal processing here.
import { MSG, rejoinArrays } from './protocol.js';
import { byId, download } from './dom.js';

/** Processing the browser may apply to a capture; all asked off. */
const PROCESSING = /** @type {const} */ (['echoCancellation', 'noiseSuppression', 'autoGainControl']);
/** Where a calibration factor is kept in this browser (never sent anywhere). */
const STORAGE_KEY = 'noisesonde.live-calibration';
/** Reference sound pressure, Pa (20 µPa; ISO 1683). */
const P0_PA = 20e-6;

/**
 * @typedef {object} LiveDeps
 * @property {() => WebAssembly.Module} module the compiled engine
 * @property {() => Worker} createWorker
 * @property {() => (string | URL | null)} workletUrl null where listening cannot work
 * @property {any} ReportView
 * @property {() => any} readSettings the settings form's current settings
 * @property {(path: string, value: number | null | undefined, unit?: string) => HTMLElement} quantity
 * @property {(table: HTMLTableElement, report: any) => void} renderQuantities
 * @property {(canvas: HTMLCanvasElement) => number} sizeCanvas
 * @property {(v: number | null | undefined) => string} formatNumber
 * @property {{ scale: HTMLInputElement, unit: HTMLInputElement }} calibrationFields
 * @property {() => void} ownInput forget the demo recording's calibration (not the user's own)
 */

/** @param {LiveDeps} deps */
export function initLive(deps) {
  const $ = {
    listen: /** @type {HTMLButtonElement} */ (byId('listen-button')),
    unavailable: byId('live-unavailable'),
    channelLabel: byId('live-channel-label'),
    channel: /** @type {HTMLSelectElement} */ (byId('live-channel')),
    averaging: /** @type {HTMLSelectElement} */ (byId('live-averaging')),
    segmentsLabel: byId('live-segments-label'),
    segments: /** @type {HTMLInputElement} */ (byId('live-segments')),
    tauLabel: byId('live-tau-label'),
    tau: /** @type {HTMLInputElement} */ (byId('live-tau')),
    recent: /** @type {HTMLInputElement} */ (byId('live-recent')),
    peak: /** @type {HTMLInputElement} */ (byId('live-peak')),
    restart: byId('live-restart'),
    freeze: byId('live-freeze'),
    clearReference: byId('live-clear-reference'),
    status: byId('live-status'),
    overload: byId('overload'),
    clipped: byId('live-clipped'),
    dropped: byId('live-dropped'),
    rate: byId('live-rate'),
    fps: byId('live-fps'),
    load: byId('live-load'),
    duration: byId('live-duration'),
    captureTable: /** @type {HTMLTableElement} */ (byId('capture-table')),
    captureWarnings: byId('capture-warnings'),
    results: byId('live-results'),
    psdCanvas: /** @type {HTMLCanvasElement} */ (byId('live-psd-canvas')),
    acfCanvas: /** @type {HTMLCanvasElement} */ (byId('live-acf-canvas')),
    toneFrequency: byId('live-tone-frequency'),
    toneLevel: byId('live-tone-level'),
    toneRms: byId('live-tone-rms'),
    floor: byId('live-floor'),
    floorAsd: byId('live-floor-asd'),
    floorBand: byId('live-floor-band'),
    levelConvention: byId('level-convention'),
    levelTable: /** @type {HTMLTableElement} */ (byId('level-table')),
    bandFraction: /** @type {HTMLSelectElement} */ (byId('band-fraction')),
    bandWeighting: /** @type {HTMLSelectElement} */ (byId('band-weighting')),
    bandTable: /** @type {HTMLTableElement} */ (byId('band-table')),
    quantities: /** @type {HTMLTableElement} */ (byId('live-quantities')),
    calSensitivity: /** @type {HTMLInputElement} */ (byId('cal-sensitivity')),
    calGain: /** @type {HTMLInputElement} */ (byId('cal-gain')),
    calFullScale: /** @type {HTMLInputElement} */ (byId('cal-full-scale')),
    calApplyChain: byId('cal-apply-chain'),
    calLevel: /** @type {HTMLSelectElement} */ (byId('cal-level')),
    calFrequency: /** @type {HTMLInputElement} */ (byId('cal-frequency')),
    calFromTone: /** @type {HTMLButtonElement} */ (byId('cal-from-tone')),
    calStatus: byId('cal-status'),
    recordSeconds: /** @type {HTMLInputElement} */ (byId('record-seconds')),
    recordFormat: /** @type {HTMLSelectElement} */ (byId('record-format')),
    recordSave: /** @type {HTMLButtonElement} */ (byId('record-save')),
    recordStatus: byId('record-status'),
  };

  /** Everything that exists while listening. */
  const session = {
    /** @type {MediaStream | null} */ stream: null,
    /** @type {AudioContext | null} */ context: null,
    /** @type {AudioWorkletNode | null} */ node: null,
    /** @type {Worker | null} */ worker: null,
    /** @type {{ sample_rate_hz: number, channels: number, channel: number } | null} */ source: null,
    /** @type {any} */ view: null,
    /** @type {any} */ frame: null,
    /** @type {Float64Array | null} */ reference: null,
    drawPending: false,
    /** Arrival times of recent frames (ms), for the frame rate shown. */
    /** @type {number[]} */ frameTimes: [],
    requestId: 0,
    /** @type {Map<number, (msg: any) => void>} */ waiting: new Map(),
    /** Seconds the recording ring holds, set when listening starts. */
    recordS: 30,
  };

  const reason = unavailableReason(deps.workletUrl());
  if (reason) {
    $.unavailable.textContent = reason;
    $.unavailable.hidden = false;
    $.listen.disabled = true;
  }
  showStoredCalibration();

  $.averaging.addEventListener('change', () => {
    const linear = $.averaging.value === 'linear';
    $.segmentsLabel.hidden = !linear;
    $.tauLabel.hidden = linear;
    restartSession();
  });
  // These change what the worker averages, so the session starts again. The recording ring is
  // sized when listening starts (so editing "Last (s)" never discards what was captured).
  for (const input of [$.segments, $.tau, $.recent, $.channel]) input.addEventListener('change', restartSession);
  $.restart.addEventListener('click', () => session.worker?.postMessage({ type: MSG.LIVE_RESTART }));
  $.freeze.addEventListener('click', () => {
    const density = session.frame?.arrays['psd.density'];
    if (!density) return;
    session.reference = density.slice();
    $.clearReference.hidden = false;
    scheduleDraw();
  });
  $.clearReference.addEventListener('click', () => {
    session.reference = null;
    $.clearReference.hidden = true;
    scheduleDraw();
  });
  for (const control of [$.peak, $.bandFraction, $.bandWeighting]) control.addEventListener('change', scheduleDraw);
  $.listen.addEventListener('click', () => {
    if (session.stream) stop(); else start().catch((err) => fail(err));
  });
  $.calApplyChain.addEventListener('click', applyChain);
  // A request the worker cannot answer (no tone yet, nothing recorded yet) is said beside its
  // button; listening goes on.
  $.calFromTone.addEventListener('click', () => calibrateFromTone().catch((err) => {
    $.calStatus.textContent = `Not calibrated: ${err instanceof Error ? err.message : err}`;
  }));
  $.recordSave.addEventListener('click', () => saveRecording().catch((err) => {
    $.recordStatus.textContent = `Not saved: ${err instanceof Error ? err.message : err}`;
  }));

  /** @param {string | URL | null} workletUrl */
  function unavailableReason(workletUrl) {
    if (!workletUrl) {
      return 'Listening needs the page served over https or from http://localhost (cargo xtask serve): this single-file copy opened from disk cannot load the capture worklet. Files can still be analysed here.';
    }
    if (!window.isSecureContext || !navigator.mediaDevices?.getUserMedia) {
      return 'Listening needs a secure page: browsers give the microphone only to https pages and to http://localhost. Open the hosted https copy or run cargo xtask serve on this computer.';
    }
    if (typeof AudioWorkletNode === 'undefined') {
      return 'This browser has no AudioWorklet, which listening needs; use a current Chromium, Firefox or Safari.';
    }
    return '';
  }

  /** @param {unknown} err */
  function fail(err) {
    const message = err instanceof Error ? `${err.name === 'Error' ? '' : `${err.name}: `}${err.message}` : String(err);
    $.unavailable.textContent = `Listening stopped: ${message}`;
    $.unavailable.hidden = false;
    stop();
  }

  async function start() {
    $.unavailable.hidden = true;
    // The context is created inside the click (a user gesture), so it is allowed to run.
    const context = new AudioContext({ latencyHint: 'interactive' });
    session.context = context;
    const asked = {
      echoCancellation: false, noiseSuppression: false, autoGainControl: false,
      channelCount: { ideal: 2 },
    };
    const stream = await navigator.mediaDevices.getUserMedia({ audio: asked, video: false });
    session.stream = stream;
    const track = stream.getAudioTracks()[0];
    const granted = track.getSettings();
    if (context.state !== 'running') await context.resume();
    if (context.state !== 'running') {
      throw new Error('the browser kept the audio engine suspended; press Start listening again');
    }
    const channels = Math.max(1, Number(granted.channelCount) || 1);
    showCapture(asked, granted, context, track.label);
    listChannels(channels);
    deps.ownInput();
    useStoredCalibration();

    await context.audioWorklet.addModule(/** @type {string | URL} */ (deps.workletUrl()));
    const input = context.createMediaStreamSource(stream);
    const node = new AudioWorkletNode(context, 'noisesonde-capture', {
      numberOfInputs: 1, numberOfOutputs: 1, outputChannelCount: [1],
      channelCount: channels, channelCountMode: 'explicit', channelInterpretation: 'discrete',
      processorOptions: { channels },
    });
    // Pulled by the graph through a silent gain: nothing is played back.
    const mute = context.createGain();
    mute.gain.value = 0;
    input.connect(node);
    node.connect(mute).connect(context.destination);
    session.node = node;
    session.source = { sample_rate_hz: context.sampleRate, channels, channel: 0 };
    session.recordS = Math.min(300, Math.max(1, Number($.recordSeconds.value) || 30));
    startWorker();
    $.listen.textContent = 'Stop listening';
    $.status.hidden = false;
    $.calFromTone.disabled = false;
    $.recordSave.disabled = false;
  }

  /** The live worker and the block channel from the worklet to it, once per listening. */
  function startWorker() {
    if (!session.node || !session.source) return;
    const worker = deps.createWorker();
    worker.postMessage({ type: MSG.INIT, module: deps.module() });
    worker.onmessage = onWorkerMessage;
    const channel = new MessageChannel();
    session.node.port.postMessage({ type: 'connect', port: channel.port1 }, [channel.port1]);
    worker.postMessage({ type: MSG.LIVE_START, port: channel.port2, ...sessionConfig() }, [channel.port2]);
    session.worker = worker;
  }

  function sessionConfig() {
    return {
      source: { ...session.source, channel: Number($.channel.value) || 0 },
      settings: deps.readSettings(),
      live: liveSettings(),
    };
  }

  /** New settings: the same worker builds a new session; blocks keep flowing to it. */
  function restartSession() {
    if (session.stream && session.worker) {
      session.frame = null;
      session.worker.postMessage({ type: MSG.LIVE_START, ...sessionConfig() });
    }
  }

  function liveSettings() {
    const averaging = $.averaging.value === 'linear'
      ? { mode: 'linear', segments: Math.max(1, Math.round(Number($.segments.value) || 1)) }
      : { mode: 'exponential', time_constant_s: Number($.tau.value) || 1 };
    return {
      averaging,
      recent_s: Number($.recent.value) || 10,
      // The ring keeps what "Save as WAV" may ask for (8 bytes a sample: 30 s at 48 kHz is
      // 11.5 MB), fixed when listening starts.
      record_s: session.recordS,
    };
  }

  function stop() {
    session.worker?.terminate();
    session.worker = null;
    session.node?.disconnect();
    session.node = null;
    session.stream?.getTracks().forEach((t) => t.stop());
    session.stream = null;
    session.context?.close().catch(() => {});
    session.context = null;
    $.listen.textContent = 'Start listening';
    $.calFromTone.disabled = true;
    $.recordSave.disabled = true;
  }

  /**
   * What was asked, what was granted, and plain warnings where they differ.
   * @param {Record<string, unknown>} asked @param {MediaTrackSettings} granted
   * @param {AudioContext} context @param {string} label
   */
  function showCapture(asked, granted, context, label) {
    /** @type {[string, string, string, string][]} */
    const rows = [['device', 'the default input', label || '(not named)', 'capture.device']];
    const warnings = [];
    const g = /** @type {Record<string, unknown>} */ (/** @type {unknown} */ (granted));
    for (const flag of PROCESSING) {
      const value = g[flag];
      rows.push([flag, 'off', value === undefined ? 'not reported' : value ? 'ON' : 'off', `capture.${flag}`]);
      if (value === true) warnings.push(`${flag} could not be turned off: the browser alters the level and the spectrum; the numbers are not those of the microphone.`);
      if (value === undefined) warnings.push(`The browser does not say whether ${flag} is off.`);
    }
    rows.push(['capture sample rate', 'as the device', granted.sampleRate ? `${granted.sampleRate} Hz` : 'not reported', 'capture.sample_rate_hz']);
    rows.push(['analysis sample rate', 'the capture rate', `${context.sampleRate} Hz`, 'capture.context_sample_rate_hz']);
    rows.push(['channels', String(/** @type {any} */ (asked).channelCount?.ideal ?? ''), granted.channelCount ? String(granted.channelCount) : 'not reported', 'capture.channels']);
    if (granted.sampleRate && granted.sampleRate !== context.sampleRate) {
      warnings.push(`The capture runs at ${granted.sampleRate} Hz but the audio engine at ${context.sampleRate} Hz: the browser resamples, which shapes the top of the band.`);
    }
    warnings.push('Processing inside the operating system or the device (voice modes, "enhancements") is out of the page\'s reach: turn it off there.');
    const body = $.captureTable.tBodies[0];
    body.replaceChildren(...rows.map(([name, want, got, path]) => {
      const tr = document.createElement('tr');
      const th = document.createElement('th');
      th.scope = 'row';
      th.textContent = name;
      const a = document.createElement('td');
      a.textContent = want;
      const b = document.createElement('td');
      b.textContent = got;
      b.dataset.capture = path;
      tr.append(th, a, b);
      return tr;
    }));
    $.captureWarnings.replaceChildren(...warnings.map((w) => {
      const li = document.createElement('li');
      li.textContent = w;
      return li;
    }));
  }

  /** @param {number} count */
  function listChannels(count) {
    const options = [];
    for (let c = 0; c < count; c += 1) {
      const option = document.createElement('option');
      option.value = String(c);
      option.textContent = `${c + 1} of ${count}`;
      options.push(option);
    }
    $.channel.replaceChildren(...options);
    $.channelLabel.hidden = count <= 1;
  }

  /** @param {MessageEvent} event */
  function onWorkerMessage(event) {
    const msg = event.data;
    if (msg.type === MSG.LIVE_FRAME) {
      session.frame = msg;
      const now = performance.now();
      session.frameTimes.push(now);
      while (session.frameTimes.length > 0 && now - session.frameTimes[0] > 2000) session.frameTimes.shift();
      scheduleDraw();
    } else if (msg.type === MSG.ERROR && msg.id >= 0) {
      session.waiting.get(msg.id)?.({ error: msg.message });
      session.waiting.delete(msg.id);
    } else if (msg.type === MSG.ERROR) {
      if (msg.id === -2 || msg.id === -1) fail(new Error(msg.message));
    } else if (msg.id !== undefined && session.waiting.has(msg.id)) {
      session.waiting.get(msg.id)?.(msg);
      session.waiting.delete(msg.id);
    }
  }

  /** A request to the live worker answered by one reply with the same id. @param {any} msg */
  function ask(msg) {
    const id = ++session.requestId;
    return new Promise((resolve, reject) => {
      session.waiting.set(id, (reply) => (reply.error ? reject(new Error(reply.error)) : resolve(reply)));
      session.worker?.postMessage({ ...msg, id });
    });
  }

  function scheduleDraw() {
    if (session.drawPending) return;
    session.drawPending = true;
    requestAnimationFrame(() => {
      session.drawPending = false;
      draw();
    });
  }

  function draw() {
    const frame = session.frame;
    if (!frame) return;
    let view;
    try {
      view = deps.ReportView.from_parts(frame.summary, frame.arrays);
      if ($.peak.checked && frame.arrays['live.peak_density']) view.add_trace('peak-hold', 'peak hold', frame.arrays['live.peak_density']);
      if (session.reference) {
        if (session.reference.length === frame.arrays['psd.density'].length) {
          view.add_trace('reference', 'reference', session.reference);
        } else {
          session.reference = null; // other settings: the bins no longer match
          $.clearReference.hidden = true;
        }
      }
      const ratio = deps.sizeCanvas($.psdCanvas);
      view.draw_psd($.psdCanvas, JSON.stringify({ mode: 'density', show_ci: true, pixel_ratio: ratio }));
      const acfRatio = deps.sizeCanvas($.acfCanvas);
      view.draw_acf($.acfCanvas, JSON.stringify({ mode: 'coefficient', pixel_ratio: acfRatio }));
    } catch (err) {
      $.unavailable.textContent = `could not draw: ${err instanceof Error ? err.message : err}`;
      $.unavailable.hidden = false;
    }
    session.view?.free();
    session.view = view ?? null;
    const report = rejoinArrays(JSON.parse(frame.summary), frame.arrays);
    const live = JSON.parse(frame.live);
    renderStatus(report, live);
    renderTone(report, live);
    renderLevels(live);
    renderBands(live);
    deps.renderQuantities($.quantities, report);
    $.results.hidden = false;
  }

  /** @param {any} report @param {any} live */
  function renderStatus(report, live) {
    $.clipped.replaceChildren(deps.quantity('moments.clipped_samples', report.moments.clipped_samples));
    $.dropped.replaceChildren(deps.quantity('live.dropped_frames', live.dropped_frames));
    $.rate.replaceChildren(deps.quantity('sample_rate_hz', report.sample_rate_hz, 'Hz'));
    $.duration.replaceChildren(deps.quantity('duration_s', report.duration_s, 's'));
    $.overload.hidden = !live.overload;
    const times = session.frameTimes;
    const fps = times.length > 1 ? (1000 * (times.length - 1)) / (times[times.length - 1] - times[0]) : NaN;
    $.fps.replaceChildren(deps.quantity('live.frames_per_s', fps));
    const load = session.frame?.load;
    const share = load && load.wall_ms > 0 ? load.busy_ms / load.wall_ms : NaN;
    $.load.replaceChildren(deps.quantity('live.worker_load', share));
    $.load.append(Number.isFinite(share) ? ` (${(share * 100).toFixed(1)} %)` : '');
  }

  /** @param {any} report @param {any} live */
  function renderTone(report, live) {
    const t = live.tone;
    $.toneFrequency.replaceChildren(t ? deps.quantity('live.tone.frequency_hz', t.frequency_hz, 'Hz') : '—');
    $.toneLevel.replaceChildren(t ? deps.quantity('live.tone.level_db', t.level_db, live.level_unit) : '');
    $.toneRms.replaceChildren(t ? deps.quantity('live.tone.rms', t.rms, `${report.unit} rms`) : '');
    const f = live.floor;
    $.floor.replaceChildren(f ? deps.quantity('live.floor.density', f.density, report.psd.unit) : '—');
    $.floorAsd.replaceChildren(f ? deps.quantity('live.floor.amplitude_density', Math.sqrt(f.density), report.units.amplitude_density) : '');
    $.floorBand.textContent = f ? `${deps.formatNumber(f.f_lo_hz)}–${deps.formatNumber(f.f_hi_hz)} Hz` : '';
  }

  /** @param {any} live */
  function renderLevels(live) {
    $.levelConvention.textContent = live.level_convention;
    const body = $.levelTable.tBodies[0];
    body.replaceChildren(...live.levels.map((/** @type {any} */ row) => {
      const tr = document.createElement('tr');
      const th = document.createElement('th');
      th.scope = 'row';
      th.textContent = row.label;
      tr.append(th);
      for (const key of ['leq_session_db', 'leq_recent_db', 'max_db', 'min_db']) {
        const td = document.createElement('td');
        td.append(deps.quantity(`live.levels.${row.weighting}.${key}`, row[key], live.level_unit));
        tr.append(td);
      }
      return tr;
    }));
  }

  /** @param {any} live */
  function renderBands(live) {
    const set = live.bands.find((/** @type {any} */ b) => b.fraction === $.bandFraction.value && b.weighting === $.bandWeighting.value);
    const body = $.bandTable.tBodies[0];
    if (!set) {
      body.replaceChildren();
      return;
    }
    const prefix = `live.bands.${set.fraction}.${set.weighting}`;
    const rows = set.bands.map((/** @type {any} */ b) => {
      const tr = document.createElement('tr');
      const th = document.createElement('th');
      th.scope = 'row';
      th.textContent = String(b.band.nominal_hz);
      const mid = document.createElement('td');
      mid.textContent = deps.formatNumber(b.band.mid_hz);
      const edges = document.createElement('td');
      edges.textContent = `${deps.formatNumber(b.band.lower_hz)}–${deps.formatNumber(b.band.upper_hz)}`;
      const level = document.createElement('td');
      level.append(deps.quantity(`${prefix}.${b.band.nominal_hz}`, b.level_db, live.level_unit));
      tr.append(th, mid, edges, level);
      return tr;
    });
    const total = document.createElement('tr');
    const th = document.createElement('th');
    th.scope = 'row';
    th.textContent = 'sum of the bands';
    const td = document.createElement('td');
    td.colSpan = 2;
    td.textContent = `${deps.formatNumber(set.bands[0]?.band.lower_hz)}–${deps.formatNumber(set.bands.at(-1)?.band.upper_hz)} Hz`;
    const level = document.createElement('td');
    level.append(deps.quantity(`${prefix}.overall`, set.overall_level_db, live.level_unit));
    total.append(th, td, level);
    body.replaceChildren(...rows, total);
  }

  // ------------------------------------------------------------ calibration
  /** @param {number} scale @param {string} how */
  function setCalibration(scale, how) {
    deps.calibrationFields.scale.value = String(scale);
    deps.calibrationFields.unit.value = 'Pa';
    deps.calibrationFields.scale.dispatchEvent(new Event('input', { bubbles: true }));
    const stored = { scale_units_per_fs: scale, unit: 'Pa', set_at: new Date().toISOString(), how };
    try {
      localStorage.setItem(STORAGE_KEY, JSON.stringify(stored));
    } catch {
      // Storage may be off (private mode): the factor still applies now.
    }
    showStoredCalibration();
    restartSession();
  }

  function storedCalibration() {
    try {
      const stored = JSON.parse(localStorage.getItem(STORAGE_KEY) ?? 'null');
      return stored && Number.isFinite(stored.scale_units_per_fs) && stored.scale_units_per_fs > 0 ? stored : null;
    } catch {
      return null;
    }
  }

  function showStoredCalibration() {
    const stored = storedCalibration();
    $.calStatus.textContent = stored
      ? `Stored in this browser: ${deps.formatNumber(stored.scale_units_per_fs)} Pa per full scale, set ${stored.set_at.slice(0, 10)} ${stored.how}.`
      : 'No calibration stored in this browser: levels are in dBFS.';
  }

  /** Listening starts with the stored factor unless the settings already hold a physical unit. */
  function useStoredCalibration() {
    const stored = storedCalibration();
    const unit = deps.calibrationFields.unit.value.trim();
    if (stored && (unit === '' || unit === 'FS')) {
      deps.calibrationFields.scale.value = String(stored.scale_units_per_fs);
      deps.calibrationFields.unit.value = 'Pa';
    }
  }

  function applyChain() {
    const sensitivityVPerPa = Number($.calSensitivity.value) / 1000;
    const gain = 10 ** (Number($.calGain.value || 0) / 20);
    const fullScaleV = Number($.calFullScale.value);
    if (!(sensitivityVPerPa > 0) || !(fullScaleV > 0) || !Number.isFinite(gain)) {
      $.calStatus.textContent = 'Enter a sensitivity above 0 mV/Pa and the full-scale input voltage above 0 V.';
      return;
    }
    // One digital full scale is fullScaleV at the interface's input, i.e. fullScaleV / gain at
    // the microphone, i.e. that divided by the sensitivity in pascals.
    setCalibration(fullScaleV / gain / sensitivityVPerPa,
      `from the chain (${$.calSensitivity.value} mV/Pa, ${$.calGain.value || 0} dB, ${$.calFullScale.value} V)`);
  }

  async function calibrateFromTone() {
    const levelDb = Number($.calLevel.value);
    const referenceRmsPa = P0_PA * 10 ** (levelDb / 20);
    const reply = await ask({ type: MSG.LIVE_TONE, frequency_hz: Number($.calFrequency.value) || 1000, reference_rms: referenceRmsPa });
    const tone = JSON.parse(reply.tone);
    // The tone was measured in the current unit; the new factor replaces the current one.
    const current = Number(deps.calibrationFields.scale.value) || 1;
    const scale = current * tone.factor;
    setCalibration(scale, `from a ${levelDb} dB calibrator at ${deps.formatNumber(tone.frequency_hz)} Hz`);
    $.calStatus.dataset.value = String(scale);
  }

  async function saveRecording() {
    const reply = await ask({ type: MSG.LIVE_RECORD, seconds: Number($.recordSeconds.value) || 30, format: $.recordFormat.value });
    $.recordStatus.textContent = '';
    const stamp = new Date().toISOString().replace(/[:.]/g, '-').slice(0, 19);
    download(new Blob([reply.wav], { type: 'audio/wav' }), `listening-${stamp}.wav`);
    download(new Blob([reply.report], { type: 'application/json' }), `listening-${stamp}-report.json`);
  }

  return { restart: restartSession };
}

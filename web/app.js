// @ts-check
/**
 * lossdial live bench: one websocket session per page. Commands go out as protocol-v1 messages;
 * every message that comes back is checked before the page acts on it.
 */
import { LiveCharts, SeriesStore } from './charts.js';
import { lineOfPath, lineOfSyntax, selectLine } from './editor.js';
import { checkServerMessage, command } from './protocol.js';
import { drawMap, showPoint } from './stability.js';

/** @param {string} id */
const $ = (id) => /** @type {any} */ (document.getElementById(id));

const store = new SeriesStore();
const charts = new LiveCharts(store);

/** Page state that other modules (and tests) may look at. */
const state = {
  /** @type {WebSocket|null} */ ws: null,
  sessionId: '',
  connected: false,
  scenario: /** @type {any} */ (null),
  lastFrame: /** @type {any} */ (null),
  simState: 'idle',
  supervisorOn: false,
  frames: 0,
  rejected: 0,
  reconnectMs: 1500,
  lastMargins: /** @type {any} */ (null),
  /** The editor holds edits not yet loaded; a reset must not throw them away. */
  editorDirty: false,
  loadRequested: false,
  lastMap: /** @type {any} */ (null),
};
/** @type {any} */ (window).lossdial = state;

// ------------------------------------------------------------------ connection

function connect() {
  const proto = location.protocol === 'https:' ? 'wss' : 'ws';
  const ws = new WebSocket(`${proto}://${location.host}/ws`);
  state.ws = ws;
  ws.addEventListener('open', () => {
    state.connected = true;
    setConn('online');
  });
  ws.addEventListener('message', (ev) => {
    let m;
    try {
      m = JSON.parse(String(ev.data));
    } catch {
      state.rejected++;
      return;
    }
    const problem = checkServerMessage(m);
    if (problem) {
      state.rejected++;
      console.warn(`ignored a malformed server message: ${problem}`);
      return;
    }
    onMessage(m);
  });
  ws.addEventListener('close', (ev) => {
    state.connected = false;
    state.ws = null;
    setConn(`offline (${ev.code}${ev.reason ? `: ${ev.reason}` : ''}) — reconnecting`);
    const wait = ev.code === 1013 ? 10_000 : state.reconnectMs;
    setTimeout(connect, wait);
  });
  ws.addEventListener('error', () => setConn('connection error'));
}

/** @param {string} type @param {Record<string, unknown>} [fields] */
function send(type, fields) {
  const ws = state.ws;
  if (!ws || ws.readyState !== WebSocket.OPEN) {
    toast('not connected', true);
    return;
  }
  ws.send(JSON.stringify(command(type, fields)));
}

/** @param {string} text */
function setConn(text) {
  const el = $('conn-status');
  el.textContent = text;
  el.classList.toggle('online', text === 'online');
}

let toastTimer = 0;
/** @param {string} text @param {boolean} [isError] */
function toast(text, isError = false) {
  const el = $('toast');
  el.textContent = text;
  el.classList.toggle('error', isError);
  el.hidden = false;
  clearTimeout(toastTimer);
  toastTimer = window.setTimeout(() => (el.hidden = true), isError ? 7000 : 3500);
}

// ------------------------------------------------------------------ messages

/** @param {any} m */
function onMessage(m) {
  switch (m.type) {
    case 'hello': return onHello(m);
    case 'scenario': return onScenario(m);
    case 'frame': return onFrame(m);
    case 'status': return onStatus(m);
    case 'error': return onError(m);
    case 'margins': return onMargins(m);
  }
}

/** @param {any} m */
function onHello(m) {
  state.sessionId = m.sessionId;
  $('dl-replay').href = `/api/sessions/${encodeURIComponent(m.sessionId)}/replay.yaml`;
  $('dl-trace').href = `/api/sessions/${encodeURIComponent(m.sessionId)}/trace.csv`;
  $('hardware-notice').textContent = m.hardwareNotice;
  const sel = $('case-select');
  sel.textContent = '';
  for (const c of m.cases) {
    const o = document.createElement('option');
    o.value = c;
    o.textContent = c;
    sel.append(o);
  }
  const custom = document.createElement('option');
  custom.value = '';
  custom.textContent = '(edited scenario)';
  custom.disabled = true;
  sel.append(custom);
}

/** @param {number} x @param {number} d */
const fixed = (x, d) => (Number.isFinite(x) ? Number(x.toFixed(d)) : '');

/** @param {any} m */
function onScenario(m) {
  state.scenario = m;
  store.clear();
  state.lastMargins = null;
  $('scenario-name').textContent = `${m.name} — ${m.description}`;
  $('case-select').value = m.source === 'case' ? m.name : '';
  const range = $('demand-range');
  range.max = String(m.ranges.heatDemandW[1]);
  range.value = String(m.heatDemandW);
  $('demand-input').value = String(m.heatDemandW);
  $('load-unit').textContent = m.load.kind === 'iA' ? 'A' : 'Ω';
  $('load-input').value = String(m.load.value);
  $('load-input').disabled = $('btn-load').disabled = m.topology !== 'buck';
  $('inlet-input').value = String(m.inletC);
  $('fsw-input').value = fixed(m.knobs.fswHz / 1000, 1);
  $('dead-input').value = fixed(m.knobs.deadTimeS * 1e9, 1);
  $('vdrive-input').value = fixed(m.knobs.vDriveV, 2);
  $('kp-input').value = String(m.gains.kp);
  $('ki-input').value = String(m.gains.ki);
  $('kp-unit').textContent = m.topology === 'buck' ? 'duty/V' : 'duty/A';
  $('ki-unit').textContent = m.gains.basis === 'continuous' ? '1/s' : 'per sample';
  $('basis-hint').textContent = `(${m.gains.basis} basis)`;
  const sup = $('supervisor-toggle');
  sup.disabled = !m.supervisorAvailable;
  sup.checked = m.supervisorOn;
  setSupervisor(m.supervisorOn);
  if (!state.editorDirty || state.loadRequested) {
    $('scenario-text').value = m.text;
    state.editorDirty = false;
    showProblemsIdle();
  }
  state.loadRequested = false;
  charts.setMeta({ regulatedName: m.regulated.name, regulatedUnit: m.regulated.unit, tjLimitC: m.tjLimitC, pmFloorDeg: m.pmFloorDeg, loadKind: m.load.kind });
  if (m.supervisorAvailable === false) $('knob-hint').textContent = '(no supervisor in this scenario)';
}

/** @param {boolean} on */
function setSupervisor(on) {
  state.supervisorOn = on;
  for (const id of ['fsw-input', 'dead-input', 'vdrive-input', 'btn-knobs']) $(id).disabled = on;
  $('knob-hint').textContent = on ? '(set by the supervisor)' : '(manual)';
}

/** @param {number|null|undefined} x @param {number} d */
const show = (x, d) => (typeof x === 'number' && Number.isFinite(x) ? x.toFixed(d) : '—');

/** @param {any} f */
function onFrame(f) {
  state.frames++;
  state.lastFrame = f;
  store.append(f.records);
  store.appendMargin(f.margin);
  setSimState(f.state);
  $('sim-time').textContent = show(f.tS, 1);
  $('achieved-speed').textContent = f.state === 'running' ? show(f.achievedSpeed, f.achievedSpeed < 10 ? 1 : 0) : '—';
  const L = f.live;
  $('live-heat').textContent = show(L.heatToCoolantW, 1);
  $('live-loss').textContent = show(L.measuredW ?? L.totalLossW, 1);
  // The demand may move by itself (the scenario's own profile): follow it unless the user is at the controls.
  if (typeof L.demandW === 'number' && document.activeElement !== $('demand-input') && document.activeElement !== $('demand-range')) {
    const d = String(Number(L.demandW.toFixed(2)));
    if ($('demand-input').value !== d) {
      $('demand-input').value = d;
      $('demand-range').value = d;
    }
  }
  const supOn = L.supervisorOn === 1;
  if (supOn !== state.supervisorOn) {
    $('supervisor-toggle').checked = supOn;
    setSupervisor(supOn);
  }
  if (supOn) {
    $('fsw-input').value = fixed(L.fswHz / 1000, 1);
    $('dead-input').value = fixed(L.deadTimeS * 1e9, 1);
    $('vdrive-input').value = fixed(L.vDriveV, 2);
  }
  showCautions(f.cautions);
}

/** @param {string} s */
function setSimState(s) {
  state.simState = s;
  const b = $('state-badge');
  b.dataset.state = s;
  b.textContent = s;
  $('btn-start').disabled = s === 'running' || s === 'failed' || s === 'ended';
  $('btn-pause').disabled = s !== 'running';
}

/** @param {Array<{code:string, severity:string, message:string}>} list */
function showCautions(list) {
  const box = $('alerts');
  const ul = $('caution-list');
  const key = list.map((c) => c.message).join('|');
  if (ul.dataset.key === key) return;
  ul.dataset.key = key;
  ul.textContent = '';
  for (const c of list) {
    const li = document.createElement('li');
    li.className = c.severity;
    li.textContent = c.message;
    li.dataset.code = c.code;
    ul.append(li);
  }
  box.hidden = list.length === 0;
  box.classList.toggle('warn-only', list.every((c) => c.severity !== 'danger'));
}

/** @param {any} m */
function onStatus(m) {
  setSimState(m.state);
  $('sim-time').textContent = show(m.tS, 1);
  if (m.ack === 'reset') store.clear();
  if (m.ack === 'loadScenario') {
    $('problem-list').textContent = '';
    const li = document.createElement('li');
    li.className = 'ok';
    li.textContent = m.message || 'loaded';
    $('problem-list').append(li);
  }
  if (m.message) toast(m.message, m.state === 'failed');
}

/** @param {any} m */
function onError(m) {
  toast(m.message, true);
  if (m.ref === 'loadScenario') state.loadRequested = false;
  if (m.problems && (m.ref === 'loadScenario' || m.code === 'badScenario')) showProblems(m.problems);
}

/** @param {any} m */
function onMargins(m) {
  if (m.result.kind === 'point') {
    state.lastMargins = m.result;
    showPoint($('stab-summary'), m.result);
  } else if (m.result.kind === 'map') {
    state.lastMap = m.result;
    drawMap(m.result);
  }
  $('btn-margins').disabled = false;
}

// ------------------------------------------------------------------ editor

function showProblemsIdle() {
  const ol = $('problem-list');
  ol.textContent = '';
  const li = document.createElement('li');
  li.className = 'idle';
  li.textContent = 'Edit, then press Check: problems appear here with their field path.';
  ol.append(li);
}

/** @param {Array<{path:string, message:string}>} problems */
function showProblems(problems) {
  const ol = $('problem-list');
  ol.textContent = '';
  const ta = $('scenario-text');
  if (problems.length === 0) {
    const li = document.createElement('li');
    li.className = 'ok';
    li.textContent = 'no problems: the scenario is valid';
    ol.append(li);
    return;
  }
  for (const p of problems) {
    const li = document.createElement('li');
    const path = document.createElement('span');
    path.className = 'path';
    path.textContent = p.path;
    li.append(path, `: ${p.message}`);
    li.dataset.path = p.path;
    li.addEventListener('click', () => {
      const line = p.path === '(syntax)' ? lineOfSyntax(p.message) : lineOfPath(ta.value, p.path);
      selectLine(ta, line);
    });
    ol.append(li);
  }
}

async function validateText() {
  const text = $('scenario-text').value;
  try {
    const res = await fetch('/api/validate', { method: 'POST', headers: { 'Content-Type': 'application/json' }, body: JSON.stringify({ text }) });
    const body = await res.json();
    showProblems(body.problems ?? [{ path: '(request)', message: `HTTP ${res.status}` }]);
    return body.ok === true;
  } catch (e) {
    toast(`could not check the scenario: ${/** @type {Error} */ (e).message}`, true);
    return false;
  }
}

// ------------------------------------------------------------------ controls

/** @param {string} id @param {string} what */
function numberOf(id, what) {
  const v = Number($(id).value);
  if ($(id).value === '' || !Number.isFinite(v)) {
    toast(`${what}: enter a number`, true);
    return undefined;
  }
  return v;
}

function wire() {
  $('btn-start').addEventListener('click', () => send('start'));
  $('btn-pause').addEventListener('click', () => send('pause'));
  $('btn-reset').addEventListener('click', () => send('reset'));
  $('speed-select').addEventListener('change', () => {
    const v = $('speed-select').value;
    send('speed', { speed: v === 'max' ? 'max' : Number(v) });
  });

  const range = $('demand-range');
  const demandIn = $('demand-input');
  range.addEventListener('input', () => (demandIn.value = range.value));
  range.addEventListener('change', () => send('setDemand', { heatDemandW: Number(range.value) }));
  demandIn.addEventListener('change', () => {
    const v = numberOf('demand-input', 'heat demand');
    if (v === undefined) return;
    range.value = String(v);
    send('setDemand', { heatDemandW: v });
  });

  $('btn-load').addEventListener('click', () => {
    const v = numberOf('load-input', 'load');
    if (v === undefined) return;
    send('loadStep', state.scenario?.load.kind === 'iA' ? { loadIA: v } : { loadROhm: v });
  });
  $('btn-inlet').addEventListener('click', () => {
    const v = numberOf('inlet-input', 'coolant inlet');
    if (v !== undefined) send('setInlet', { inletC: v });
  });
  $('supervisor-toggle').addEventListener('change', () => {
    const on = $('supervisor-toggle').checked;
    setSupervisor(on);
    send('supervisor', { on });
  });
  $('btn-knobs').addEventListener('click', () => {
    const f = numberOf('fsw-input', 'switching frequency');
    const d = numberOf('dead-input', 'dead time');
    const g = numberOf('vdrive-input', 'gate drive');
    if (f === undefined || d === undefined || g === undefined) return;
    send('manual', { fswHz: f * 1000, deadTimeS: d * 1e-9, vDriveV: g });
  });
  $('btn-gains').addEventListener('click', () => {
    const kp = numberOf('kp-input', 'kp');
    const ki = numberOf('ki-input', 'ki');
    if (kp !== undefined && ki !== undefined) send('gains', { kp, ki });
  });
  $('case-select').addEventListener('change', () => {
    const name = $('case-select').value;
    if (name) {
      state.loadRequested = true;
      send('loadScenario', { name });
    }
  });
  for (const id of ['dl-replay', 'dl-trace']) {
    $(id).addEventListener('click', (/** @type {Event} */ ev) => {
      if (!state.sessionId) ev.preventDefault();
    });
  }

  for (const tab of document.querySelectorAll('.tabs button')) {
    tab.addEventListener('click', () => openTab(/** @type {HTMLElement} */ (tab).id));
  }
  $('btn-margins').addEventListener('click', () => requestMargins());
  $('btn-validate').addEventListener('click', () => void validateText());
  $('scenario-text').addEventListener('input', () => (state.editorDirty = true));
  $('btn-load-text').addEventListener('click', async () => {
    const text = $('scenario-text').value;
    state.loadRequested = true;
    send('loadScenario', { text });
  });
  window.addEventListener('resize', () => charts.resize());
}

function requestMargins() {
  $('btn-margins').disabled = true;
  $('stab-summary').textContent = 'analysing the loop at the present point…';
  send('margins', { map: true });
  setTimeout(() => ($('btn-margins').disabled = false), 4000);
}

/** @param {string} tabId */
function openTab(tabId) {
  for (const tab of document.querySelectorAll('.tabs button')) {
    const on = tab.id === tabId;
    tab.setAttribute('aria-selected', String(on));
    $(/** @type {HTMLElement} */ (tab).dataset.panel).hidden = !on;
  }
  if (tabId === 'tab-charts') {
    charts.draw(true);
    charts.resize();
  }
  if (tabId === 'tab-stability' && state.connected) requestMargins();
}

wire();
connect();
// Charts redraw a few times a second; frames arrive faster, the store keeps every point it gets.
setInterval(() => charts.draw(), 300);

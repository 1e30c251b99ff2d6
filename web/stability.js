// @ts-check
/**
 * The stability panel: Bode plot of the inner loop's gain at the present operating point, and the
 * phase-margin map over switching frequency × gate drive with the present point marked.
 */
import { num } from './protocol.js';

/** @type {any} */
const Plotly = /** @type {any} */ (globalThis).Plotly;
const CONFIG = { displayModeBar: false, responsive: true, displaylogo: false };
const FONT = { family: 'Segoe UI, Helvetica Neue, Arial, sans-serif', size: 11, color: '#1f2a30' };

/** @param {number} x @param {number} [d] */
const fmt = (x, d = 1) => (Number.isFinite(x) ? x.toFixed(d) : x === Infinity ? '∞' : '—');
/** @param {number} hz */
const fmtHz = (hz) => (!Number.isFinite(hz) ? 'none' : hz >= 1000 ? `${(hz / 1000).toFixed(2)} kHz` : `${hz.toFixed(0)} Hz`);

/**
 * @param {HTMLElement} summaryEl
 * @param {any} r  result of kind "point"
 */
export function showPoint(summaryEl, r) {
  const p = r.point;
  const where = `fsw ${(p.fswHz / 1000).toFixed(1)} kHz, dead time ${(p.deadTimeS * 1e9).toFixed(0)} ns, gate drive ${p.vDriveV.toFixed(1)} V, Tj ${p.tjHsC.toFixed(0)}/${p.tjLsC.toFixed(0)} °C`;
  summaryEl.textContent = '';
  if (r.margins.refused) {
    summaryEl.append(`No small-signal loop at ${where}: ${r.margins.refused}`);
    if (Plotly) Plotly.purge(document.getElementById('chart-bode'));
    return;
  }
  const m = r.margins;
  const pm = num(m.pmDeg);
  const gm = num(m.gmDb);
  const holds = m.stable && pm >= r.pmFloorDeg && gm >= r.gmFloorDb;
  const verdict = document.createElement('b');
  verdict.className = holds ? 'good' : 'bad';
  verdict.textContent = !m.stable ? 'UNSTABLE' : holds ? 'stable, floors held' : 'stable, below a floor';
  summaryEl.append(
    `Phase margin `, bold(`${fmt(pm)}°`), ` at ${fmtHz(num(m.crossoverHz))}, gain margin `, bold(`${fmt(gm)} dB`),
    ` at ${fmtHz(num(m.phaseCrossoverHz))} — `, verdict, ` (floors ${r.pmFloorDeg}°, ${r.gmFloorDb} dB; ${r.basis} gains) · ${where}`,
  );
  if (r.warnings?.length) summaryEl.append(document.createElement('br'), r.warnings.join(' '));
  drawBode(r);
}

/** @param {string} s */
function bold(s) {
  const b = document.createElement('b');
  b.textContent = s;
  return b;
}

/** @param {any} r */
function drawBode(r) {
  const el = document.getElementById('chart-bode');
  if (!Plotly || !el || !r.bode) return;
  const f = r.bode.freqHz.map(num);
  const mag = r.bode.magDb.map(num);
  const ph = r.bode.phaseDeg.map(num);
  const fc = num(r.margins.crossoverHz);
  const fp = num(r.margins.phaseCrossoverHz);
  const traces = [
    { type: 'scatter', mode: 'lines', name: '|L| loop gain', x: f, y: mag, line: { color: '#2463a8', width: 2 }, xaxis: 'x', yaxis: 'y' },
    { type: 'scatter', mode: 'lines', name: '∠L phase', x: f, y: ph, line: { color: '#a23b72', width: 2 }, xaxis: 'x2', yaxis: 'y2' },
  ];
  /** @type {any[]} */
  const shapes = [
    { type: 'line', xref: 'paper', yref: 'y', x0: 0, x1: 1, y0: 0, y1: 0, line: { color: '#888', width: 1, dash: 'dot' } },
    { type: 'line', xref: 'paper', yref: 'y2', x0: 0, x1: 1, y0: -180, y1: -180, line: { color: '#b3261e', width: 1, dash: 'dot' } },
  ];
  if (Number.isFinite(fc)) shapes.push({ type: 'line', xref: 'x', yref: 'paper', x0: fc, x1: fc, y0: 0, y1: 1, line: { color: '#13877a', width: 1, dash: 'dash' } });
  if (Number.isFinite(fp)) shapes.push({ type: 'line', xref: 'x', yref: 'paper', x0: fp, x1: fp, y0: 0, y1: 1, line: { color: '#e8a317', width: 1, dash: 'dash' } });
  Plotly.react(el, traces, {
    font: FONT,
    showlegend: false,
    margin: { l: 60, r: 16, t: 10, b: 40 },
    xaxis: { type: 'log', matches: 'x2', showticklabels: false, gridcolor: '#e6e1d6', anchor: 'y' },
    xaxis2: { type: 'log', title: { text: 'frequency (Hz)' }, gridcolor: '#e6e1d6', anchor: 'y2' },
    yaxis: { title: { text: 'magnitude (dB)' }, gridcolor: '#e6e1d6', domain: [0.53, 1] },
    yaxis2: { title: { text: 'phase (°)' }, gridcolor: '#e6e1d6', domain: [0, 0.47] },
    shapes,
    paper_bgcolor: '#ffffff',
    plot_bgcolor: '#fbfaf7',
  }, CONFIG);
}

/** @param {any} r result of kind "map" */
export function drawMap(r) {
  const el = document.getElementById('chart-map');
  if (!Plotly || !el) return;
  const xs = r.x.values.map((/** @type {number} */ v) => v / 1000);
  const ys = r.y.values;
  const z = r.pmDeg.map((/** @type {any[]} */ row) => row.map((v) => (v === null ? null : Math.max(-30, Math.min(120, num(v))))));
  const floor = r.pmFloorDeg;
  const traces = [
    {
      type: 'heatmap', x: xs, y: ys, z, zmin: -30, zmax: 120, zsmooth: false,
      colorscale: [[0, '#7f1d1d'], [0.2, '#d9480f'], [0.5, '#f6e7b4'], [0.75, '#8cc7a1'], [1, '#13677a']],
      colorbar: { title: { text: 'phase margin (°)' }, thickness: 12 },
      hovertemplate: 'fsw %{x:.1f} kHz<br>gate drive %{y:.2f} V<br>PM %{z:.1f}°<extra></extra>',
    },
    {
      type: 'contour', x: xs, y: ys, z, showscale: false, hoverinfo: 'skip', name: `${floor}° floor`,
      contours: { start: floor, end: floor, size: 1, coloring: 'lines', showlabels: true },
      line: { color: '#1f2a30', width: 2, dash: 'dash' },
    },
    {
      type: 'scatter', mode: 'markers+text', x: [r.current.x / 1000], y: [r.current.y], name: 'present point',
      marker: { symbol: 'star', size: 16, color: '#ffffff', line: { color: '#1f2a30', width: 2 } },
      text: ['now'], textposition: 'top center', textfont: { color: '#1f2a30', size: 11 },
    },
  ];
  const title = document.getElementById('title-map');
  if (title) title.textContent = `Phase margin over fsw × gate drive (★ now, dashed: ${floor}° floor)`;
  const ticks = [1, 2, 5, 10, 20, 50, 100, 200, 500, 1000, 2000].filter((v) => v >= Math.min(...xs) * 0.95 && v <= Math.max(...xs) * 1.05);
  Plotly.react(el, traces, {
    font: FONT,
    showlegend: false,
    margin: { l: 60, r: 16, t: 10, b: 40 },
    xaxis: { type: 'log', title: { text: 'switching frequency (kHz)' }, tickvals: ticks, ticktext: ticks.map(String) },
    yaxis: { title: { text: 'gate drive (V)' } },
    paper_bgcolor: '#ffffff',
  }, CONFIG);
}

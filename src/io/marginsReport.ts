/**
 * The margins page: one self-contained HTML file (plotly.js-dist-min inlined, so it works
 * offline and can be mailed) with the Bode plot of the inner loop at the scenario's point and,
 * when a map was computed, the margin map with the phase-margin floor drawn as a contour.
 * Pure: the caller reads plotly.min.js and writes the file.
 */
import type { PiBasis } from '../control/pi.ts';
import type { MarginMap, MarginsBode, MarginsResult } from '../analysis/margins.ts';

export interface MarginsPageInput {
  readonly result: MarginsResult;
  readonly bode: MarginsBode;
  readonly map?: MarginMap;
  readonly pmFloorDeg: number;
  readonly gmFloorDb: number;
  readonly notice: string;
}

const esc = (s: string): string => s.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);

/** JSON safe inside <script>: non-finite numbers as null, '<' escaped. */
function scriptJson(v: unknown): string {
  return JSON.stringify(v, (_k, x) => (typeof x === 'number' && !Number.isFinite(x) ? null : x)).replace(/</g, '\\u003c');
}

const f = (x: number, d: number): string => (Number.isFinite(x) ? x.toFixed(d) : x > 0 ? '∞' : 'n/a');
const hz = (x: number): string => (Number.isNaN(x) ? 'none' : x >= 1e3 ? `${(x / 1e3).toPrecision(4)} kHz` : `${x.toPrecision(4)} Hz`);

function summaryTable(r: MarginsResult): string {
  const rows = (['continuous', 'perSample'] as PiBasis[]).map((b) => {
    const m = r.bases[b];
    return `<tr><td>${b}${m.configured ? ' *' : ''}</td><td>${m.kp}</td><td>${m.ki}${b === 'continuous' ? ' /s' : ' /sample'}</td><td>${hz(m.crossoverHz)}</td><td>${f(m.pmDeg, 1)}°</td><td>${f(m.gmDb, 2)} dB</td><td>${hz(m.phaseCrossoverHz)}</td><td>${f(m.maxPoleAbs, 5)}</td><td class="${m.stable ? 'ok' : 'bad'}">${m.stable ? 'stable' : 'UNSTABLE'}</td></tr>`;
  });
  return `<table><tr><th>basis</th><th>kp</th><th>ki</th><th>crossover</th><th>PM</th><th>GM</th><th>phase crossover</th><th>max |λ|</th><th>verdict</th></tr>${rows.join('')}</table>`;
}

export function marginsPage(x: MarginsPageInput, plotlySource: string): string {
  const r = x.result;
  const p = r.point;
  const data = {
    bode: x.bode,
    bases: Object.fromEntries((['continuous', 'perSample'] as PiBasis[]).map((b) => [b, { crossoverHz: r.bases[b].crossoverHz, pmDeg: r.bases[b].pmDeg, phaseCrossoverHz: r.bases[b].phaseCrossoverHz, gmDb: r.bases[b].gmDb }])),
    configured: r.configuredBasis,
    map: x.map
      ? {
          axes: x.map.axes,
          pm: Object.fromEntries((['continuous', 'perSample'] as PiBasis[]).map((b) => [b, x.map!.cells.map((c) => (c.status === 'ok' ? c.bases![b].pmDeg : null))])),
          gm: Object.fromEntries((['continuous', 'perSample'] as PiBasis[]).map((b) => [b, x.map!.cells.map((c) => (c.status === 'ok' ? c.bases![b].gmDb : null))])),
          stable: Object.fromEntries((['continuous', 'perSample'] as PiBasis[]).map((b) => [b, x.map!.cells.map((c) => (c.status === 'ok' ? c.bases![b].stable : null))])),
        }
      : null,
    pmFloorDeg: x.pmFloorDeg,
    gmFloorDb: x.gmFloorDb,
  };
  const title = `${r.scenario}: inner-loop margins`;
  const sub = `fsw ${hz(p.fswHz)}, sample period ${(p.tsS * 1e6).toPrecision(4)} µs, delay ${r.loop.delaySamples} sample(s), duty ${p.duty.toFixed(4)}, Tj ${p.tjHsC.toFixed(1)} / ${p.tjLsC.toFixed(1)} °C`;
  const safePlotly = plotlySource.replace(/<\/script/gi, '<\\/script');
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><title>${esc(title)}</title>
<style>
body{font:14px/1.4 system-ui,sans-serif;margin:1.5em;color:#222;max-width:1200px}
h1{font-size:1.3em;margin:0}.sub{color:#555;margin:.2em 0 1em}
table{border-collapse:collapse;margin:.5em 0 1em}td,th{border:1px solid #ccc;padding:.2em .6em;text-align:right}th{background:#f4f4f4}
td:first-child{text-align:left}.ok{color:#060}.bad{color:#b00;font-weight:bold}.chart{width:100%;height:520px}
.note{color:#555;font-size:.9em}
</style></head><body>
<h1>${esc(title)}</h1><p class="sub">${esc(sub)}</p>
${summaryTable(r)}
<p class="note">* configured basis; the other basis uses the equivalent gains at the nominal ${esc(hz(r.loop.nominalFswHz))}. Exact discrete loop: PI as run by the simulator, ${r.loop.delaySamples}-sample computation delay, ZOH (PWM hold) on the averaged plant${r.loop.sensorFilterHz === null ? '' : ', feedback filter'}; dashed: continuous approximation plant(jω)·e^{−jω(N+½)Ts}.</p>
${r.warnings.map((w) => `<p class="note">note: ${esc(w)}</p>`).join('\n')}
<div id="bode" class="chart"></div>
${x.map ? '<div id="map" class="chart"></div>' : ''}
<p class="note">${esc(x.notice)}</p>
<script>${safePlotly}</script>
<script>
const D = ${scriptJson(data)};
const colors = { continuous: '#1f77b4', perSample: '#d62728' };
// PM from −90° (dark red) through 0° (pale) and the floor region (yellow) to 120° (green); zmin −90, zmax 120.
const PM_SCALE = [[0, '#67001f'], [0.40, '#f4a582'], [0.43, '#fddbc7'], [0.5, '#fee08b'], [0.75, '#a6d96a'], [1, '#1a9850']];
const bode = [];
for (const b of ['continuous', 'perSample']) {
  const e = D.bode.exact[b], a = D.bode.approx[b];
  bode.push({ x: D.bode.freqHz, y: e.magDb, name: b + ' |L| (exact)', line: { color: colors[b] }, xaxis: 'x', yaxis: 'y' });
  bode.push({ x: D.bode.freqHz, y: e.phaseDeg, name: b + ' ∠L (exact)', line: { color: colors[b] }, xaxis: 'x2', yaxis: 'y2', showlegend: false });
  if (b === D.configured) {
    bode.push({ x: D.bode.freqHz, y: a.magDb, name: b + ' continuous approx.', line: { color: colors[b], dash: 'dash', width: 1 }, xaxis: 'x', yaxis: 'y' });
    bode.push({ x: D.bode.freqHz, y: a.phaseDeg, name: b + ' approx. phase', line: { color: colors[b], dash: 'dash', width: 1 }, xaxis: 'x2', yaxis: 'y2', showlegend: false });
  }
  const m = D.bases[b];
  if (m.crossoverHz !== null) {
    bode.push({ x: [m.crossoverHz], y: [0], mode: 'markers', marker: { color: colors[b], size: 10, symbol: 'circle-open' }, name: b + ' crossover, PM ' + (m.pmDeg === null ? '∞' : m.pmDeg.toFixed(1)) + '°', xaxis: 'x', yaxis: 'y' });
    bode.push({ x: [m.crossoverHz], y: [-180 + (m.pmDeg ?? 0)], mode: 'markers', marker: { color: colors[b], size: 10, symbol: 'circle-open' }, showlegend: false, xaxis: 'x2', yaxis: 'y2' });
  }
  if (m.phaseCrossoverHz !== null) {
    bode.push({ x: [m.phaseCrossoverHz], y: [-(m.gmDb ?? 0)], mode: 'markers', marker: { color: colors[b], size: 10, symbol: 'x' }, name: b + ' phase crossover, GM ' + (m.gmDb === null ? '∞' : m.gmDb.toFixed(2)) + ' dB', xaxis: 'x', yaxis: 'y' });
  }
}
Plotly.newPlot('bode', bode, {
  title: { text: 'Loop gain L(e^{jωTs})' }, grid: { rows: 2, columns: 1, pattern: 'independent' },
  xaxis: { type: 'log', title: { text: 'frequency (Hz)' } }, yaxis: { title: { text: 'magnitude (dB)' }, zeroline: true },
  xaxis2: { type: 'log', title: { text: 'frequency (Hz)' }, matches: 'x' }, yaxis2: { title: { text: 'phase (deg)' } },
  shapes: [{ type: 'line', xref: 'x2 domain', x0: 0, x1: 1, yref: 'y2', y0: -180, y1: -180, line: { color: '#888', dash: 'dot' } }],
  legend: { orientation: 'h', y: -0.22 }, margin: { t: 40 },
}, { responsive: true });
if (D.map) {
  const ax = D.map.axes;
  if (ax.length === 1) {
    const tr = [];
    for (const b of ['continuous', 'perSample']) {
      tr.push({ x: ax[0].values, y: D.map.pm[b], name: b + ' PM (deg)', line: { color: colors[b] } });
      tr.push({ x: ax[0].values, y: D.map.gm[b], name: b + ' GM (dB)', line: { color: colors[b], dash: 'dot' }, yaxis: 'y2' });
    }
    Plotly.newPlot('map', tr, {
      title: { text: 'Margins vs ' + ax[0].path },
      xaxis: { title: { text: ax[0].path }, type: ax[0].path.endsWith('fswHz') ? 'log' : 'linear' }, yaxis: { title: { text: 'phase margin (deg)' } }, yaxis2: { title: { text: 'gain margin (dB)' }, overlaying: 'y', side: 'right' },
      shapes: [
        { type: 'line', xref: 'x domain', x0: 0, x1: 1, yref: 'y', y0: D.pmFloorDeg, y1: D.pmFloorDeg, line: { color: '#2a2', dash: 'dash' } },
        { type: 'line', xref: 'x domain', x0: 0, x1: 1, yref: 'y2', y0: D.gmFloorDb, y1: D.gmFloorDb, line: { color: '#a82', dash: 'dash' } },
      ],
      annotations: [{ xref: 'paper', x: 0, yref: 'y', y: D.pmFloorDeg, text: 'PM floor ' + D.pmFloorDeg + '°', showarrow: false, xanchor: 'left', yanchor: 'bottom' }],
      legend: { orientation: 'h', y: -0.2 },
    }, { responsive: true });
  } else {
    const nx = ax[1].values.length;
    const grid = (arr) => ax[0].values.map((_, i) => arr.slice(i * nx, (i + 1) * nx));
    const tr = [];
    ['continuous', 'perSample'].forEach((b, k) => {
      const z = grid(D.map.pm[b]).map((row) => row.map((v) => (v === null ? null : Math.max(-90, Math.min(120, v)))));
      const xa = k === 0 ? 'x' : 'x2', ya = k === 0 ? 'y' : 'y2';
      tr.push({ type: 'heatmap', x: ax[1].values, y: ax[0].values, z, zmin: -90, zmax: 120, colorscale: PM_SCALE, colorbar: { title: { text: 'PM (deg)' } }, showscale: k === 1, xaxis: xa, yaxis: ya, name: b, hovertemplate: ax[1].path + ' %{x}<br>' + ax[0].path + ' %{y}<br>PM %{z:.1f}°<extra>' + b + '</extra>' });
      tr.push({ type: 'contour', x: ax[1].values, y: ax[0].values, z, showscale: false, contours: { start: D.pmFloorDeg, end: D.pmFloorDeg, size: 1, coloring: 'none', showlabels: true }, showlegend: false, line: { color: '#000', width: 2, dash: 'dash' }, xaxis: xa, yaxis: ya, name: 'PM floor ' + D.pmFloorDeg + '°', hoverinfo: 'skip' });
    });
    Plotly.newPlot('map', tr, {
      title: { text: 'Phase margin map (dashed: the ' + D.pmFloorDeg + '° floor) — left: continuous basis, right: per-sample basis' },
      grid: { rows: 1, columns: 2, pattern: 'independent' },
      xaxis: { title: { text: ax[1].path } }, yaxis: { title: { text: ax[0].path }, type: ax[0].path.endsWith('fswHz') ? 'log' : 'linear' },
      xaxis2: { title: { text: ax[1].path } }, yaxis2: { title: { text: ax[0].path }, type: ax[0].path.endsWith('fswHz') ? 'log' : 'linear' },
      showlegend: false,
    }, { responsive: true });
  }
}
</script></body></html>
`;
}

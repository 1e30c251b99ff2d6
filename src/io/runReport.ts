/**
 * The run report: one HTML page with the charts of a replay, its metrics and its cautions.
 * plotly.js-dist-min is copied beside the page, so the folder works offline.
 */
import { copyFileSync, renameSync } from 'node:fs';
import { createRequire } from 'node:module';
import { join } from 'node:path';
import type { RunMetrics } from '../analysis/metrics.ts';
import type { SimRecord } from '../sim/engine.ts';

export interface RunReportInput {
  name: string;
  description: string;
  status: string;
  cause: string | undefined;
  topology: 'buck' | 'halfBridge';
  records: readonly SimRecord[];
  metrics: RunMetrics;
  cautions: ReadonlyArray<{ code: string; severity: string; message: string }>;
  warnings: readonly string[];
  notice: string;
}

const esc = (s: string): string => s.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);
const num = (x: number, d = 2): string => (Number.isFinite(x) ? x.toFixed(d) : '—');

function columns(records: readonly SimRecord[]): Record<string, Array<number | string>> {
  const keys = [
    'tS', 'demandW', 'heatToCoolantW', 'totalLossW', 'semiLossW', 'hsLossW', 'lsLossW', 'passiveLossW', 'gateDriverW',
    'efficiency', 'yMeasured', 'reference', 'yDevMax', 'duty', 'fswHz', 'deadTimeS', 'vDriveV', 'tjHsC', 'tjLsC', 'heatsinkC',
    'coolantC', 'inletC', 'measuredW', 'targetW', 'binding', 'pmDeg', 'gmDb',
  ];
  const out: Record<string, Array<number | string>> = {};
  for (const k of keys) if (records.length > 0 && k in records[0]) out[k] = records.map((r) => r[k]);
  return out;
}

function metricsTable(m: RunMetrics, yUnit: string): string {
  const rows: Array<[string, string]> = [];
  rows.push(['tracked quantity', m.trackedQuantity]);
  for (const s of m.heatTracking.steps)
    rows.push([
      `step to ${num(s.demandW, 1)} W at ${num(s.tStartS, 0)} s`,
      `final ${num(s.finalW, 2)} W (error ${num(s.steadyErrorW, 2)} W, band ±${num(s.bandW, 2)} W), settling ${Number.isFinite(s.settlingS) ? `${num(s.settlingS, 1)} s` : 'not settled'}, overshoot ${num(s.overshootPct, 1)} %${s.limited ? ' — LIMITED' : ''}`,
    ]);
  rows.push(['heat tracking IAE / RMS', `${num(m.heatTracking.iaeWs, 1)} W·s / ${num(m.heatTracking.rmsErrorW, 2)} W`]);
  const g = m.regulation;
  rows.push(['regulation: max deviation', `${num(g.maxDeviation, 4)} ${yUnit} (during actuator moves ${num(g.maxDeviationDuringMoves, 4)} ${yUnit})`]);
  rows.push(['regulation: settling after moves', `max ${num(g.settleAfterMovesMaxS * 1e3, 2)} ms, mean ${num(g.settleAfterMovesMeanS * 1e3, 2)} ms over ${g.moves} moves`]);
  const e = m.energyJ;
  rows.push(['energy in / out', `${num(e.input / 1e3, 2)} kJ / ${num(e.output / 1e3, 2)} kJ`]);
  rows.push(['loss: total / semiconductor', `${num(e.totalLoss / 1e3, 3)} kJ / ${num(e.semiconductorLoss / 1e3, 3)} kJ`]);
  rows.push(['heat to coolant / elsewhere', `${num(e.heatToCoolant / 1e3, 3)} kJ / ${num(e.heatElsewhere / 1e3, 3)} kJ (useful fraction ${num(100 * m.usefulHeatFraction, 1)} %)`]);
  const t = m.temperatures;
  rows.push(['peak junction', `${num(t.peakTjC, 1)} °C at ${num(t.peakTjAtS, 1)} s (limit ${num(t.limitC, 0)} °C, margin ${num(t.marginK, 0)} K; above limit − margin ${num(t.timeAboveLimitMinusMarginS, 1)} s)`]);
  if (m.zeroDemand)
    rows.push(['zero-demand efficiency', `${num(100 * m.zeroDemand.efficiency, 2)} % vs best ${num(100 * m.zeroDemand.bestEfficiency, 2)} % (penalty ${num(m.zeroDemand.penaltyPctPoints, 3)} points)`]);
  const a = m.actuatorTravel;
  rows.push(['actuator travel', `fsw ${num(a.fswHz / 1e3, 1)} kHz, dead time ${num(a.deadTimeS * 1e9, 0)} ns, gate drive ${num(a.vDriveV, 2)} V`]);
  return `<table>${rows.map(([k, v]) => `<tr><th>${esc(k)}</th><td>${esc(v)}</td></tr>`).join('')}</table>`;
}

export function renderRunReport(x: RunReportInput): string {
  const yUnit = x.topology === 'buck' ? 'V' : 'A';
  const data = JSON.stringify({ cols: columns(x.records), yUnit, yName: x.topology === 'buck' ? 'output voltage' : 'load current' }).replace(/</g, '\\u003c');
  const cautions = x.cautions.length
    ? `<section class="cautions"><h2>Cautions</h2><ul>${x.cautions.map((c) => `<li class="${esc(c.severity)}"><b>${esc(c.code)}</b>: ${esc(c.message)}</li>`).join('')}</ul><p>${esc(x.notice)}</p></section>`
    : '';
  const warnings = x.warnings.length ? `<section><h2>Numerical notes</h2><ul>${x.warnings.map((w) => `<li>${esc(w)}</li>`).join('')}</ul></section>` : '';
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><title>lossdial run — ${esc(x.name)}</title>
<meta name="viewport" content="width=device-width, initial-scale=1">
<style>
body{font-family:system-ui,sans-serif;margin:1.5rem auto;max-width:1200px;color:#1d2430;background:#fbfaf7}
h1{font-size:1.4rem;margin-bottom:.2rem} .sub{color:#5b6472;margin-top:0}
.status{display:inline-block;padding:.1rem .6rem;border-radius:.8rem;background:#dfeee3;color:#1f5d33;font-weight:600}
.status.limited,.status.interrupted{background:#fbeccf;color:#7a4b00} .status.diverged{background:#f8d7d4;color:#8a1c12}
table{border-collapse:collapse;width:100%;font-size:.9rem} th{text-align:left;width:18rem;color:#3c4656;font-weight:600}
th,td{border-bottom:1px solid #e4e1da;padding:.3rem .5rem;vertical-align:top}
.cautions{border-left:4px solid #c2410c;background:#fff4ec;padding:.5rem 1rem;margin:1rem 0}
.cautions li.danger b{color:#a4161a} .chart{height:300px;margin:.6rem 0}
</style></head><body>
<h1>${esc(x.name)}</h1><p class="sub">${esc(x.description)}</p>
<p>Status <span class="status ${esc(x.status)}">${esc(x.status)}</span>${x.cause ? ` — ${esc(x.cause)}` : ''}</p>
${cautions}
<h2>Metrics</h2>${metricsTable(x.metrics, yUnit)}
${warnings}
<h2>Charts</h2>
<div id="heat" class="chart"></div><div id="reg" class="chart"></div><div id="act" class="chart" style="height:420px"></div>
<div id="temp" class="chart"></div><div id="loss" class="chart"></div><div id="margin" class="chart"></div>
<script src="plotly.min.js"></script>
<script>
const D = ${data};
const c = D.cols, t = c.tS;
const L = (title, y) => ({title:{text:title,font:{size:14}},margin:{l:60,r:20,t:36,b:40},xaxis:{title:{text:'time (s)'}},yaxis:{title:{text:y}},legend:{orientation:'h'},paper_bgcolor:'#fbfaf7',plot_bgcolor:'#ffffff'});
const line = (y, name, color, extra) => Object.assign({x:t,y,name,type:'scatter',mode:'lines',line:{color,width:1.6}}, extra||{});
if (typeof Plotly === 'undefined') { document.querySelectorAll('.chart').forEach(e => e.textContent = 'plotly.min.js not found beside this page'); } else {
const tracked = c.measuredW ? [line(c.measuredW,'measured (sensors)','#8a63d2',{line:{dash:'dot',color:'#8a63d2',width:1.2}})] : [];
Plotly.newPlot('heat',[line(c.demandW,'demand','#222',{line:{shape:'hv',color:'#222',width:1.6}}),line(c.totalLossW,'electrical loss','#d1495b'),line(c.semiLossW,'semiconductor loss','#edae49'),line(c.heatToCoolantW,'heat to coolant','#00798c')].concat(tracked),L('Heat demand and delivery','power (W)'));
Plotly.newPlot('reg',[line(c.yMeasured,D.yName,'#30638e'),line(c.reference,'reference','#222',{line:{dash:'dash',color:'#222',width:1}})],L('Regulation (interval means)',D.yName+' ('+D.yUnit+')'));
Plotly.newPlot('act',[line(c.fswHz.map(v=>v/1e3),'fsw','#d1495b',{yaxis:'y'}),line(c.deadTimeS.map(v=>v*1e9),'dead time','#edae49',{yaxis:'y2'}),line(c.vDriveV,'gate drive','#00798c',{yaxis:'y3'})],
  Object.assign(L('Actuators',''),{yaxis:{title:{text:'fsw (kHz)'},domain:[0.70,1]},yaxis2:{title:{text:'dead time (ns)'},domain:[0.36,0.64]},yaxis3:{title:{text:'gate drive (V)'},domain:[0,0.30]}}));
Plotly.newPlot('temp',[line(c.tjHsC,'junction high side','#d1495b'),line(c.tjLsC,'junction low side','#edae49'),line(c.heatsinkC,'cold plate','#30638e'),line(c.coolantC,'coolant out','#00798c'),line(c.inletC,'coolant in','#7c8796',{line:{dash:'dot',color:'#7c8796',width:1}})],L('Temperatures','temperature (°C)'));
const st = (y,name,color)=>({x:t,y,name,type:'scatter',mode:'lines',stackgroup:'a',line:{width:0.5,color}});
if (c.pmDeg) Plotly.newPlot('margin',[line(c.pmDeg,'phase margin','#30638e'),line(c.gmDb,'gain margin','#d1495b',{yaxis:'y2'})],Object.assign(L('Inner-loop margins along the run','phase margin (°)'),{yaxis2:{title:{text:'gain margin (dB)'},overlaying:'y',side:'right'}}));
else document.getElementById('margin').remove();
Plotly.newPlot('loss',[st(c.hsLossW,'high side','#d1495b'),st(c.lsLossW,'low side','#edae49'),st(c.passiveLossW,'inductor + capacitors','#30638e'),st(c.gateDriverW,'gate driver','#7c8796')],L('Loss breakdown','power (W)'));
}
</script></body></html>
`;
}

/** Copy plotly.min.js beside a report (atomically), so the page works offline. */
export function copyPlotlyBeside(dir: string): void {
  const require = createRequire(import.meta.url);
  const src = require.resolve('plotly.js-dist-min/plotly.min.js');
  const dst = join(dir, 'plotly.min.js');
  const tmp = `${dst}.${process.pid}.tmp`;
  copyFileSync(src, tmp);
  renameSync(tmp, dst);
}

/**
 * The study report: one self-contained HTML page (plotly.js inlined, data embedded), so it opens
 * offline and can be mailed as a single file. Pure: the caller passes the plotly source text.
 */
import { HARDWARE_NOTICE } from '../analysis/cautions.ts';
import { COST_LABELS, type RiskRow, type StudySummary } from './risk.ts';

export interface ReportInput {
  study: string;
  description: string;
  scenario: string;
  kind: string;
  total: number;
  /** The operating setting of a device spread, e.g. `gateDrive.vDriveV = 5`. */
  operating: Readonly<Record<string, number>>;
  tjMarginK: number;
  spread: unknown;
  summary: StudySummary;
}

function esc(s: string): string {
  return s.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);
}

function pct(x: number): string {
  if (x === 0) return '0 %';
  return x < 0.001 ? `${(100 * x).toPrecision(2)} %` : `${(100 * x).toFixed(x < 0.1 ? 2 : 1)} %`;
}

function num(x: number): string {
  if (!Number.isFinite(x)) return '–';
  const a = Math.abs(x);
  return a >= 1000 ? x.toFixed(0) : a >= 10 ? x.toFixed(1) : a >= 0.01 || a === 0 ? x.toFixed(2) : x.toPrecision(2);
}

function riskRows(rows: readonly RiskRow[]): string {
  return rows
    .map((r) => `<tr><td>${esc(r.label)}</td><td class="n">${r.count}</td><td class="n">${r.n}</td><td class="n">${pct(r.fraction)}</td><td class="n">${pct(r.lo)} – ${pct(r.hi)}</td></tr>`)
    .join('\n');
}

/** `</script` inside inlined code would end the element early. */
function scriptSafe(code: string): string {
  return code.replace(/<\/script/gi, '<\\/script');
}

export function renderStudyReport(input: ReportInput, plotlySource: string): string {
  const s = input.summary;
  const counts = Object.entries(s.counts)
    .map(([k, v]) => `${esc(k)} ${v}`)
    .join(', ');
  const operating = Object.entries(input.operating)
    .map(([k, v]) => `<code>${esc(k)} = ${v}</code>`)
    .join(', ');
  const cost = Object.entries(s.cost)
    .map(
      ([f, st]) =>
        `<tr><td>${esc(COST_LABELS[f] ?? f)}</td><td class="n">${st.n}</td><td class="n">${num(st.mean)}</td><td class="n">${num(st.p5)}</td><td class="n">${num(st.p50)}</td><td class="n">${num(st.p95)}</td><td class="n">${num(st.min)}</td><td class="n">${num(st.max)}</td></tr>`,
    )
    .join('\n');
  const cells = s.cells
    ? `<h2>Risk per grid cell</h2>\n<table><tr><th>grid values</th>${s.risk.map((r) => `<th>${esc(r.label)}</th>`).join('')}</tr>\n${s.cells
        .map(
          (c) =>
            `<tr><td><code>${esc(Object.entries(c.params).map(([k, v]) => `${k}=${String(v)}`).join(' '))}</code></td>${s.risk
              .map((r) => {
                const row = c.risk.find((x) => x.key === r.key);
                return `<td class="n">${row ? `${pct(row.fraction)} (${pct(row.lo)} – ${pct(row.hi)})` : '–'}</td>`;
              })
              .join('')}</tr>`,
        )
        .join('\n')}</table>`
    : '';
  const plots = s.histograms.map((h, i) => `<div class="plot" id="hist${i}"></div>`).join('\n');
  const data = JSON.stringify(s.histograms).replace(/</g, '\\u003c');
  return `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<title>${esc(input.study)} — lossdial study</title>
<style>
body { font: 14px/1.45 system-ui, sans-serif; margin: 2rem auto; max-width: 1100px; padding: 0 1rem; color: #1d2733; }
h1 { font-size: 1.5rem; margin-bottom: .2rem; } h2 { font-size: 1.15rem; margin-top: 2rem; }
table { border-collapse: collapse; margin: .5rem 0; } td, th { border-bottom: 1px solid #d5dbe1; padding: .25rem .6rem; text-align: left; }
td.n { text-align: right; font-variant-numeric: tabular-nums; } .muted { color: #5b6b7b; }
.plot { width: 100%; height: 340px; } .notice { background: #fff4e0; border-left: 4px solid #e0a030; padding: .5rem .8rem; }
pre { background: #f4f6f8; padding: .6rem; overflow-x: auto; }
</style>
</head>
<body>
<h1>${esc(input.study)}</h1>
<p class="muted">${esc(input.description)}</p>
<p>Scenario <b>${esc(input.scenario)}</b>, kind <b>${esc(input.kind)}</b>, ${input.total} samples (${counts}).${operating ? ` Evaluated at ${operating}.` : ''} Tj limit: each device's tjMaxC − ${input.tjMarginK} K.</p>
<h2>Risk table</h2>
<p class="muted">Fraction of evaluated builds with each hazard, with its 95 % Wilson score interval (with no hits the upper bound is still informative: about 3.8/n).</p>
<table><tr><th>hazard</th><th>builds</th><th>of</th><th>fraction</th><th>95 % interval</th></tr>
${riskRows(s.risk)}
</table>
<h2>${input.kind === 'point' ? 'Heat margin' : 'Statistics'}</h2>
<p class="muted">Over the evaluated samples.${input.spread ? ' Changes are against the same sample with nominal devices.' : ''}</p>
<table><tr><th>quantity</th><th>n</th><th>mean</th><th>p5</th><th>median</th><th>p95</th><th>min</th><th>max</th></tr>
${cost}
</table>
${cells}
<h2>Distributions</h2>
${plots}
${input.spread ? `<h2>Device spread</h2>\n<pre>${esc(JSON.stringify(input.spread, null, 2))}</pre>` : ''}
<p class="notice">${esc(HARDWARE_NOTICE)}</p>
<script>${scriptSafe(plotlySource)}</script>
<script>
const hists = ${data};
hists.forEach((h, i) => {
  const x = h.counts.map((_, j) => 0.5 * (h.edges[j] + h.edges[j + 1]));
  const width = h.edges.length > 1 ? h.edges[1] - h.edges[0] : 1;
  Plotly.newPlot('hist' + i, [{ type: 'bar', x, y: h.counts, width: h.counts.map(() => width), marker: { color: '#3b6ea5' } }],
    { title: { text: h.label }, xaxis: { title: { text: h.label } }, yaxis: { title: { text: 'builds' } }, bargap: 0.02, margin: { t: 40, r: 20 } },
    { displaylogo: false, responsive: true });
});
</script>
</body>
</html>
`;
}

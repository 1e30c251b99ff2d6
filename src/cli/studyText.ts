/** Terminal rendering of a study's outcome and its progress line (the files carry the full data). */
import { COST_LABELS, type StudySummary } from '../study/risk.ts';
import { fixed, table } from './format.ts';

function pct(x: number): string {
  return x === 0 ? '0 %' : x < 0.01 ? `${fixed(100 * x, 2)} %` : `${fixed(100 * x, 1)} %`;
}

export function renderRiskTable(summary: StudySummary, kind: string): string {
  const head = ['hazard', 'builds', 'fraction', '95 % interval (Wilson)'];
  const rows = summary.risk.map((r) => [r.label, `${r.count}/${r.n}`, pct(r.fraction), `${pct(r.lo)} … ${pct(r.hi)}`]);
  const cost = Object.entries(summary.cost).map(([f, s]) => [COST_LABELS[f] ?? f, fixed(s.mean, 2), fixed(s.p5, 2), fixed(s.p50, 2), fixed(s.p95, 2), fixed(s.max, 2)]);
  let text = `Risk\n${table([head, ...rows], ['l', 'r', 'r', 'r'])}`;
  if (summary.cells) {
    const keys = summary.risk.filter((r) => r.key !== 'any').map((r) => r.key);
    const cellHead = ['grid cell', ...keys, 'any (95 % interval)'];
    const cellRows = summary.cells.map((c) => {
      const byKey = new Map(c.risk.map((r) => [r.key, r]));
      const any = byKey.get('any');
      return [
        Object.entries(c.params).map(([k, v]) => `${k}=${String(v)}`).join(' '),
        ...keys.map((k) => (byKey.has(k) ? `${byKey.get(k)!.count}/${byKey.get(k)!.n}` : '–')),
        any ? `${pct(any.fraction)} (${pct(any.lo)} … ${pct(any.hi)})` : '–',
      ];
    });
    text += `\nRisk per grid cell (builds with each hazard)\n${table([cellHead, ...cellRows])}`;
  }
  if (cost.length > 0) text += `\n${kind === 'point' ? 'Heat margin' : 'Statistics'}\n${table([['quantity', 'mean', 'p5', 'median', 'p95', 'max'], ...cost])}`;
  return text;
}

export function rateText(samplesPerS: number): string {
  return samplesPerS >= 100 ? fixed(samplesPerS, 0) : samplesPerS >= 10 ? fixed(samplesPerS, 1) : fixed(samplesPerS, 2);
}

export function etaText(s: number): string {
  if (!Number.isFinite(s)) return '?';
  if (s < 60) return `${Math.ceil(s)} s`;
  if (s < 3600) return `${Math.floor(s / 60)} min ${Math.round(s % 60)} s`;
  return `${Math.floor(s / 3600)} h ${Math.round((s % 3600) / 60)} min`;
}

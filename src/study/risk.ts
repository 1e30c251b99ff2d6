/**
 * What a finished study says: counts by status, the risk table (fractions of builds with each
 * hazard, with 95 % Wilson score intervals), statistics of the heat-margin cost, and binned
 * histograms for the report. Pure; the same records always give the same summary.
 */
import type { SampleRecord } from './evaluate.ts';

/** z for a two-sided 95 % interval. */
const Z95 = 1.959963984540054;

/**
 * Wilson score interval for k successes in n trials (E. B. Wilson, "Probable inference, the law
 * of succession, and statistical inference", JASA 22(158):209–212, 1927). Unlike the normal
 * approximation it stays inside [0, 1] and is informative at k = 0 (upper bound ≈ 3.84/n).
 */
export function wilsonInterval(k: number, n: number, z = Z95): { lo: number; hi: number } {
  if (!(n > 0)) return { lo: 0, hi: 1 };
  const p = k / n;
  const z2 = z * z;
  const denom = 1 + z2 / n;
  const centre = (p + z2 / (2 * n)) / denom;
  const half = (z * Math.sqrt((p * (1 - p)) / n + z2 / (4 * n * n))) / denom;
  // At k = 0 and k = n the bound is exact (0 or 1); rounding would leave e.g. 2e-17.
  return { lo: k === 0 ? 0 : Math.max(0, centre - half), hi: k === n ? 1 : Math.min(1, centre + half) };
}

export interface RiskRow {
  key: string;
  label: string;
  count: number;
  n: number;
  fraction: number;
  lo: number;
  hi: number;
}

export interface Stats {
  n: number;
  mean: number;
  min: number;
  p5: number;
  p50: number;
  p95: number;
  max: number;
}

export interface Histogram {
  field: string;
  label: string;
  edges: number[];
  counts: number[];
}

export interface StudySummary {
  counts: Record<string, number>;
  evaluated: number;
  risk: RiskRow[];
  cost: Record<string, Stats>;
  histograms: Histogram[];
  cells?: Array<{ params: Record<string, unknown>; risk: RiskRow[] }>;
}

type Flags = Record<string, unknown>;

const FLAGS = ['saturation', 'runaway', 'tjOverLimit', 'noLoop', 'unstable', 'pmBelowFloor', 'gmBelowFloor'];

/** A boolean result field, or undefined when this kind of sample does not have it. */
function flag(r: Flags, key: string): boolean | undefined {
  return r[key] === undefined ? undefined : Boolean(r[key]);
}

function anyFlag(r: Flags): boolean | undefined {
  const present = FLAGS.filter((k) => r[k] !== undefined);
  return present.length === 0 ? undefined : present.some((k) => Boolean(r[k]));
}

const HAZARDS: ReadonlyArray<{ key: string; label: string; test: (r: Flags) => boolean | undefined }> = [
  { key: 'hsSaturation', label: 'high side saturates or cannot turn on', test: (r) => (r.hsSaturated === undefined ? undefined : Boolean(r.hsSaturated || r.hsCannotTurnOn)) },
  { key: 'lsSaturation', label: 'low side saturates or cannot turn on', test: (r) => (r.lsSaturated === undefined ? undefined : Boolean(r.lsSaturated || r.lsCannotTurnOn)) },
  { key: 'saturation', label: 'a switch saturates or cannot turn on', test: (r) => flag(r, 'saturation') },
  { key: 'runaway', label: 'thermal runaway', test: (r) => flag(r, 'runaway') },
  { key: 'tjOverLimit', label: 'Tj over limit − margin', test: (r) => flag(r, 'tjOverLimit') },
  { key: 'noLoop', label: 'no small-signal loop (runaway or lost regulation)', test: (r) => flag(r, 'noLoop') },
  { key: 'unstable', label: 'inner loop unstable', test: (r) => flag(r, 'unstable') },
  { key: 'pmBelowFloor', label: 'phase margin below floor', test: (r) => flag(r, 'pmBelowFloor') },
  { key: 'gmBelowFloor', label: 'gain margin below floor', test: (r) => flag(r, 'gmBelowFloor') },
  { key: 'any', label: 'any of the above', test: (r) => anyFlag(r) },
];

function isEvaluated(rec: SampleRecord): boolean {
  return rec.result.status !== 'invalid' && rec.result.status !== 'failed';
}

export function riskTable(records: readonly SampleRecord[]): RiskRow[] {
  const rows: RiskRow[] = [];
  const evaluated = records.filter(isEvaluated);
  for (const h of HAZARDS) {
    let k = 0;
    let n = 0;
    for (const rec of evaluated) {
      const t = h.test(rec.result as Flags);
      if (t === undefined) continue;
      n++;
      if (t) k++;
    }
    if (n === 0) continue;
    const { lo, hi } = wilsonInterval(k, n);
    rows.push({ key: h.key, label: h.label, count: k, n, fraction: k / n, lo, hi });
  }
  return rows;
}

/** Quantile by linear interpolation between order statistics (Hyndman & Fan type 7, the common default). */
export function quantile(sorted: readonly number[], q: number): number {
  if (sorted.length === 0) return NaN;
  const h = (sorted.length - 1) * q;
  const lo = Math.floor(h);
  const hi = Math.ceil(h);
  return sorted[lo] + (h - lo) * (sorted[hi] - sorted[lo]);
}

export function stats(values: readonly number[]): Stats {
  const v = values.filter(Number.isFinite).sort((a, b) => a - b);
  const mean = v.length ? v.reduce((s, x) => s + x, 0) / v.length : NaN;
  return { n: v.length, mean, min: v[0] ?? NaN, p5: quantile(v, 0.05), p50: quantile(v, 0.5), p95: quantile(v, 0.95), max: v[v.length - 1] ?? NaN };
}

/** `bins` equal-width bins over [min, max] of the finite values (a single bin when they are all equal). */
export function histogram(field: string, label: string, values: readonly number[], bins = 40): Histogram {
  const v = values.filter(Number.isFinite);
  if (v.length === 0) return { field, label, edges: [], counts: [] };
  let lo = Infinity;
  let hi = -Infinity;
  for (const x of v) {
    if (x < lo) lo = x;
    if (x > hi) hi = x;
  }
  const nb = hi > lo ? bins : 1;
  const width = hi > lo ? (hi - lo) / nb : 1;
  const edges = Array.from({ length: nb + 1 }, (_, i) => lo + i * width);
  const counts = new Array<number>(nb).fill(0);
  for (const x of v) counts[Math.min(nb - 1, Math.floor((x - lo) / width))]++;
  return { field, label, edges, counts };
}

const COST_FIELDS: ReadonlyArray<readonly [string, string]> = [
  ['tjPeakC', 'peak junction temperature (°C)'],
  ['totalLossW', 'total loss (W)'],
  ['heatToCoolantW', 'heat to coolant (W)'],
  ['tjHeadroomK', 'Tj headroom below limit − margin (K)'],
  ['dLossW', 'loss change vs nominal devices (W)'],
  ['dTjPeakK', 'peak Tj change vs nominal devices (K)'],
  ['dHeatToCoolantW', 'coolant heat change vs nominal devices (W)'],
  ['achievableHeatW', 'coolant heat reachable under the Tj limit (W)'],
  ['dAchievableHeatW', 'reachable heat change vs nominal devices (W)'],
  ['heatToCoolantMeanW', 'mean heat to coolant (W)'],
  ['pmDeg', 'phase margin (°)'],
  ['gmDb', 'gain margin (dB)'],
  ['crossoverHz', 'crossover frequency (Hz)'],
];

export const COST_LABELS: Readonly<Record<string, string>> = Object.fromEntries(COST_FIELDS);

const HISTOGRAM_FIELDS = ['tjPeakC', 'totalLossW', 'achievableHeatW', 'pmDeg', 'gmDb'];

/** `gridPaths`: the study's grid axes; with any, the risk table is also given per grid cell. */
export function summarize(records: readonly SampleRecord[], gridPaths: readonly string[] = []): StudySummary {
  const counts: Record<string, number> = {};
  for (const r of records) counts[r.result.status] = (counts[r.result.status] ?? 0) + 1;
  const evaluated = records.filter(isEvaluated);
  const column = (f: string): number[] | undefined => {
    const v = evaluated.map((r) => (r.result as Flags)[f]).filter((x): x is number => typeof x === 'number');
    return v.length > 0 ? v : undefined;
  };
  const cost: Record<string, Stats> = {};
  for (const [f] of COST_FIELDS) {
    const v = column(f);
    if (v) cost[f] = stats(v);
  }
  const histograms: Histogram[] = [];
  for (const f of HISTOGRAM_FIELDS) {
    const v = column(f);
    if (v) histograms.push(histogram(f, COST_LABELS[f], v));
  }
  const summary: StudySummary = { counts, evaluated: evaluated.length, risk: riskTable(records), cost, histograms };
  if (gridPaths.length === 0) return summary;
  const byCell = new Map<string, { params: Record<string, unknown>; records: SampleRecord[] }>();
  for (const r of records) {
    const params = Object.fromEntries(gridPaths.map((p) => [p, r.params[p]]));
    const key = JSON.stringify(params);
    if (!byCell.has(key)) byCell.set(key, { params, records: [] });
    byCell.get(key)!.records.push(r);
  }
  if (byCell.size <= 500) summary.cells = [...byCell.values()].map((c) => ({ params: c.params, risk: riskTable(c.records) }));
  return summary;
}

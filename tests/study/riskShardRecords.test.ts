/** Wilson intervals, the risk table, shard selection from scheduler variables, and results-file reading. */
import { describe, expect, it } from 'vitest';
import type { SampleRecord } from '../../src/study/evaluate.ts';
import { readResultsText, resultsCsv, sortedJsonl } from '../../src/study/records.ts';
import { histogram, quantile, riskTable, summarize, wilsonInterval } from '../../src/study/risk.ts';
import { parseShard } from '../../src/study/shard.ts';

describe('wilsonInterval', () => {
  // Newcombe, "Two-sided confidence intervals for the single proportion: comparison of seven
  // methods", Stat. Med. 17:857–872 (1998), Table II, method 3 (score interval without continuity
  // correction). The table gives 4 decimals, hence abs 6e-5.
  const rows: Array<[number, number, number, number]> = [
    [81, 263, 0.2553, 0.3662],
    [15, 148, 0.0624, 0.1605],
    [0, 20, 0, 0.1611],
    [1, 29, 0.0061, 0.1718],
  ];
  it.each(rows)('%i of %i → [%f, %f] (Newcombe 1998)', (k, n, lo, hi) => {
    const w = wilsonInterval(k, n);
    expect(Math.abs(w.lo - lo)).toBeLessThan(6e-5);
    expect(Math.abs(w.hi - hi)).toBeLessThan(6e-5);
  });

  it('is exactly 0 at the bottom with no hits and exactly 1 at the top with all hits', () => {
    expect(wilsonInterval(0, 1000).lo).toBe(0);
    expect(wilsonInterval(1000, 1000).hi).toBe(1);
    // With no hits the upper bound is z²/(n + z²) ≈ 3.84/n.
    expect(wilsonInterval(0, 1000).hi).toBeCloseTo(1.959963984540054 ** 2 / (1000 + 1.959963984540054 ** 2), 12);
  });

  it('stays inside [0, 1] and contains the estimate', () => {
    for (const [k, n] of [[0, 1], [1, 1], [3, 1000], [1000, 1000]]) {
      const w = wilsonInterval(k, n);
      expect(w.lo).toBeGreaterThanOrEqual(0);
      expect(w.hi).toBeLessThanOrEqual(1);
      expect(w.lo).toBeLessThanOrEqual(k / n);
      expect(w.hi).toBeGreaterThanOrEqual(k / n);
    }
  });
});

function rec(index: number, result: Record<string, unknown>): SampleRecord {
  return { index, seed: index, params: {}, result: result as SampleRecord['result'] };
}

const ok = { status: 'ok', hsSaturated: false, lsSaturated: false, hsCannotTurnOn: false, lsCannotTurnOn: false, saturation: false, runaway: false, tjOverLimit: false, tjPeakC: 40, totalLossW: 10 };

describe('riskTable and summarize', () => {
  const records = [
    rec(0, ok),
    rec(1, { ...ok, hsSaturated: true, saturation: true, tjPeakC: 90, totalLossW: 30 }),
    rec(2, { ...ok, status: 'runaway', runaway: true, tjOverLimit: true, tjPeakC: 250, totalLossW: 600 }),
    rec(3, { status: 'invalid', error: 'devices.highSide.vth25V: Too small' }),
  ];

  it('counts each hazard over the evaluated samples (invalid ones are left out)', () => {
    const t = Object.fromEntries(riskTable(records).map((r) => [r.key, [r.count, r.n]]));
    expect(t).toEqual({ hsSaturation: [1, 3], lsSaturation: [0, 3], saturation: [1, 3], runaway: [1, 3], tjOverLimit: [1, 3], any: [2, 3] });
  });

  it('summarizes counts by status, cost statistics and histograms', () => {
    const s = summarize(records);
    expect(s.counts).toEqual({ ok: 2, runaway: 1, invalid: 1 });
    expect(s.evaluated).toBe(3);
    expect(s.cost.tjPeakC).toMatchObject({ n: 3, min: 40, p50: 90, max: 250 });
    expect(s.histograms.map((h) => h.field)).toEqual(['tjPeakC', 'totalLossW']);
    expect(s.histograms[0].counts.reduce((a, b) => a + b, 0)).toBe(3);
  });

  it('quantile interpolates between order statistics (type 7)', () => {
    expect(quantile([1, 2, 3, 4], 0.5)).toBe(2.5);
    expect(quantile([1, 2, 3, 4], 0)).toBe(1);
    expect(quantile([1, 2, 3, 4], 1)).toBe(4);
  });

  it('histogram puts the maximum in the last bin and equal values in one bin', () => {
    const h = histogram('x', 'x', [0, 1, 2, 3, 4], 4);
    expect(h.counts).toEqual([1, 1, 1, 2]);
    expect(histogram('x', 'x', [5, 5, 5]).counts).toEqual([3]);
  });
});

describe('parseShard', () => {
  it('reads K/N', () => {
    expect(parseShard('2/4')).toEqual({ k: 2, n: 4 });
    expect(() => parseShard('4/4')).toThrow(/K must be from 0 to 3/);
    expect(() => parseShard('1-4')).toThrow(/expected K\/N/);
    expect(() => parseShard('0/0')).toThrow(/N must be/);
  });

  const envCases: Array<[string, Record<string, string>, number]> = [
    ['a Kubernetes indexed Job', { JOB_COMPLETION_INDEX: '3' }, 3],
    ['a Slurm array 0-7', { SLURM_ARRAY_TASK_ID: '5' }, 5],
    ['a Slurm array 1-8 (uses SLURM_ARRAY_TASK_MIN)', { SLURM_ARRAY_TASK_ID: '6', SLURM_ARRAY_TASK_MIN: '1' }, 5],
    ['a PBS Pro array', { PBS_ARRAY_INDEX: '0' }, 0],
    ['a Grid Engine array, 1-based', { SGE_TASK_ID: '1' }, 0],
    ['a Grid Engine array with a step', { SGE_TASK_ID: '7', SGE_TASK_FIRST: '1', SGE_TASK_STEPSIZE: '2' }, 3],
    ['an AWS Batch array', { AWS_BATCH_JOB_ARRAY_INDEX: '7' }, 7],
  ];
  it.each(envCases)('auto/8 takes K from %s', (_what, env, k) => {
    expect(parseShard('auto/8', env)).toEqual({ k, n: 8 });
  });

  it('auto/N fails clearly without a scheduler variable, or with an index past N', () => {
    expect(() => parseShard('auto/4', {})).toThrow(/no scheduler array index found; set one of JOB_COMPLETION_INDEX, SLURM_ARRAY_TASK_ID/);
    expect(() => parseShard('auto/4', { SGE_TASK_ID: '5' })).toThrow(/SGE_TASK_ID=5 gives shard 4, but shards run from 0 to 3/);
    expect(() => parseShard('auto/4', { SGE_TASK_ID: '0' })).toThrow(/not an index of an array starting at 1/);
    expect(() => parseShard('auto/4', { JOB_COMPLETION_INDEX: 'x' })).toThrow(/must be a whole number, got "x"/);
  });
});

describe('readResultsText', () => {
  const line = (i: number): string => `${JSON.stringify({ index: i, seed: 0, params: {}, result: { status: 'ok' } })}\n`;

  it('keeps complete lines and drops a cut-short last line', () => {
    const text = line(2) + line(0) + line(1).slice(0, 20);
    const r = readResultsText(text, 3, 'f');
    expect([...r.lines.keys()]).toEqual([2, 0]);
    expect(r.partial).toBe(line(1).slice(0, 20));
    expect(r.goodBytes).toBe(Buffer.byteLength(line(2) + line(0)));
    expect(sortedJsonl(r.lines)).toBe(line(0) + line(2));
  });

  it('refuses a sample twice, an index outside the study, and a damaged line in the middle', () => {
    expect(() => readResultsText(line(1) + line(1), 3, 'f')).toThrow(/f line 2: sample 1 appears twice/);
    expect(() => readResultsText(line(3), 3, 'f')).toThrow(/from 0 to 2, got 3/);
    expect(() => readResultsText(`${line(0)}{"ind\n${line(1)}`, 3, 'f')).toThrow(/f line 2: not a JSON record/);
  });

  it('writes the CSV in index order with only the listed outputs', () => {
    const records = [1, 0].map((i) => rec(i, { ...ok, tjPeakC: 40 + i }));
    const csv = resultsCsv(records.sort((a, b) => a.index - b.index), ['tjPeakC']);
    expect(csv).toBe('index,seed,status,tjPeakC\n0,0,ok,40\n1,1,ok,41\n');
  });
});

/**
 * `lossdial run` on every demo case: trace, summary and report written, and the report's
 * numbers cross-checked against trace.csv (the report must show what the trace holds).
 */
import { mkdtempSync, readFileSync, readdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { cli } from './helpers.ts';

const TMP = mkdtempSync(join(tmpdir(), 'lossdial-report-'));
afterAll(() => rmSync(TMP, { recursive: true, force: true }));

function readTrace(dir: string): Record<string, number[]> {
  const [head, ...rows] = readFileSync(join(dir, 'trace.csv'), 'utf8').trimEnd().split('\n');
  const names = head.split(',');
  const cols: Record<string, number[]> = Object.fromEntries(names.map((n) => [n, []]));
  for (const row of rows) row.split(',').forEach((v, i) => cols[names[i]].push(Number(v)));
  return cols;
}

function reportData(dir: string): { cols: Record<string, Array<number | string>> } {
  const html = readFileSync(join(dir, 'report.html'), 'utf8');
  const m = /const D = (\{.*?\});\n/s.exec(html);
  if (!m) throw new Error('no data block in report.html');
  return JSON.parse(m[1]);
}

const mean = (xs: number[]): number => xs.reduce((a, b) => a + b, 0) / xs.length;

describe('lossdial run writes a report that agrees with its trace', () => {
  for (const name of ['buck-aux-48v', 'buck-persample-unstable', 'leg-standstill-400v']) {
    it(`${name}: report, summary and trace carry the same series`, async () => {
      const dir = join(TMP, name);
      const r = await cli('run', `cases/${name}.yaml`, '--out', dir);
      expect([0, 3]).toContain(r.code);
      expect(readdirSync(dir)).toEqual(expect.arrayContaining(['report.html', 'plotly.min.js', 'summary.json', 'trace.csv']));
      const trace = readTrace(dir);
      const rep = reportData(dir).cols;
      // Same records: the report embeds the full-precision values the CSV prints.
      expect(rep.tS.length).toBe(trace.tS.length);
      for (const k of ['totalLossW', 'tjHsC', 'fswHz'] as const)
        rep[k].forEach((v, i) => expect(Number(v)).toBeCloseTo(trace[k][i], 9));
    });
  }

  it('buck-cabin-warmup: tracked steps, zero-demand penalty and the limited step match the trace', async () => {
    const dir = join(TMP, 'warmup');
    const r = await cli('run', 'cases/buck-cabin-warmup.yaml', '--out', dir);
    expect(r.code, r.err).toBe(0);
    const s = JSON.parse(readFileSync(join(dir, 'summary.json'), 'utf8'));
    const trace = readTrace(dir);
    expect(s.status).toBe('limited');
    expect(s.cause).toMatch(/binding constraint/);
    const html = readFileSync(join(dir, 'report.html'), 'utf8');
    expect(html).toContain('limited');
    for (const step of s.heatLoop.tracking.steps) {
      // finalW is the mean of the tracked quantity (electrical loss) over the step's last quarter.
      const idx = trace.tS.map((t, i) => [t, i] as const).filter(([t]) => t > step.tStartS && t <= step.tEndS).map(([, i]) => i);
      const tail = idx.slice(Math.floor(0.75 * idx.length)).map((i) => trace.totalLossW[i]);
      expect(step.finalW).toBeCloseTo(mean(tail), 6);
      expect(html).toContain(`step to ${step.demandW.toFixed(1)} W`);
      // Every reachable step settles inside its band; the out-of-reach one is flagged.
      if (!step.limited) expect(Math.abs(step.steadyErrorW)).toBeLessThan(step.bandW);
    }
    expect(s.heatLoop.tracking.steps.some((x: { limited: boolean }) => x.limited)).toBe(true);
    // Zero demand: back within 0.2 percentage points of the best achievable efficiency.
    expect(s.heatLoop.zeroDemand.penaltyPctPoints).toBeLessThan(0.2);
    // Regulation while fsw moves: within 2.5 % of the 12 V reference at every control sample.
    expect(s.heatLoop.regulationAroundMoves.maxDeviation).toBeLessThan(0.025 * 12);
    expect(Math.max(...trace.voutDevMaxV)).toBeCloseTo(s.heatLoop.regulationAroundMoves.maxDeviation, 9);
    // Margins along the run are in the trace and the summary's minimum is the trace's.
    expect(Math.min(...trace.pmDeg)).toBeCloseTo(s.marginsAlongRun.minPmDeg, 9);
  });
});

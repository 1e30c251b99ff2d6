import { mkdtempSync, readFileSync, readdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { DEMO, cli } from './helpers.ts';

const PS = 'cases/buck-persample-unstable.yaml';
const tmp = mkdtempSync(join(tmpdir(), 'lossdial-margins-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

describe('lossdial margins', () => {
  it('prints crossover, PM, GM, max |λ| and the verdict for both bases', async () => {
    const r = await cli('margins', DEMO);
    expect(r.code).toBe(0);
    expect(r.out).toMatch(/loop margins of buck-aux-48v \(buck voltage loop\)/);
    expect(r.out).toMatch(/continuous \*\s+0\.002\s+60 \/s\s+462 Hz\s+88\.6°\s+11\.94 dB\s+3\.57 kHz\s+0\.97201\s+stable/);
    expect(r.out).toMatch(/perSample\s+0\.002\s+0\.0006 \/sample/);
  });

  it('--map over fsw 20–300 kHz (log) reports every point for both bases in one command', async () => {
    const r = await cli('margins', DEMO, '--map', 'pwm.fswHz=20e3:300e3:15', '--log');
    expect(r.code).toBe(0);
    const rows = r.out.split('\n').filter((l) => /^\s+\d/.test(l));
    expect(rows).toHaveLength(15);
    expect(rows[0]).toMatch(/^\s+20000\s/);
    expect(rows[14]).toMatch(/^\s+300000\s/);
    expect(rows.every((l) => (l.match(/stable/g) ?? []).length === 2)).toBe(true);
  });

  it('the per-sample case turns UNSTABLE above ~245 kHz; JSON spells no-crossover as "Infinity"', async () => {
    const r = await cli('margins', PS, '--map', 'pwm.fswHz=100e3:300e3:5', '--json');
    expect(r.code).toBe(0);
    const j = JSON.parse(r.out);
    expect(j.configuredBasis).toBe('perSample');
    expect(j.cells.map((c: { bases: { perSample: { stable: boolean } } }) => c.bases.perSample.stable)).toEqual([true, true, true, false, false]);
    const none = await cli('margins', DEMO, '--set', 'control.ki=0', '--set', 'control.kp=0.001', '--json');
    const p = JSON.parse(none.out);
    expect(p.bases.continuous.pmDeg).toBe('Infinity');
    expect(p.bases.continuous.crossoverHz).toBeNull();
    expect(p.bode.freqHz.length).toBe(400);
  });

  it('--csv of a two-axis map: one row per cell with both bases', async () => {
    const r = await cli('margins', DEMO, '--map', 'pwm.fswHz=50e3:200e3:3', '--map', 'gateDrive.vDriveV=6:10:2', '--csv');
    expect(r.code).toBe(0);
    const lines = r.out.trim().split('\n');
    expect(lines[0]).toMatch(/^pwm\.fswHz,gateDrive\.vDriveV,status,continuous\.crossoverHz,continuous\.pmDeg/);
    expect(lines).toHaveLength(7);
  });

  it('--html writes one self-contained page (plotly inlined) with the Bode plot and the map floor contour', async () => {
    const file = join(tmp, 'm.html');
    const r = await cli('margins', PS, '--map', 'pwm.fswHz=100e3:300e3:4', '--map', 'gateDrive.vDriveV=6:10:3', '--html', file);
    expect(r.code).toBe(0);
    expect(r.err).toMatch(/wrote .*m\.html/);
    const html = readFileSync(file, 'utf8');
    expect(html.length).toBeGreaterThan(4e6);
    expect(html).not.toMatch(/<script src=/);
    expect(html).toMatch(/Plotly\.newPlot\('bode'/);
    expect(html).toMatch(/coloring: 'none'/);
    expect(html).toMatch(/"pmFloorDeg":45/);
    expect(readdirSync(tmp).filter((f) => f.endsWith('.tmp'))).toEqual([]);
  });

  it('--suggest explains which corner binds', async () => {
    const r = await cli('margins', PS, '--suggest', '100e3:300e3');
    expect(r.code).toBe(0);
    expect(r.out).toMatch(/gain suggestion \(perSample basis\)/);
    expect(r.out).toMatch(/binding corner: fsw 300 kHz/);
  });

  it('bad input exits 2 with a clear message', async () => {
    const a = await cli('margins', DEMO, '--map', 'pwm.fswHz=20e3:300e3');
    expect(a.code).toBe(2);
    expect(a.err).toMatch(/--map: expected PATH=FROM:TO:STEPS/);
    const b = await cli('margins', DEMO, '--map', 'pwm.fswHz=-1:300e3:3');
    expect(b.code).toBe(2);
    expect(b.err).toMatch(/pwm\.fswHz: .*pwm\.fswHz = -1/);
    const c = await cli('margins', DEMO, '--set', 'pwm.dutyMax=0.2');
    expect(c.code).toBe(2);
    expect(c.err).toMatch(/not regulated/);
    const d = await cli('margins', DEMO, '--map', 'a=1:2:2', '--map', 'b=1:2:2', '--map', 'c=1:2:2');
    expect(d.code).toBe(2);
    expect(d.err).toMatch(/at most two axes/);
  });
});

/**
 * `lossdial run` end to end: files, statuses, exit codes, atomic writes, determinism, Ctrl-C.
 */
import { spawn } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, readdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { HARDWARE_NOTICE } from '../../src/analysis/cautions.ts';
import { DEMO, ROOT, cli } from '../cli/helpers.ts';

const TMP = mkdtempSync(join(tmpdir(), 'lossdial-run-'));
afterAll(() => rmSync(TMP, { recursive: true, force: true }));

const readSummary = (dir: string): Record<string, any> => JSON.parse(readFileSync(join(dir, 'summary.json'), 'utf8'));
const traceLines = (dir: string): string[] => readFileSync(join(dir, 'trace.csv'), 'utf8').trimEnd().split('\n');

describe('lossdial run on the demo', () => {
  const dir = join(TMP, 'demo');

  it('writes trace.csv and summary.json atomically, status ok, one row per record interval', async () => {
    const r = await cli('run', DEMO, '--out', dir);
    expect(r.code, r.err).toBe(0);
    expect(r.out).toMatch(/buck-aux-48v: ok/);
    const files = readdirSync(dir);
    expect(files).toEqual(expect.arrayContaining(['summary.json', 'trace.csv']));
    expect(files.filter((f) => f.startsWith('.') || f.endsWith('.tmp'))).toEqual([]); // no temporary file left behind
    const s = readSummary(dir);
    expect(s.status).toBe('ok');
    expect(s.cause).toBeNull();
    expect(s.tEndS).toBeCloseTo(0.05, 12);
    // Demo: sim.durationS 0.05 s, sim.recordIntervalS 1 ms → 50 rows (±1 allowed by the contract).
    const lines = traceLines(dir);
    expect(Math.abs(lines.length - 1 - 0.05 / 0.001)).toBeLessThanOrEqual(1);
    const header = lines[0].split(',');
    for (const col of ['tS', 'demandW', 'heatToCoolantW', 'totalLossW', 'hsLossW', 'lsLossW', 'passiveLossW', 'gateDriverW', 'efficiency',
      'voutV', 'voutRefV', 'duty', 'fswHz', 'deadTimeS', 'vDriveV', 'tjHsC', 'tjLsC', 'heatsinkC', 'coolantC', 'inletC'])
      expect(header).toContain(col);
    const last = lines[lines.length - 1].split(',');
    expect(Number(last[header.indexOf('tS')])).toBeCloseTo(0.05, 12);
    expect(Number(last[header.indexOf('voutV')])).toBeCloseTo(12, 4);
    // Metrics: energies add up, efficiency in range, peak junction temperatures per device.
    const m = s.metrics;
    expect(m.energyJ.lossTotal).toBeCloseTo(m.energyJ.lossHighSide + m.energyJ.lossLowSide + m.energyJ.lossPassive + m.energyJ.lossGateDriver, 12);
    expect(m.meanEfficiency).toBeGreaterThan(0.9);
    expect(m.meanEfficiency).toBeLessThan(1);
    expect(m.junctions.highSide.peakC).toBeGreaterThan(10);
    expect(m.junctions.lowSide.timeAboveLimitMinusMarginS).toBe(0);
    expect(Array.isArray(s.warnings)).toBe(true);
    expect(Array.isArray(s.cautions)).toBe(true);
    if (s.cautions.length > 0) expect(s.notice).toBe(HARDWARE_NOTICE);
  });

  it('is deterministic: a second run writes a byte-identical trace', async () => {
    const again = join(TMP, 'demo-again');
    expect((await cli('run', DEMO, '--out', again)).code).toBe(0);
    expect(readFileSync(join(again, 'trace.csv'), 'utf8')).toBe(readFileSync(join(dir, 'trace.csv'), 'utf8'));
  });

  it('honours --duration, --set and --engine; default output directory is out/<scenario name>', async () => {
    const r = await cli('run', DEMO, '--duration', '0.004', '--set', 'sim.recordIntervalS=0.0005', '--engine', 'odex');
    expect(r.code, r.err).toBe(0);
    const outDir = join(ROOT, 'out', 'buck-aux-48v');
    const s = readSummary(outDir);
    expect(s.engine).toBe('odex');
    expect(s.durationS).toBe(0.004);
    expect(s.metrics.engineStats.odexIntervals).toBeGreaterThan(0);
    expect(traceLines(outDir)).toHaveLength(1 + 8);
  });
});

describe('lossdial run outcomes and exit codes', () => {
  it('a run that diverges writes partial results with status diverged and exits 3', async () => {
    const dir = join(TMP, 'runaway');
    const path = JSON.stringify({ junctionCase: { kind: 'cauer', rKPerW: [50], cJPerK: [0.01] }, caseSinkKPerW: 0.3 });
    const r = await cli('run', DEMO, '--out', dir, '--duration', '5', '--set', 'sim.recordIntervalS=0.1', '--set', 'sim.thermalStepS=0.01',
      '--set', `thermal.devices.highSide=${path}`, '--set', `thermal.devices.lowSide=${path}`, '--set', 'limits.runawayTjC=120');
    expect(r.code).toBe(3);
    expect(r.err).toMatch(/run diverged at \d+\.\d+ s: thermal runaway/);
    const s = readSummary(dir);
    expect(s.status).toBe('diverged');
    expect(s.causeCode).toBe('thermalRunaway');
    expect(s.tEndS).toBeLessThan(5);
    expect(traceLines(dir).length).toBeGreaterThan(2);
    expect(s.cautions.map((c: { code: string }) => c.code)).toContain('thermalRunaway');
    expect(s.notice).toBe(HARDWARE_NOTICE);
  });

  it('bad input exits 2 without writing anything', async () => {
    const dir = join(TMP, 'never');
    const noControl = await cli('run', DEMO, '--out', dir, '--set', 'control=null');
    expect(noControl.code).toBe(2);
    const badDuration = await cli('run', DEMO, '--out', dir, '--duration', '-1');
    expect(badDuration.code).toBe(2);
    expect(badDuration.err).toMatch(/--duration/);
    const badEngine = await cli('run', DEMO, '--out', dir, '--engine', 'rk4');
    expect(badEngine.code).toBe(2);
    const missing = await cli('run', 'cases/no-such-case.yaml', '--out', dir);
    expect(missing.code).toBe(2);
    expect(existsSync(join(dir, 'summary.json'))).toBe(false);
  });

  it('--help documents the exit statuses', async () => {
    const r = await cli('run', '--help');
    expect(r.code).toBe(0);
    expect(r.out).toMatch(/3 when it diverged/);
    expect(r.out).toMatch(/130 when interrupted/);
  });

  it('Ctrl-C writes what was computed with status interrupted and exits 130', async () => {
    const dir = join(TMP, 'interrupted');
    // A long replay (hours of simulated time): the first progress line appears after ~1 s of wall time.
    const child = spawn(process.execPath, ['bin/lossdial.js', 'run', DEMO, '--out', dir, '--duration', '100000', '--set', 'sim.recordIntervalS=1'], {
      cwd: ROOT,
      env: { ...process.env, NO_COLOR: '1' },
    });
    let err = '';
    const exited = new Promise<number | null>((resolve) => child.on('exit', (code) => resolve(code)));
    await new Promise<void>((resolve, reject) => {
      const timer = setTimeout(() => reject(new Error(`no progress line within 30 s; stderr: ${err}`)), 30_000);
      child.stderr.on('data', (d: Buffer) => {
        err += d.toString();
        if (/run: \d+ %/.test(err)) {
          clearTimeout(timer);
          resolve();
        }
      });
    });
    child.kill('SIGINT');
    const code = await exited;
    expect(code, err).toBe(130);
    expect(err).toMatch(/interrupted at/);
    const s = readSummary(dir);
    expect(s.status).toBe('interrupted');
    expect(s.tEndS).toBeGreaterThan(0);
    expect(s.tEndS).toBeLessThan(100000);
    expect(traceLines(dir).length).toBeGreaterThan(1);
  }, 60_000);
});

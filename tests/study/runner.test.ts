/**
 * Running studies for real (worker pool, files on disk): the same bytes with 1 or 2 workers and
 * with 4 shards merged; resume after SIGKILL loses and repeats nothing; Ctrl-C exits 130 and
 * resumes; merge refuses gaps, duplicates and foreign shards. Studies are small (tens of samples).
 */
import { spawn } from 'node:child_process';
import { appendFileSync, existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { stringify } from 'yaml';
import { parseScenario } from '../../src/scenario/parse.ts';
import { mergeStudies } from '../../src/study/merge.ts';
import { CSV_FILE, MANIFEST_FILE, REPORT_FILE, RESULTS_FILE, SUMMARY_FILE, runStudy } from '../../src/study/runner.ts';
import { parseStudySpecObject } from '../../src/study/spec.ts';
import { ROOT, cli } from '../cli/helpers.ts';

const tmp = mkdtempSync(join(tmpdir(), 'lossdial-study-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

const FILES = [MANIFEST_FILE, RESULTS_FILE, CSV_FILE, SUMMARY_FILE, REPORT_FILE];
const readAll = (dir: string): Record<string, string> => Object.fromEntries(FILES.map((f) => [f, readFileSync(join(dir, f), 'utf8')]));

const aux = parseScenario(readFileSync(join(ROOT, 'cases/buck-aux-48v.yaml'), 'utf8'));
const warmup = parseScenario(readFileSync(join(ROOT, 'cases/buck-cabin-warmup.yaml'), 'utf8'));

/** 2 gate drives × 21 builds with a random input voltage: 42 samples, some near threshold at 4.5 V. */
const SMALL = {
  name: 'small',
  seed: 99,
  kind: 'point',
  grid: { 'gateDrive.vDriveV': [4.5, 8] },
  random: { samples: 21, params: { 'buck.vinV': { dist: 'normal', mean: 48, sd: 1.5 } } },
  deviceSpread: {
    vthShiftV: { dist: 'normal', mean: 0, sd: 0.4 },
    rdsOnScale: { dist: 'lognormal', median: 1, sigmaLn: 0.1 },
    gateChargeScale: { dist: 'lognormal', median: 1, sigmaLn: 0.1 },
    rthJcScale: { dist: 'lognormal', median: 1, sigmaLn: 0.1 },
  },
};
const small = parseStudySpecObject(SMALL);

describe('study determinism', () => {
  let reference: Record<string, string>;
  beforeAll(async () => {
    const r = await runStudy({ spec: small, scenario: aux, outDir: join(tmp, 'w2'), workers: 2 });
    expect(r.complete).toBe(true);
    reference = readAll(join(tmp, 'w2'));
  });

  it('a whole study writes sorted results, CSV, summary and a self-contained report', () => {
    const lines = reference[RESULTS_FILE].trimEnd().split('\n');
    expect(lines).toHaveLength(42);
    expect(lines.map((l) => JSON.parse(l).index)).toEqual([...Array(42).keys()]);
    expect(reference[CSV_FILE].split('\n')[0]).toMatch(/^index,seed,params\.gateDrive\.vDriveV,params\.buck\.vinV,devices\.highSide\.vthShiftV,/);
    const summary = JSON.parse(reference[SUMMARY_FILE]);
    expect(summary.risk.map((r: { key: string }) => r.key)).toEqual(['hsSaturation', 'lsSaturation', 'saturation', 'runaway', 'tjOverLimit', 'any']);
    expect(summary.cells).toHaveLength(2);
    const html = reference[REPORT_FILE];
    expect(html).toContain('<h2>Risk table</h2>');
    expect(html).not.toMatch(/<script[^>]+src=/);
    expect(html.length).toBeGreaterThan(1_000_000); // plotly inlined
  });

  it('gives the same bytes with 1 worker as with 2', async () => {
    const r = await runStudy({ spec: small, scenario: aux, outDir: join(tmp, 'w1'), workers: 1 });
    expect(r.computed).toBe(42);
    expect(readAll(join(tmp, 'w1'))).toEqual(reference);
  });

  it('4 shards merged give the same bytes as the unsharded run', async () => {
    const dirs: string[] = [];
    for (let k = 0; k < 4; k++) {
      const dir = join(tmp, `shard-${k}`);
      const r = await runStudy({ spec: small, scenario: aux, outDir: dir, workers: 1, shard: { k, n: 4 } });
      expect(r.shardTotal).toBe(k < 2 ? 11 : 10);
      expect(existsSync(join(dir, SUMMARY_FILE))).toBe(false);
      dirs.push(dir);
    }
    await mergeStudies([dirs[2], dirs[0], dirs[3], dirs[1]], join(tmp, 'merged'));
    expect(readAll(join(tmp, 'merged'))).toEqual(reference);

    await expect(mergeStudies(dirs.slice(0, 3), join(tmp, 'm2'))).rejects.toThrow(/10 of 42 samples missing, first 3, 7, 11.*shards 3 of 4/);
    await expect(mergeStudies([...dirs, dirs[1]], join(tmp, 'm3'))).rejects.toThrow(/11 samples appear more than once, e\.g\. 1 \(/);
    await expect(mergeStudies([...dirs, join(tmp, 'w1')], join(tmp, 'm4'))).rejects.toThrow(/42 samples appear more than once/);
  });

  it('refuses to merge or resume into results of another study', async () => {
    const other = parseStudySpecObject({ ...SMALL, seed: 100, random: { ...SMALL.random, samples: 1 } });
    await runStudy({ spec: other, scenario: aux, outDir: join(tmp, 'other'), workers: 1 });
    await expect(mergeStudies([join(tmp, 'w1'), join(tmp, 'other')], join(tmp, 'm5'))).rejects.toThrow(/is from another study than .* \(specHash, total differ\)/);
    await expect(runStudy({ spec: other, scenario: aux, outDir: join(tmp, 'w1'), workers: 1 })).rejects.toThrow(/holds results of another study or shard \(specHash, total differ\)/);
    await expect(runStudy({ spec: small, scenario: aux, outDir: join(tmp, 'w1'), workers: 1, shard: { k: 0, n: 2 } })).rejects.toThrow(/shard differs/);
  });

  it('a rerun of a finished study computes nothing and rewrites the same bytes', async () => {
    const r = await runStudy({ spec: small, scenario: aux, outDir: join(tmp, 'w1'), workers: 2 });
    expect([r.resumed, r.computed]).toEqual([42, 0]);
    expect(readAll(join(tmp, 'w1'))).toEqual(reference);
  });

  it('an aborted run stops dispatching, keeps what finished, and resumes to the same bytes', async () => {
    const controller = new AbortController();
    const dir = join(tmp, 'aborted');
    const r = await runStudy({
      spec: small,
      scenario: aux,
      outDir: dir,
      workers: 1,
      batchSize: 2,
      signal: controller.signal,
      progress: { start: () => undefined, update: (done) => done >= 4 && controller.abort(), stop: () => undefined },
    });
    expect(r.interrupted).toBe(true);
    expect(r.computed).toBeGreaterThanOrEqual(4);
    expect(r.computed).toBeLessThan(42);
    const again = await runStudy({ spec: small, scenario: aux, outDir: dir, workers: 2 });
    expect([again.resumed, again.computed]).toEqual([r.computed, 42 - r.computed]);
    expect(readAll(dir)).toEqual(reference);
  });
});

describe('study kinds', () => {
  it('records an invalid draw as such instead of stopping the study', async () => {
    // vth25V 3.0 + U(−4.5, −1): a build with a shift below −3 V has no valid threshold.
    const bad = parseStudySpecObject({ name: 'inv', seed: 1, kind: 'point', random: { samples: 8 }, deviceSpread: { vthShiftV: { dist: 'uniform', min: -4.5, max: -1 }, devices: ['lowSide'] } });
    const r = await runStudy({ spec: bad, scenario: aux, outDir: join(tmp, 'invalid'), workers: 1 });
    expect(r.complete).toBe(true);
    expect(Object.values(r.counts).reduce((a, b) => a + b, 0)).toBe(8);
    const lines = readFileSync(join(tmp, 'invalid', RESULTS_FILE), 'utf8').trimEnd().split('\n').map((l) => JSON.parse(l));
    for (const l of lines.filter((x) => x.result.status === 'invalid')) expect(l.result.error).toMatch(/devices\.lowSide\.vth25V/);
    expect(r.counts.invalid).toBeGreaterThan(0);
  });

  it('a run study replays each sample with its own seed', async () => {
    const spec = parseStudySpecObject({ name: 'runs', seed: 4, kind: 'run', set: { 'sim.durationS': 0.01 }, grid: { 'pwm.fswHz': [100e3, 200e3] } });
    const r = await runStudy({ spec, scenario: aux, outDir: join(tmp, 'runs'), workers: 1 });
    expect(r.counts).toEqual({ ok: 2 });
    const lines = readFileSync(join(tmp, 'runs', RESULTS_FILE), 'utf8').trimEnd().split('\n').map((l) => JSON.parse(l));
    expect(lines[0].result).toMatchObject({ status: 'ok', runaway: false, tjOverLimit: false });
    expect(lines[0].result.tEndS).toBeCloseTo(0.01, 6);
  });

  it('a margins study gives the loop margins and their risk rows', async () => {
    const spec = parseStudySpecObject({ name: 'm', seed: 1, kind: 'margins', grid: { 'pwm.fswHz': [100e3, 300e3] }, outputs: ['pmDeg', 'gmDb', 'stable'] });
    const r = await runStudy({ spec, scenario: aux, outDir: join(tmp, 'margins'), workers: 1 });
    expect(r.counts).toEqual({ ok: 2 });
    expect(r.summary?.risk.map((x) => x.key)).toEqual(['noLoop', 'unstable', 'pmBelowFloor', 'gmBelowFloor', 'any']);
    expect(readFileSync(join(tmp, 'margins', CSV_FILE), 'utf8').split('\n')[0]).toBe('index,seed,params.pwm.fswHz,status,pmDeg,gmDb,stable');
  });

  it('reachable heat at the ladder end: a build hotter than nominal reaches no more heat than its Tj allows', async () => {
    const spec = parseStudySpecObject({
      name: 'heat',
      seed: 8,
      kind: 'point',
      random: { samples: 4 },
      deviceSpread: { at: 'ladderEnd', vthShiftV: { dist: 'normal', mean: 0, sd: 0.3 }, achievableHeat: true },
    });
    const r = await runStudy({ spec, scenario: warmup, outDir: join(tmp, 'heat'), workers: 1 });
    expect(r.complete).toBe(true);
    const lines = readFileSync(join(tmp, 'heat', RESULTS_FILE), 'utf8').trimEnd().split('\n').map((l) => JSON.parse(l).result);
    for (const res of lines) {
      const sup = warmup.supervisor!;
      expect([res.vDriveV, res.fswHz, res.deadTimeS]).toEqual([sup.gateDrive.minV, Math.min(sup.fsw.maxHz, sup.stableBandHz![1]), sup.deadTime.maxS]);
      expect(res.achievableHeatW).toBeGreaterThan(0);
      if (!res.tjOverLimit) expect(res.achievableHeatW).toBeCloseTo(res.heatToCoolantW, 3);
      expect(res.dAchievableHeatW).toBeCloseTo(res.achievableHeatW - res.nominalAchievableHeatW, 3);
    }
  });
});

/** Spawn the real CLI; resolves with its exit code and output. */
function spawnStudy(args: string[], onStart?: (child: ReturnType<typeof spawn>) => void): Promise<{ code: number | null; signal: string | null; out: string; err: string }> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, ['bin/lossdial.js', 'study', ...args], { cwd: ROOT, env: { ...process.env, NO_COLOR: '1' } });
    let out = '';
    let err = '';
    child.stdout.on('data', (d) => (out += d));
    child.stderr.on('data', (d) => (err += d));
    child.on('error', reject);
    child.on('close', (code, signal) => resolve({ code, signal, out, err }));
    onStart?.(child);
  });
}

function countLines(file: string): number {
  if (!existsSync(file)) return 0;
  return readFileSync(file, 'utf8').split('\n').length - 1;
}

/** Kill `child` with `signal` once `file` holds at least `lines` complete lines. */
function killWhen(child: ReturnType<typeof spawn>, file: string, lines: number, signal: NodeJS.Signals): void {
  const timer = setInterval(() => {
    if (countLines(file) >= lines) {
      clearInterval(timer);
      child.kill(signal);
    }
  }, 10);
  child.on('close', () => clearInterval(timer));
}

describe('the study command as a process', () => {
  const LONG = { ...SMALL, name: 'long', random: { ...SMALL.random, samples: 100 } };
  const TOTAL = 200;
  const specFile = join(tmp, 'long.yaml');
  let reference: Record<string, string>;
  beforeAll(async () => {
    writeFileSync(specFile, stringify(LONG));
    await runStudy({ spec: parseStudySpecObject(LONG), scenario: aux, outDir: join(tmp, 'long-ref'), workers: 2 });
    reference = readAll(join(tmp, 'long-ref'));
  });

  it('resumes after SIGKILL and after Ctrl-C (exit 130) without losing a finished sample or repeating one', async () => {
    const out = join(tmp, 'killed');
    const results = join(out, RESULTS_FILE);
    const args = ['cases/buck-aux-48v.yaml', '--spec', specFile, '--out', out];
    const killed = await spawnStudy([...args, '--workers', '1'], (c) => killWhen(c, results, 12, 'SIGKILL'));
    expect(killed.signal).toBe('SIGKILL');
    const before = readFileSync(results, 'utf8');
    const done = new Map<number, string>();
    for (const l of before.split('\n').slice(0, -1)) done.set(JSON.parse(l).index, `${l}\n`);
    expect(done.size).toBeGreaterThanOrEqual(12);
    expect(done.size).toBeLessThan(TOTAL);
    // A kill can cut the last write short: simulate that if this one did not.
    if (before.endsWith('\n')) appendFileSync(results, `{"index":${TOTAL - 1},"seed":12,"par`);

    // Second run: resumes (dropping the cut line), then is stopped with Ctrl-C.
    const interrupted = await spawnStudy([...args, '--workers', '1'], (c) => killWhen(c, results, done.size + 12, 'SIGINT'));
    expect(interrupted.code).toBe(130);
    expect(interrupted.err).toContain('dropped a cut-short last line');
    expect(interrupted.err).toMatch(new RegExp(`interrupted: \\d+ of ${TOTAL} samples are in .*results\\.jsonl; run the same command again to resume`));
    const middle = readFileSync(results, 'utf8');
    expect(middle.endsWith('\n')).toBe(true);
    const n = middle.split('\n').length - 1;
    expect(n).toBeGreaterThan(done.size);

    const resumed = await spawnStudy([...args, '--workers', '2', '--no-progress']);
    expect(resumed.code).toBe(0);
    expect(resumed.out).toContain(`${TOTAL} samples (kind point), ${TOTAL - n} computed, ${n} already done`);
    const lines = readFileSync(results, 'utf8').split('\n').slice(0, -1);
    expect(lines).toHaveLength(TOTAL);
    expect(new Set(lines.map((l) => JSON.parse(l).index)).size).toBe(TOTAL);
    for (const [i, line] of done) expect(`${lines[i]}\n`).toBe(line);
    expect(readAll(out)).toEqual(reference);
  });

  it('bad specs and bad shards exit 2 with path-level messages and write nothing', async () => {
    const bad = join(tmp, 'bad.yaml');
    writeFileSync(bad, stringify({ name: 'b', seed: 1, kind: 'point', grid: { 'pwm.fswHz': [100e3, -1], 'buck.nosuch': [1] }, outputs: ['nope'] }));
    const r = await cli('study', 'cases/buck-aux-48v.yaml', '--spec', bad, '--out', join(tmp, 'bad-out'));
    expect(r.code).toBe(2);
    expect(r.err).toContain('grid.pwm.fswHz[1]: pwm.fswHz: Too small');
    expect(r.err).toContain('grid.buck.nosuch[0]: buck.nosuch: unknown field');
    expect(r.err).toContain('outputs[0]: unknown result field "nope"');
    expect(existsSync(join(tmp, 'bad-out'))).toBe(false);

    writeFileSync(bad, 'name: b\nseed: x\nkind: point\nextra: 1\n');
    const r2 = await cli('study', 'cases/buck-aux-48v.yaml', '--spec', bad);
    expect(r2.code).toBe(2);
    expect(r2.err).toContain('is not a valid study spec (2 problems)');
    expect(r2.err).toContain('seed: ');
    expect(r2.err).toContain('extra: unknown field');

    const r3 = await cli('study', 'cases/buck-aux-48v.yaml', '--spec', specFile, '--shard', '5/4');
    expect(r3.code).toBe(2);
    expect(r3.err).toContain('--shard: K must be from 0 to 3');
  });
});

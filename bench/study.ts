/**
 * Study throughput, 1 → 2 worker threads, on the pool the studies run on (`createStudyPool`) and
 * a fixed study (device spread with reachable-heat search on the cabin warm-up buck).
 *
 * The speed-up: two warm pools, of 1 and of 2 threads, take turns in short windows (1 then 2,
 * then 2 then 1, ...), the main thread appending every result to a file as `runStudy` does;
 * each adjacent pair gives a ratio of samples/s and the median over the pairs is the speed-up.
 * This machine's speed drifts by tens of per cent within a minute (a shared host): windows a
 * second apart see the same machine, runs half a minute apart often do not. Also printed: one
 * end-to-end `runStudy` with each worker count (start-up and finishing included), and what two
 * busy threads get on this machine right now (its ceiling). Never asserts.
 */
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { open } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Worker } from 'node:worker_threads';
import { parseScenario } from '../src/scenario/parse.ts';
import { createStudyPool, runStudy } from '../src/study/runner.ts';
import { parseStudySpecObject } from '../src/study/spec.ts';
import type { BenchResult } from './types.ts';

const ROOT = new URL('..', import.meta.url);
const PAIRS = 10;
const WINDOW_MS = 1500;
const WARMUP_MS = 4000;
/** Samples per task, as runStudy sizes them for a large study. */
const BATCH = 64;
/** Near-linear on two cores: the main thread only appends lines while the workers compute. */
const TARGET_SPEEDUP = 1.8;

/** Work rate of 2 busy threads over 1: what the machine can give right now (shared machines give less than 2). */
async function parallelCeiling(): Promise<number> {
  const code = `const { parentPort } = require('node:worker_threads'); let x = 0; for (let i = 0; i < 2e8; i++) x += Math.sqrt(i); parentPort.postMessage(x);`;
  const run = (n: number): Promise<number> => {
    const t0 = performance.now();
    return Promise.all(Array.from({ length: n }, () => new Promise((resolve, reject) => {
      const w = new Worker(code, { eval: true });
      w.once('message', resolve);
      w.once('error', reject);
    }))).then(() => (n * 1000) / (performance.now() - t0));
  };
  const one = await run(1);
  const two = await run(2);
  return two / one;
}

export const STUDY_BENCH_SPEC = {
  name: 'bench-spread',
  seed: 7,
  kind: 'point',
  random: { samples: 20000 },
  deviceSpread: {
    at: 'ladderEnd',
    vthShiftV: { dist: 'normal', mean: 0, sd: 0.35 },
    rdsOnScale: { dist: 'lognormal', median: 1, sigmaLn: 0.08 },
    gateChargeScale: { dist: 'lognormal', median: 1, sigmaLn: 0.1 },
    rthJcScale: { dist: 'lognormal', median: 1, sigmaLn: 0.1 },
    achievableHeat: true,
  },
};

type StudyPool = ReturnType<typeof createStudyPool>;

/**
 * Samples/s of `pool` over about `ms`: tasks of BATCH consecutive indexes (wrapping around the
 * study) kept two per thread in flight, each result appended to `fh`; the window ends when the
 * last task started before `ms` has finished.
 */
async function windowRate(pool: StudyPool, threads: number, fh: Awaited<ReturnType<typeof open>>, total: number, cursor: { next: number }, ms: number): Promise<number> {
  const t0 = performance.now();
  let done = 0;
  let writing: Promise<unknown> = Promise.resolve();
  const lane = async (): Promise<void> => {
    while (performance.now() - t0 < ms) {
      const batch = Array.from({ length: BATCH }, (_, k) => (cursor.next + k) % total);
      cursor.next = (cursor.next + BATCH) % total;
      const text = (await pool.run(batch)) as Uint8Array;
      writing = writing.then(() => fh.write(text));
      done += BATCH;
    }
  };
  await Promise.all(Array.from({ length: 2 * threads }, lane));
  await writing;
  return done / ((performance.now() - t0) / 1000);
}

function median(xs: readonly number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m] : 0.5 * (s[m - 1] + s[m]);
}

/** One end-to-end study run: samples/s from dispatch to the last sample, and the elapsed time with finishing. */
async function endToEnd(spec: ReturnType<typeof parseStudySpecObject>, scenario: ReturnType<typeof parseScenario>, outDir: string, workers: number): Promise<{ samplesPerS: number; elapsedS: number }> {
  const r = await runStudy({ spec, scenario, outDir, workers });
  console.log(`study: end to end, ${spec.total} samples on ${workers} worker${workers === 1 ? ' ' : 's'}: ${r.samplesPerS.toFixed(0)} samples/s from dispatch (start-up included), ${r.elapsedS.toFixed(1)} s with the report`);
  return { samplesPerS: r.samplesPerS, elapsedS: r.elapsedS };
}

export async function benchStudy(): Promise<BenchResult> {
  const scenario = parseScenario(readFileSync(new URL('cases/buck-cabin-warmup.yaml', ROOT), 'utf8'));
  const spec = parseStudySpecObject(STUDY_BENCH_SPEC);
  const tmp = mkdtempSync(join(tmpdir(), 'lossdial-bench-study-'));
  const pools: Record<1 | 2, StudyPool> = { 1: createStudyPool(spec, scenario, 1), 2: createStudyPool(spec, scenario, 2) };
  const rates: Record<1 | 2, number[]> = { 1: [], 2: [] };
  const ratios: number[] = [];
  const cursor = { next: 0 };
  const fh = await open(join(tmp, 'results.jsonl'), 'a');
  let e2e: Record<1 | 2, { samplesPerS: number; elapsedS: number }>;
  try {
    // Warm both pools (thread start, TypeScript loading, JIT) before any window counts.
    for (const w of [1, 2] as const) await windowRate(pools[w], w, fh, spec.total, cursor, WARMUP_MS);
    for (let pair = 0; pair < PAIRS; pair++) {
      const order: Array<1 | 2> = pair % 2 === 0 ? [1, 2] : [2, 1];
      const got: Partial<Record<1 | 2, number>> = {};
      for (const w of order) {
        got[w] = await windowRate(pools[w], w, fh, spec.total, cursor, WINDOW_MS);
        rates[w].push(got[w] as number);
      }
      ratios.push((got[2] as number) / (got[1] as number));
      console.log(`study: window pair ${pair + 1}: 1 worker ${(got[1] as number).toFixed(0)} samples/s, 2 workers ${(got[2] as number).toFixed(0)} samples/s, speed-up ${ratios[pair].toFixed(2)}×`);
    }
  } finally {
    await fh.close();
    await Promise.all([pools[1].destroy(), pools[2].destroy()]);
  }
  try {
    e2e = { 1: await endToEnd(spec, scenario, join(tmp, 'w1'), 1), 2: await endToEnd(spec, scenario, join(tmp, 'w2'), 2) };
  } finally {
    rmSync(tmp, { recursive: true, force: true });
  }
  const ceiling = await parallelCeiling();
  console.log(`study: this machine runs 2 CPU-bound threads at ${ceiling.toFixed(2)}× one thread right now (the ceiling for the speed-up)`);
  const ratio = median(ratios);
  console.log(`study: speed-up 1 → 2 workers ${ratio.toFixed(2)}× (median of ${PAIRS} adjacent window pairs; ${(e2e[2].samplesPerS / e2e[1].samplesPerS).toFixed(2)}× end to end with start-up)`);
  return {
    id: 'study',
    label: 'study speed-up 1 → 2 workers (samples/s ratio, median of adjacent windows)',
    value: ratio,
    target: TARGET_SPEEDUP,
    ratio: ratio / TARGET_SPEEDUP,
    details: {
      samples: spec.total,
      pairs: PAIRS,
      windowMs: WINDOW_MS,
      batch: BATCH,
      pairRatios: ratios,
      samplesPerS1: median(rates[1]),
      samplesPerS2: median(rates[2]),
      endToEnd: e2e,
      endToEndSpeedup: e2e[2].samplesPerS / e2e[1].samplesPerS,
      cpuCeiling: ceiling,
    },
  };
}

/**
 * Study throughput: the same fixed study (device spread with reachable-heat search on the cabin
 * warm-up buck) run end to end by `runStudy` with 1 and 2 worker threads, in adjacent pairs
 * (1 then 2, then 2 then 1, ...). Each pair gives a ratio of steady samples/s (from 30 % done
 * to the end, worker start-up excluded); the median over the pairs is the speed-up. A shared
 * machine's speed drifts by tens of per cent over a minute: two runs a few seconds apart see
 * the same machine, two best-of figures minutes apart may not. Also prints what two busy
 * threads get on this machine right now (its ceiling); never asserts.
 */
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Worker } from 'node:worker_threads';
import { parseScenario } from '../src/scenario/parse.ts';
import { runStudy } from '../src/study/runner.ts';
import { parseStudySpecObject } from '../src/study/spec.ts';
import type { BenchResult } from './types.ts';

const ROOT = new URL('..', import.meta.url);
const PAIRS = 4;
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
  random: { samples: 6000 },
  deviceSpread: {
    at: 'ladderEnd',
    vthShiftV: { dist: 'normal', mean: 0, sd: 0.35 },
    rdsOnScale: { dist: 'lognormal', median: 1, sigmaLn: 0.08 },
    gateChargeScale: { dist: 'lognormal', median: 1, sigmaLn: 0.1 },
    rthJcScale: { dist: 'lognormal', median: 1, sigmaLn: 0.1 },
    achievableHeat: true,
  },
};

interface StudyRate {
  steady: number;
  wall: number;
  elapsedS: number;
  cpuMsPerSample: number;
}

async function timedStudy(spec: ReturnType<typeof parseStudySpecObject>, scenario: ReturnType<typeof parseScenario>, outDir: string, workers: number): Promise<StudyRate> {
  // Steady state: from 30 % done to the end, once every worker has started and warmed up. The
  // CPU time of the whole process (all threads) over that stretch is the cost of a sample.
  let first: { cpu: NodeJS.CpuUsage; done: number; tMs: number } | undefined;
  let last = { cpu: process.cpuUsage(), done: 0, tMs: 0 };
  const progress = {
    start: () => undefined,
    update: (done: number) => {
      const at = { cpu: process.cpuUsage(), done, tMs: performance.now() };
      if (!first && done >= 0.3 * spec.total) first = at;
      last = at;
    },
    stop: () => undefined,
  };
  const r = await runStudy({ spec, scenario, outDir, workers, progress });
  const n = first ? last.done - first.done : 0;
  const steady = first && n > 0 ? n / ((last.tMs - first.tMs) / 1000) : NaN;
  const cpuMsPerSample = first && n > 0 ? (last.cpu.user + last.cpu.system - first.cpu.user - first.cpu.system) / 1000 / n : NaN;
  console.log(
    `study: ${spec.total} samples on ${workers} worker${workers === 1 ? ' ' : 's'}: ${steady.toFixed(1)} samples/s steady, ${r.samplesPerS.toFixed(1)} samples/s wall (${r.elapsedS.toFixed(1)} s), ${cpuMsPerSample.toFixed(2)} CPU ms/sample`,
  );
  return { steady, wall: r.samplesPerS, elapsedS: r.elapsedS, cpuMsPerSample };
}

function median(xs: readonly number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m] : 0.5 * (s[m - 1] + s[m]);
}

export async function benchStudy(): Promise<BenchResult> {
  const scenario = parseScenario(readFileSync(new URL('cases/buck-cabin-warmup.yaml', ROOT), 'utf8'));
  const spec = parseStudySpecObject(STUDY_BENCH_SPEC);
  const tmp = mkdtempSync(join(tmpdir(), 'lossdial-bench-study-'));
  const runs: Record<1 | 2, StudyRate[]> = { 1: [], 2: [] };
  const ratios: number[] = [];
  const wallRatios: number[] = [];
  try {
    for (let pair = 0; pair < PAIRS; pair++) {
      const order: Array<1 | 2> = pair % 2 === 0 ? [1, 2] : [2, 1];
      const got: Partial<Record<1 | 2, StudyRate>> = {};
      for (const workers of order) {
        got[workers] = await timedStudy(spec, scenario, join(tmp, `p${pair}w${workers}`), workers);
        runs[workers].push(got[workers]);
      }
      const [one, two] = [got[1] as StudyRate, got[2] as StudyRate];
      ratios.push(two.steady / one.steady);
      wallRatios.push(two.wall / one.wall);
      console.log(`study: pair ${pair + 1}: speed-up ${ratios[pair].toFixed(2)}× steady (${wallRatios[pair].toFixed(2)}× wall clock)`);
    }
  } finally {
    rmSync(tmp, { recursive: true, force: true });
  }
  const ceiling = await parallelCeiling();
  console.log(`study: this machine runs 2 CPU-bound threads at ${ceiling.toFixed(2)}× one thread right now (the ceiling for the speed-up)`);
  const ratio = median(ratios);
  const wallRatio = median(wallRatios);
  console.log(`study: speed-up 1 → 2 workers ${ratio.toFixed(2)}× steady, median of ${PAIRS} pairs (${wallRatio.toFixed(2)}× wall clock with start-up)`);
  const med = (w: 1 | 2, k: keyof StudyRate): number => median(runs[w].map((r) => r[k]));
  return {
    id: 'study',
    label: 'study speed-up 1 → 2 workers (steady samples/s ratio, median of pairs)',
    value: ratio,
    target: TARGET_SPEEDUP,
    ratio: ratio / TARGET_SPEEDUP,
    details: {
      samples: spec.total,
      pairs: PAIRS,
      pairRatios: ratios,
      samplesPerS1: med(1, 'steady'),
      samplesPerS2: med(2, 'steady'),
      wallSamplesPerS1: med(1, 'wall'),
      wallSamplesPerS2: med(2, 'wall'),
      wallSpeedup: wallRatio,
      elapsedS1: med(1, 'elapsedS'),
      elapsedS2: med(2, 'elapsedS'),
      cpuCeiling: ceiling,
      cpuMsPerSample1: med(1, 'cpuMsPerSample'),
      cpuMsPerSample2: med(2, 'cpuMsPerSample'),
    },
  };
}

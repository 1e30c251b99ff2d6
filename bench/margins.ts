/**
 * A 50 × 50 margin map (pwm.fswHz 20–300 kHz log-spaced × gateDrive.vDriveV 5–12 V) of the demo
 * case on one core: per cell the electro-thermal operating point, the linearization with its
 * step check, the exact discrete loop for both gain bases, margins and closed-loop poles. Target
 * (issue #5): one map in ≤ 1 s, reported as maps per CPU-second against a target of 1.
 * Each measured map uses fresh values (shifted by a few ppm) so no cached point is reused.
 */
import { readFileSync } from 'node:fs';
import { marginMap } from '../src/analysis/margins.ts';
import { sweepValues } from '../src/analysis/sweep.ts';
import { parseScenario } from '../src/scenario/parse.ts';
import type { BenchResult } from './types.ts';

const TARGET_MAPS_PER_S = 1;
const N = 50;
const REPEATS = 3;

export async function benchMargins(): Promise<BenchResult> {
  const scenario = parseScenario(readFileSync(new URL('../cases/buck-aux-48v.yaml', import.meta.url), 'utf8'));
  const fsw = sweepValues(20e3, 300e3, N, true);
  const vDrive = sweepValues(5, 12, N);
  const run = (k: number) => {
    const f = 1 + k * 3e-6;
    return marginMap(scenario, [
      { path: 'pwm.fswHz', values: fsw.map((v) => v * f) },
      { path: 'gateDrive.vDriveV', values: vDrive },
    ]);
  };
  // Warm-up: one map (JIT), discarded.
  const wall0 = performance.now();
  const cpuW = process.cpuUsage();
  run(0);
  const cold = process.cpuUsage(cpuW);
  const coldWallS = (performance.now() - wall0) / 1e3;
  let cells = 0;
  let refused = 0;
  let unstable = 0;
  const cpuS: number[] = [];
  const wallS: number[] = [];
  for (let k = 1; k <= REPEATS; k++) {
    const t0 = performance.now();
    const c0 = process.cpuUsage();
    const m = run(k);
    const c = process.cpuUsage(c0);
    wallS.push((performance.now() - t0) / 1e3);
    cpuS.push((c.user + c.system) / 1e6);
    cells += m.cells.length;
    refused += m.cells.filter((x) => x.status !== 'ok').length;
    unstable += m.cells.filter((x) => x.status === 'ok' && !x.bases!.perSample.stable).length;
  }
  // Median of the repeats, in CPU time: what one core delivers regardless of other load.
  const median = (xs: number[]): number => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)];
  const secondsPerMap = median(cpuS);
  const mapsPerS = 1 / secondsPerMap;
  return {
    id: 'margins',
    label: '50×50 margin maps/s (fsw × gate drive, both bases)',
    value: mapsPerS,
    target: TARGET_MAPS_PER_S,
    ratio: mapsPerS / TARGET_MAPS_PER_S,
    details: {
      case: 'cases/buck-aux-48v.yaml',
      workload: `pwm.fswHz 20–300 kHz (${N}, log) × gateDrive.vDriveV 5–12 V (${N}); both gain bases per cell`,
      secondsPerMapCpu: secondsPerMap,
      secondsPerMapWall: median(wallS),
      microsecondsPerCell: (1e6 * secondsPerMap) / (N * N),
      firstMapCpuS: (cold.user + cold.system) / 1e6,
      firstMapWallS: coldWallS,
      repeats: REPEATS,
      cells,
      refusedCells: refused,
      perSampleUnstableCells: unstable,
    },
  };
}

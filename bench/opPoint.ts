/**
 * Steady-state operating points per second on one core, for a sweep-like workload: the demo
 * case at 200 switching frequencies (20–500 kHz, log-spaced), full electro-thermal point each
 * time (duty solve, losses, thermal DC solution, Rds,on(Tj) iteration). Target from issue #2.
 */
import { readFileSync } from 'node:fs';
import { operatingPoint, pointContext } from '../src/analysis/operatingPoint.ts';
import { parseScenario } from '../src/scenario/parse.ts';
import type { BenchResult } from './types.ts';

const TARGET_POINTS_PER_S = 20_000;
const WARMUP_S = 0.5;
const MEASURE_S = 2;
const N_FSW = 200;

export async function benchOpPoint(): Promise<BenchResult> {
  const scenario = parseScenario(readFileSync(new URL('../cases/buck-aux-48v.yaml', import.meta.url), 'utf8'));
  const ctx = pointContext(scenario);
  const fsw = Array.from({ length: N_FSW }, (_, i) => 20e3 * Math.pow(25, i / (N_FSW - 1)));
  let checksum = 0;
  let iterations = 0;
  const sweep = (): void => {
    for (const fswHz of fsw) {
      const op = operatingPoint(ctx, { fswHz });
      checksum += op.electrical.totalLossW;
      iterations += op.iterations;
    }
  };
  const warmEnd = performance.now() + WARMUP_S * 1e3;
  while (performance.now() < warmEnd) sweep();
  checksum = 0;
  iterations = 0;
  let points = 0;
  const t0 = performance.now();
  const cpu0 = process.cpuUsage();
  let elapsedS = 0;
  do {
    sweep();
    points += N_FSW;
    elapsedS = (performance.now() - t0) / 1e3;
  } while (elapsedS < MEASURE_S);
  const cpu = process.cpuUsage(cpu0);
  // Rate per second of this process's CPU time: what one core delivers, unaffected by other
  // processes sharing the machine (the wall-clock rate is kept in the details). GC helper
  // threads add to the CPU time, so this errs low.
  const cpuS = (cpu.user + cpu.system) / 1e6;
  const perS = points / cpuS;
  return {
    id: 'opPoint',
    label: 'operating points/s',
    value: perS,
    target: TARGET_POINTS_PER_S,
    ratio: perS / TARGET_POINTS_PER_S,
    details: {
      case: 'cases/buck-aux-48v.yaml',
      workload: `${N_FSW} fswHz values, 20–500 kHz log-spaced, repeated`,
      points,
      elapsedS,
      cpuS,
      wallClockPointsPerS: points / elapsedS,
      meanElectroThermalIterations: iterations / points,
      microsecondsPerPoint: 1e6 / perS,
      // Keeps the work observable so it cannot be optimized away; also a cheap sanity figure.
      meanTotalLossW: checksum / points,
    },
  };
}

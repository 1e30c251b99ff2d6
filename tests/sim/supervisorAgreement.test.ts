/**
 * Fast path vs odex with the heat supervisor in the loop: a heat-demand step moves fsw, dead
 * time and gate drive while the inner loop regulates; both integrators must tell the same story.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { parseScenario, withOverrides } from '../../src/scenario/parse.ts';
import { simulate } from '../../src/sim/engine.ts';
import { supervisorFor } from '../../src/sim/supervisorHook.ts';
import { buildSystem } from '../../src/sim/system.ts';

describe('heat-demand step, fast path against odex', () => {
  it('agrees on losses, knobs and output voltage', () => {
    const base = parseScenario(readFileSync(new URL('../../cases/buck-cabin-warmup.yaml', import.meta.url), 'utf8'));
    const sc = withOverrides(base, {
      'profiles.heatDemandW': { step: [[0.02, 18]] },
      'profiles.inletC': 0,
      'sim.recordIntervalS': 0.005,
      'sim.thermalStepS': 0.001,
    });
    const run = (engine: 'zoh' | 'odex') => {
      const sys = buildSystem(sc);
      return simulate(sys, { supervisor: supervisorFor(sys), durationS: 0.12, engine });
    };
    const fast = run('zoh');
    const ref = run('odex');
    expect(fast.status).toBe('ok');
    expect(ref.status).toBe('ok');
    expect(fast.records.length).toBe(ref.records.length);
    expect(ref.stats.odexIntervals).toBeGreaterThan(1000);
    expect(fast.stats.odexIntervals).toBe(0);
    // The supervisor moved the knobs (the step did something).
    expect(fast.records[fast.records.length - 1].fswHz).toBeGreaterThan(fast.records[0].fswHz);
    let maxLossRel = 0;
    let maxDv = 0;
    let maxDf = 0;
    for (let i = 0; i < ref.records.length; i++) {
      const a = fast.records[i];
      const b = ref.records[i];
      maxLossRel = Math.max(maxLossRel, Math.abs(a.totalLossW - b.totalLossW) / b.totalLossW);
      maxDv = Math.max(maxDv, Math.abs(a.yMeasured - b.yMeasured));
      maxDf = Math.max(maxDf, Math.abs(a.fswHz - b.fswHz));
    }
    // Tolerances (ours): the sensors read powers integrated by each engine, so the supervisor may
    // decide a quantization step apart (1 kHz); losses within 1 %, output within 5 mV of 12 V.
    expect(maxLossRel).toBeLessThan(0.01);
    expect(maxDv).toBeLessThan(0.005);
    expect(maxDf).toBeLessThanOrEqual(2000);
  });
});

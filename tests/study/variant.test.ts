/** From a sample plan to its scenario: device draws as field overrides, the operating setting, preflight errors. */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { ScenarioError } from '../../src/scenario/errors.ts';
import { parseScenario, withOverrides } from '../../src/scenario/parse.ts';
import { samplePlan } from '../../src/study/sampler.ts';
import { parseStudySpecObject } from '../../src/study/spec.ts';
import { devicePatch, preflight, sampleScenarios, studyContext } from '../../src/study/variant.ts';

const read = (f: string) => parseScenario(readFileSync(new URL(`../../cases/${f}`, import.meta.url), 'utf8'));
const aux = read('buck-aux-48v.yaml');
const warmup = read('buck-cabin-warmup.yaml');
const spread = { vthShiftV: { dist: 'normal', mean: 0, sd: 0.3 }, rdsOnScale: { dist: 'lognormal', median: 1, sigmaLn: 0.1 } };

function problems(fn: () => unknown): string[] {
  try {
    fn();
  } catch (e) {
    if (e instanceof ScenarioError) return e.problems.map((p) => `${p.path}: ${p.message}`);
    throw e;
  }
  return [];
}

describe('devicePatch', () => {
  it('shifts the threshold and scales Rds,on, gate charge and junction-case resistance of each instance', () => {
    const hs = aux.devices.highSide;
    const patch = devicePatch(aux, { highSide: { vthShiftV: 0.25, rdsOnScale: 1.2, gateChargeScale: 0.9, rthJcScale: 1.1 }, lowSide: { vthShiftV: -0.1 } });
    expect(patch).toEqual({
      'devices.highSide.vth25V': hs.vth25V + 0.25,
      'devices.highSide.rSeries25Ohm': hs.rSeries25Ohm * 1.2,
      'devices.highSide.kAPerV2': hs.kAPerV2 / 1.2,
      'devices.highSide.qgCoulomb': hs.qgCoulomb * 0.9,
      'devices.highSide.qgdCoulomb': hs.qgdCoulomb * 0.9,
      'devices.highSide.cissF': hs.cissF * 0.9,
      'thermal.devices.highSide.junctionCase.rKPerW': aux.thermal.devices.highSide.junctionCase.rKPerW.map((r) => r * 1.1),
      'devices.lowSide.vth25V': aux.devices.lowSide.vth25V - 0.1,
    });
    const s = withOverrides(aux, patch);
    expect(s.devices.highSide.part).toBe(hs.part);
    expect(s.devices.lowSide.rSeries25Ohm).toBe(aux.devices.lowSide.rSeries25Ohm);
  });
});

describe('sampleScenarios', () => {
  it('applies the draws on top of grid values that change the device (relative to the variant)', () => {
    const spec = parseStudySpecObject({ name: 'r', seed: 2, kind: 'point', grid: { 'devices.highSide.vth25V': [2.5, 3.5] }, random: { samples: 2 }, deviceSpread: spread });
    const ctx = studyContext(spec, aux);
    for (let i = 0; i < spec.total; i++) {
      const plan = samplePlan(spec, i);
      const { drawn, nominal } = sampleScenarios(ctx, plan);
      expect(nominal().devices.highSide.vth25V).toBe(plan.params['devices.highSide.vth25V']);
      expect(drawn.devices.highSide.vth25V).toBeCloseTo((plan.params['devices.highSide.vth25V'] as number) + plan.devices!.highSide!.vthShiftV!, 12);
    }
  });

  it('builds the drawn variant from the base in one parse when no parameter touches the devices, with the same result', () => {
    const spec = parseStudySpecObject({ name: 'o', seed: 3, kind: 'point', grid: { 'pwm.fswHz': [80e3, 150e3] }, random: { samples: 2 }, deviceSpread: spread });
    const ctx = studyContext(spec, aux);
    for (let i = 0; i < spec.total; i++) {
      const plan = samplePlan(spec, i);
      const { drawn, nominal } = sampleScenarios(ctx, plan);
      const twoStage = withOverrides(nominal(), devicePatch(nominal(), plan.devices));
      expect(drawn).toEqual(twoStage);
    }
  });
});

describe('studyContext', () => {
  const at = (where: string) =>
    parseStudySpecObject({ name: 'a', seed: 1, kind: 'point', random: { samples: 1 }, deviceSpread: { ...spread, at: where } });

  it('lowestGateDrive: the supervisor gate-drive minimum; ladderEnd: also fsw and dead time at the top of the ladder', () => {
    const sup = warmup.supervisor!;
    expect(studyContext(at('lowestGateDrive'), warmup).operatingPatch).toEqual({ 'gateDrive.vDriveV': sup.gateDrive.minV });
    expect(studyContext(at('ladderEnd'), warmup).operatingPatch).toEqual({
      'gateDrive.vDriveV': sup.gateDrive.minV,
      'pwm.fswHz': Math.min(sup.fsw.maxHz, sup.stableBandHz![1]),
      'pwm.deadTimeS': sup.deadTime.maxS,
    });
    expect(studyContext(at('scenario'), warmup).operatingPatch).toEqual({});
  });

  it('without a supervisor: the lowest gate drive is the scenario one, and ladderEnd is refused', () => {
    expect(studyContext(at('lowestGateDrive'), aux).operatingPatch).toEqual({});
    expect(problems(() => studyContext(at('ladderEnd'), aux))).toEqual([
      'deviceSpread.at: ladderEnd needs a supervisor in scenario buck-aux-48v; use lowestGateDrive or scenario',
    ]);
  });

  it('refuses supervisor fields on the grid when the device spread uses the ladder', () => {
    const spec = parseStudySpecObject({ name: 'g', seed: 1, kind: 'point', grid: { 'supervisor.gateDrive.minV': [4, 5] }, random: { samples: 1 }, deviceSpread: spread });
    expect(problems(() => studyContext(spec, warmup))[0]).toMatch(/^grid\.supervisor\.gateDrive\.minV: the device spread uses the supervisor ladder of the base scenario/);
  });

  it('preflight names the study path and the scenario complaint', () => {
    const spec = parseStudySpecObject({
      name: 'p',
      seed: 1,
      kind: 'point',
      grid: { 'pwm.fswHz': [100e3, 0] },
      random: { samples: 1, params: { 'buck.nosuch': { dist: 'normal', mean: 1, sd: 0 } } },
    });
    expect(problems(() => preflight(studyContext(spec, aux)))).toEqual([
      'grid.pwm.fswHz[1]: pwm.fswHz: Too small: expected number to be >0 (unit: Hz), got 0',
      'random.params.buck.nosuch: buck.nosuch: unknown field',
    ]);
  });
});

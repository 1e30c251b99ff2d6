/** The sampler: sample i is a pure function of (spec, i); draws respect their bounds; sharding partitions. */
import { fc, test } from '@fast-check/vitest';
import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/control/rng.ts';
import { draw } from '../../src/study/distributions.ts';
import { samplePlan, shardIndexes, streamKey } from '../../src/study/sampler.ts';
import { parseStudySpecObject } from '../../src/study/spec.ts';

const spread = {
  vthShiftV: { dist: 'normal', mean: 0, sd: 0.3 },
  rdsOnScale: { dist: 'lognormal', median: 1, sigmaLn: 0.1 },
  gateChargeScale: { dist: 'uniform', min: 0.8, max: 1.2 },
  rthJcScale: { dist: 'lognormal', median: 1, sigmaLn: 0.1 },
};

function studyWith(seed: number, params: Record<string, unknown>, samples = 50) {
  return parseStudySpecObject({ name: 'p', seed, kind: 'point', grid: { 'pwm.fswHz': [100e3, 200e3, 300e3] }, random: { samples, params }, deviceSpread: spread });
}

const bounds = fc
  .tuple(fc.double({ min: -1e6, max: 1e6, noNaN: true }), fc.double({ min: 0, max: 1e6, noNaN: true }))
  .map(([min, width]) => ({ min, max: min + width }));

describe('draws', () => {
  test.prop([fc.integer({ min: 0, max: 2 ** 31 }), bounds, fc.integer({ min: 0, max: 10_000 })])(
    'a uniform parameter stays within [min, max] for every sample',
    (seed, { min, max }, index) => {
      const spec = parseStudySpecObject({ name: 'u', seed, kind: 'point', random: { samples: 10_001, params: { 'buck.vinV': { dist: 'uniform', min, max } } } });
      const v = samplePlan(spec, index).params['buck.vinV'] as number;
      expect(v).toBeGreaterThanOrEqual(min);
      expect(v).toBeLessThanOrEqual(max);
    },
  );

  test.prop([fc.integer({ min: 0, max: 2 ** 31 }), fc.double({ min: 0.01, max: 100, noNaN: true }), fc.double({ min: 0, max: 2, noNaN: true })])(
    'a lognormal draw is positive',
    (seed, median, sigmaLn) => {
      expect(draw({ dist: 'lognormal', median, sigmaLn }, new Rng(seed))).toBeGreaterThan(0);
    },
  );

  it('normal draws have about the requested mean and sd (10 000 draws, 4σ of the estimator)', () => {
    const rng = new Rng(11);
    const n = 10_000;
    const xs = Array.from({ length: n }, () => draw({ dist: 'normal', mean: 3, sd: 0.5 }, rng));
    const mean = xs.reduce((s, x) => s + x, 0) / n;
    const sd = Math.sqrt(xs.reduce((s, x) => s + (x - mean) ** 2, 0) / (n - 1));
    expect(Math.abs(mean - 3)).toBeLessThan((4 * 0.5) / Math.sqrt(n));
    expect(Math.abs(sd - 0.5)).toBeLessThan((4 * 0.5) / Math.sqrt(2 * n));
  });
});

describe('samplePlan', () => {
  test.prop([fc.integer({ min: 0, max: 2 ** 40 }), fc.integer({ min: 0, max: 149 })])('is reproducible: the same (spec, i) gives the same plan', (seed, i) => {
    const a = samplePlan(studyWith(seed, { 'buck.vinV': { dist: 'normal', mean: 48, sd: 1 } }), i);
    const b = samplePlan(studyWith(seed, { 'buck.vinV': { dist: 'normal', mean: 48, sd: 1 } }), i);
    expect(b).toEqual(a);
  });

  test.prop([fc.integer({ min: 0, max: 2 ** 31 }), fc.shuffledSubarray([...Array(150).keys()], { minLength: 1, maxLength: 30 })])(
    'does not depend on which samples were drawn before, or in which order',
    (seed, order) => {
      const spec = studyWith(seed, { 'buck.vinV': { dist: 'normal', mean: 48, sd: 1 } });
      const fresh = order.map((i) => samplePlan(spec, i));
      const after = [...order].reverse().map((i) => samplePlan(spec, i)).reverse();
      expect(after).toEqual(fresh);
    },
  );

  test.prop([fc.integer({ min: 0, max: 2 ** 31 }), fc.integer({ min: 0, max: 149 })])(
    "adding or reordering random parameters leaves the other parameters' and the devices' draws unchanged",
    (seed, i) => {
      const one = samplePlan(studyWith(seed, { 'buck.vinV': { dist: 'normal', mean: 48, sd: 1 } }), i);
      const two = samplePlan(
        studyWith(seed, { 'thermal.coolant.inletC': { dist: 'uniform', min: -20, max: 40 }, 'buck.vinV': { dist: 'normal', mean: 48, sd: 1 } }),
        i,
      );
      expect(two.params['buck.vinV']).toBe(one.params['buck.vinV']);
      expect(two.devices).toEqual(one.devices);
      expect(two.seed).toBe(one.seed);
    },
  );

  it('walks the grid with the first axis slowest, each cell repeated `samples` times with common draws', () => {
    const spec = parseStudySpecObject({
      name: 'g',
      seed: 3,
      kind: 'point',
      grid: { 'pwm.fswHz': [1, 2], 'gateDrive.vDriveV': [5, 6, 7] },
      random: { samples: 2 },
      deviceSpread: spread,
    });
    const plans = Array.from({ length: spec.total }, (_, i) => samplePlan(spec, i));
    expect(plans.map((p) => [p.params['pwm.fswHz'], p.params['gateDrive.vDriveV']])).toEqual([
      [1, 5], [1, 5], [1, 6], [1, 6], [1, 7], [1, 7], [2, 5], [2, 5], [2, 6], [2, 6], [2, 7], [2, 7],
    ]);
    // Replicate r draws the same builds in every cell (common random numbers), different ones across r.
    expect(plans[2].devices).toEqual(plans[0].devices);
    expect(plans[11].devices).toEqual(plans[1].devices);
    expect(plans[1].devices).not.toEqual(plans[0].devices);
  });

  it('draws each device instance independently', () => {
    const p = samplePlan(studyWith(5, {}), 0);
    expect(p.devices?.highSide?.vthShiftV).not.toBe(p.devices?.lowSide?.vthShiftV);
    expect(p.devices?.highSide?.rdsOnScale).not.toBe(p.devices?.lowSide?.rdsOnScale);
  });

  it('draws separate Rds,on factors in separate mode', () => {
    const spec = parseStudySpecObject({ name: 's', seed: 1, kind: 'point', random: { samples: 3 }, deviceSpread: { ...spread, rdsOnMode: 'separate' } });
    const d = samplePlan(spec, 1).devices!.highSide!;
    expect(d.rdsOnScale).toBeUndefined();
    expect(d.rSeriesScale).toBeGreaterThan(0);
    expect(d.channelScale).toBeGreaterThan(0);
    expect(d.rSeriesScale).not.toBe(d.channelScale);
  });

  it('rejects an index outside the study', () => {
    const spec = studyWith(1, {});
    expect(() => samplePlan(spec, spec.total)).toThrow(/from 0 to 149, got 150/);
    expect(() => samplePlan(spec, -1)).toThrow(RangeError);
  });

  it('keys streams by a stable hash (FNV-1a 32: "a" → 0xe40c292c, published test vector)', () => {
    expect(streamKey('')).toBe(0x811c9dc5);
    expect(streamKey('a')).toBe(0xe40c292c);
    expect(streamKey('foobar')).toBe(0xbf9cf968);
  });
});

describe('shardIndexes', () => {
  test.prop([fc.integer({ min: 0, max: 500 }), fc.integer({ min: 1, max: 17 })])('the shards of N partition the indexes', (total, n) => {
    const all = Array.from({ length: n }, (_, k) => shardIndexes(total, { k, n })).flat().sort((a, b) => a - b);
    expect(all).toEqual([...Array(total).keys()]);
  });

  it('takes every N-th index starting at K', () => {
    expect(shardIndexes(10, { k: 1, n: 4 })).toEqual([1, 5, 9]);
    expect(shardIndexes(3, undefined)).toEqual([0, 1, 2]);
  });
});

import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { fc, test } from '@fast-check/vitest';
import { operatingPoint, pointContext } from '../../src/analysis/operatingPoint.ts';
import { sweepPoints, sweepValues, sweepVariants } from '../../src/analysis/sweep.ts';
import { ScenarioError } from '../../src/scenario/errors.ts';
import { parseScenario, withOverrides } from '../../src/scenario/parse.ts';

const demo = parseScenario(readFileSync(new URL('../../cases/buck-aux-48v.yaml', import.meta.url), 'utf8'));

describe('sweepValues', () => {
  it('sweepValues(from, to, n) spaces n values evenly with exact end points', () => {
    expect(sweepValues(0, 1, 5)).toEqual([0, 0.25, 0.5, 0.75, 1]);
    expect(sweepValues(3, 3, 1)).toEqual([3]);
    expect(sweepValues(10, 0, 3)).toEqual([10, 5, 0]);
  });

  it('sweepValues(from, to, n, true) spaces them geometrically', () => {
    const v = sweepValues(1e3, 1e6, 4, true);
    expect(v[0]).toBe(1e3);
    expect(v[3]).toBe(1e6);
    expect(v[1]).toBeCloseTo(1e4, 6);
    expect(v[2]).toBeCloseTo(1e5, 5);
  });

  it('rejects impossible requests with the bad value in the message', () => {
    expect(() => sweepValues(0, 1, 0)).toThrow(/got 0/);
    expect(() => sweepValues(0, 1, 2.5)).toThrow(/got 2.5/);
    expect(() => sweepValues(-1, 1, 3, true)).toThrow(/positive bounds, got -1 and 1/);
    expect(() => sweepValues(Number.NaN, 1, 3)).toThrow(/finite/);
  });

  test.prop([fc.double({ min: -1e6, max: 1e6, noNaN: true }), fc.double({ min: -1e6, max: 1e6, noNaN: true }), fc.integer({ min: 2, max: 200 })])(
    'linear values are monotone between the bounds and hit both ends',
    (from, to, n) => {
      const v = sweepValues(from, to, n);
      expect(v).toHaveLength(n);
      // === rather than Object.is: a sweep from −0 may start at +0.
      expect(v[0] === from).toBe(true);
      expect(v[n - 1] === to).toBe(true);
      const s = Math.sign(to - from);
      for (let i = 1; i < n; i++) expect(Math.sign(v[i] - v[i - 1]) * s).toBeGreaterThanOrEqual(0);
    },
  );
});

describe('sweepPoints', () => {
  it('gives the same point as solving each variant on its own (the shared thermal network is reused only when unchanged)', () => {
    for (const [param, value] of [['pwm.fswHz', 250e3], ['thermal.heatsink.rSinkCoolantKPerW', 0.5]] as const) {
      const [p] = sweepPoints(demo, param, [value]);
      const alone = operatingPoint(pointContext(withOverrides(demo, { [param]: value })));
      expect(p.point.tjHsC).toBe(alone.tjHsC);
      expect(p.point.electrical.totalLossW).toBe(alone.electrical.totalLossW);
    }
  });

  it('sweepVariants rejects a bad path or value with a ScenarioError naming the value', () => {
    expect(() => sweepVariants(demo, 'pwm.nope', [1])).toThrow(ScenarioError);
    try {
      sweepVariants(demo, 'pwm.fswHz', [1e5, -1]);
      expect.unreachable();
    } catch (e) {
      expect((e as ScenarioError).problems).toEqual([expect.objectContaining({ path: 'pwm.fswHz', message: expect.stringMatching(/\(at pwm\.fswHz = -1\)$/) })]);
    }
  });
});

/**
 * Drafted electrical points (src/model/electrical.ts): the electro-thermal iteration solves a
 * point at every step and builds only the last one. A drafted-then-built point must be the very
 * point `electricalPoint` returns, and the draft's losses the ones that point carries.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { buildElectrical, draftElectrical, electricalPoint, newElectricalDraft } from '../../src/model/electrical.ts';
import { type Plant, buildPlant } from '../../src/model/plant.ts';
import { parseScenario, withOverrides } from '../../src/scenario/parse.ts';
import { demoScenario } from './fixtures.ts';

const cases: Array<[string, Plant]> = [
  ['buck, regulated', buildPlant(demoScenario())],
  // 47 V out of 48 V is past dutyMax 0.95: the duty pins and the output settles below the target.
  ['buck, duty pinned', buildPlant(withOverrides(demoScenario(), { 'buck.voutRefV': 47 }))],
  ['half-bridge', buildPlant(parseScenario(readFileSync(new URL('../../cases/leg-standstill-400v.yaml', import.meta.url), 'utf8')))],
];

describe('draftElectrical + buildElectrical', () => {
  for (const [name, plant] of cases) {
    it(`${name}: builds exactly the point electricalPoint returns, with the draft's losses`, () => {
      const d = draftElectrical(plant, plant.knobs, 70, 55, newElectricalDraft());
      const built = buildElectrical(d);
      const direct = electricalPoint(plant, plant.knobs, 70, 55);
      expect(JSON.stringify(built)).toBe(JSON.stringify(direct));
      expect(d.hsLossW).toBe(built.leg.hs.totalW);
      expect(d.lsLossW).toBe(built.leg.ls.totalW);
      expect(d.passiveW).toBe(built.passiveW);
    });
  }

  it('the pinned-duty case does lose regulation (the case above exercises that path)', () => {
    expect(electricalPoint(cases[1][1], cases[1][1].knobs, 25, 25).regulated).toBe(false);
  });

  it('a built point is independent of the draft and of later drafts into it', () => {
    const plant = cases[0][1];
    const d = newElectricalDraft();
    const a = buildElectrical(draftElectrical(plant, plant.knobs, 25, 25, d));
    const before = JSON.stringify(a);
    const b = buildElectrical(draftElectrical(plant, { ...plant.knobs, fswHz: 2 * plant.knobs.fswHz }, 120, 120, d));
    expect(JSON.stringify(a)).toBe(before);
    expect(b.leg).not.toBe(a.leg);
    expect(b.capOut).not.toBe(a.capOut);
    expect(b.knobs.fswHz).toBe(2 * plant.knobs.fswHz);
  });

  it('builds once per draft', () => {
    const plant = cases[0][1];
    const d = draftElectrical(plant, plant.knobs, 25, 25, newElectricalDraft());
    buildElectrical(d);
    expect(() => buildElectrical(d)).toThrow(/draft builds one point/);
  });
});

import { readFileSync } from 'node:fs';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { ScenarioError } from '../../src/scenario/errors.ts';
import { type Scenario, parseScenario, parseScenarioObject, setPath, withOverrides } from '../../src/scenario/parse.ts';

// A patch confined to `devices` and `thermal` re-validates only those sections; it must give
// exactly what a full re-parse of the patched input gives (same scenario, or the same
// problems). The full parse is the reference: parseScenarioObject on the patched input.

const demo = parseScenario(readFileSync(new URL('../../cases/buck-cabin-warmup.yaml', import.meta.url), 'utf8'));
const leg = parseScenario(readFileSync(new URL('../../cases/leg-standstill-400v.yaml', import.meta.url), 'utf8'));

function fullParse(base: Scenario, patch: Record<string, unknown>): Scenario {
  let input: unknown = base.input;
  for (const [path, value] of Object.entries(patch)) input = setPath(input, path, value);
  return parseScenarioObject(input);
}

function outcome(f: () => Scenario): { ok: Scenario } | { problems: unknown } {
  try {
    return { ok: f() };
  } catch (e) {
    if (!(e instanceof ScenarioError)) throw e;
    return { problems: e.problems };
  }
}

const device = fc.constantFrom('highSide', 'lowSide');
const value = fc.oneof(
  fc.double({ min: -1, max: 1000, noNaN: true }),
  fc.double({ min: 1e-12, max: 1e-6, noNaN: true }),
  fc.constantFrom(0, -0, Infinity, 'x', null, true),
);
const entry = fc.oneof(
  fc.tuple(device, fc.constantFrom('vth25V', 'kAPerV2', 'rSeries25Ohm', 'qgCoulomb', 'qgdCoulomb', 'cissF', 'vdsRatedV', 'tjMaxC', 'noSuchField')).map(([d, f]) => `devices.${d}.${f}`),
  device.map((d) => `devices.${d}.part`),
  fc.tuple(device, fc.constantFrom('caseSinkKPerW', 'junctionCase.rKPerW', 'junctionCase.tauS', 'junctionCase.kind')).map(([d, f]) => `thermal.devices.${d}.${f}`),
  fc.constantFrom('thermal.heatsink.cthJPerK', 'thermal.coolant.flowKgPerS', 'thermal.ambientC', 'thermal.passiveToPlateFraction', 'thermal.extra'),
);
const patchArb = fc.dictionary(
  entry,
  fc.oneof(value, fc.array(fc.double({ min: -0.1, max: 2, noNaN: true }), { minLength: 0, maxLength: 3 }), fc.constantFrom('ld-si100-3m', 'ld-sic650-45m', 'nope', 'foster', 'cauer')),
  { minKeys: 1, maxKeys: 4 },
);

describe('scenario variants confined to devices and thermal', () => {
  it('equal a full re-parse, valid or not (property)', () => {
    fc.assert(
      fc.property(fc.constantFrom(demo, leg), patchArb, (base, patch) => {
        const fast = outcome(() => withOverrides(base, patch));
        const full = outcome(() => fullParse(base, patch));
        expect(fast).toEqual(full);
        if ('ok' in fast) expect(Object.isFrozen((fast.ok as Scenario).thermal.devices.highSide)).toBe(true);
      }),
      { numRuns: 400 },
    );
  });

  it('apply a device spread draw like a full re-parse', () => {
    const patch = {
      'devices.highSide.vth25V': demo.devices.highSide.vth25V - 0.3,
      'devices.lowSide.kAPerV2': demo.devices.lowSide.kAPerV2 * 1.1,
      'thermal.devices.highSide.junctionCase.rKPerW': demo.thermal.devices.highSide.junctionCase.rKPerW.map((r) => r * 1.2),
    };
    const v = withOverrides(demo, patch);
    expect(v).toEqual(fullParse(demo, patch));
    expect(v.devices.highSide.vth25V).toBe(demo.devices.highSide.vth25V - 0.3);
    // The base scenario is untouched and the unpatched sections are shared, not copied.
    expect(demo.devices.highSide.vth25V).not.toBe(v.devices.highSide.vth25V);
    expect(v.pwm).toBe(demo.pwm);
  });

  it('reports the bus rating rule that ties devices to the converter', () => {
    // 48 V bus: a device rated below it is refused, as a full parse refuses it.
    expect(() => withOverrides(demo, { 'devices.highSide.vdsRatedV': 40 })).toThrow(/bus 48 V exceeds the part's rated 40 V/);
  });
});

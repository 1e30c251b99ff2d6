/**
 * Scenario schema and parser (src/scenario): round trips, and bad input always surfacing as a
 * ScenarioError whose problem path names the field that was broken — never another exception.
 */
import { readFileSync } from 'node:fs';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { ScenarioError } from '../../src/scenario/errors.ts';
import { type Scenario, parseScenario, parseScenarioObject, withOverrides } from '../../src/scenario/parse.ts';

fc.configureGlobal({ seed: 0x5c3a, numRuns: 300 });

const DEMO_TEXT = readFileSync(new URL('../../cases/buck-aux-48v.yaml', import.meta.url), 'utf8');
const demo = parseScenario(DEMO_TEXT);
const demoInput = demo.input as Record<string, unknown>;

type Key = string | number;

/** Path as the parser prints it: `a.b[0].c`. */
const pathString = (keys: readonly Key[]): string =>
  keys.reduce<string>((s, k) => (typeof k === 'number' ? `${s}[${k}]` : s ? `${s}.${k}` : k), '');

/** Every leaf and every object node of a plain value, with its key path. */
function walk(v: unknown, keys: Key[] = [], out: { leaves: Key[][]; objects: Key[][] } = { leaves: [], objects: [] }) {
  if (Array.isArray(v)) v.forEach((x, i) => walk(x, [...keys, i], out));
  else if (v !== null && typeof v === 'object') {
    out.objects.push(keys);
    for (const [k, x] of Object.entries(v)) walk(x, [...keys, k], out);
  } else out.leaves.push(keys);
  return out;
}

const { leaves, objects } = walk(demoInput);
const valueAt = (keys: readonly Key[]): unknown => keys.reduce<unknown>((o, k) => (o as Record<Key, unknown>)[k], demoInput);
const numericLeaves = leaves.filter((k) => typeof valueAt(k) === 'number');
// Fields where a negative value is legitimate (temperatures, a negative gate-off voltage).
const SIGNED = new Set(['gateDrive.vOffV', 'thermal.coolant.inletC', 'thermal.ambientC', 'buck.inductor.tempC']);
const unsignedLeaves = numericLeaves.filter((k) => !SIGNED.has(pathString(k)));

// Required by the schema, and present in the demo (optional and defaulted fields excluded).
const REQUIRED = [
  'name', 'topology', 'pwm', 'pwm.fswHz', 'pwm.deadTimeS', 'gateDrive', 'gateDrive.vDriveV', 'devices', 'devices.highSide',
  'devices.lowSide.part', 'buck', 'buck.vinV', 'buck.voutRefV', 'buck.inductor', 'buck.inductor.lH', 'buck.inductor.dcr20Ohm',
  'buck.inductor.core.kiSI', 'buck.inductor.core.turns', 'buck.outputCap.cF', 'buck.inputCap.rippleRatingA', 'buck.load',
  'buck.load.rOhm', 'thermal', 'thermal.devices.highSide.junctionCase', 'thermal.devices.lowSide.junctionCase.tauS',
  'thermal.devices.highSide.caseSinkKPerW', 'thermal.heatsink.cthJPerK', 'thermal.heatsink.rSinkCoolantKPerW',
  'thermal.coolant.inletC', 'thermal.coolant.flowKgPerS',
].map((p) => p.split('.') as Key[]);

// Optional device overrides: absent from the demo, validated against the part's schema.
const DEVICE_OVERRIDES = ['kAPerV2', 'rSeries25Ohm', 'cossF', 'qrrRefA', 'tjMaxC'].flatMap((f) => [
  ['devices', 'highSide', f],
  ['devices', 'lowSide', f],
]) as Key[][];

/**
 * Where the problem may be reported: at the field itself, or — for a member of a union
 * (`buck.load` is `{rOhm}` or `{iA}`) whose value no branch accepts — at the union, since no
 * single branch is known to be meant. (An unknown key inside the union is still named exactly.)
 */
function acceptablePaths(keys: readonly Key[]): string[] {
  const p = pathString(keys);
  return p.startsWith('buck.load.') ? [p, 'buck.load'] : [p];
}

interface Mutation {
  label: string;
  keys: Key[];
  apply: (root: Record<string, unknown>) => void;
}

function setAt(root: Record<string, unknown>, keys: readonly Key[], value: unknown): void {
  let node = root as Record<Key, unknown>;
  for (const k of keys.slice(0, -1)) node = node[k] as Record<Key, unknown>;
  node[keys[keys.length - 1]] = value;
}

function deleteAt(root: Record<string, unknown>, keys: readonly Key[]): void {
  let node = root as Record<Key, unknown>;
  for (const k of keys.slice(0, -1)) node = node[k] as Record<Key, unknown>;
  delete node[keys[keys.length - 1]];
}

const mutationArb: fc.Arbitrary<Mutation> = fc.oneof(
  fc.constantFrom(...REQUIRED).map((keys) => ({ label: `delete ${pathString(keys)}`, keys, apply: (r: Record<string, unknown>) => deleteAt(r, keys) })),
  fc
    .tuple(fc.constantFrom(...unsignedLeaves, ...DEVICE_OVERRIDES), fc.integer({ min: 1, max: 1_000_000 }), fc.integer({ min: -6, max: 3 }))
    .map(([keys, m, e]) => {
      const value = -m * 10 ** e;
      return { label: `${pathString(keys)} = ${value}`, keys, apply: (r: Record<string, unknown>) => setAt(r, keys, value) };
    }),
  fc
    .tuple(fc.constantFrom(...numericLeaves, ...DEVICE_OVERRIDES), fc.constantFrom<unknown>(NaN, Infinity, '12', 'fast', true, null, [], {}))
    .map(([keys, value]) => ({ label: `${pathString(keys)} = ${String(value)}`, keys, apply: (r: Record<string, unknown>) => setAt(r, keys, value) })),
  fc.tuple(fc.constantFrom(...objects), fc.integer({ min: 0, max: 999 })).map(([at, n]) => {
    const keys = [...at, `zzUnknown${n}`];
    return { label: `add ${pathString(keys)}`, keys, apply: (r: Record<string, unknown>) => setAt(r, keys, 1) };
  }),
);

function parseError(input: unknown): ScenarioError {
  try {
    parseScenarioObject(input);
  } catch (e) {
    if (e instanceof ScenarioError) return e;
    throw new Error(`expected a ScenarioError, got ${e instanceof Error ? `${e.name}: ${e.message}` : String(e)}`);
  }
  throw new Error('expected a ScenarioError, but the scenario was accepted');
}

describe('scenario round trip', () => {
  it('parseScenario(JSON.stringify(scenario.input)) equals the scenario', () => {
    const again: Scenario = parseScenario(JSON.stringify(demo.input));
    expect(again).toEqual(demo);
    expect(Object.isFrozen(again.pwm)).toBe(true);
  });

  it('round-trips variants made with withOverrides (property)', () => {
    fc.assert(
      fc.property(fc.integer({ min: 20, max: 500 }), fc.integer({ min: 20, max: 300 }), fc.integer({ min: 60, max: 150 }), fc.integer({ min: 30, max: 1000 }), (fKHz, deadNs, vDeci, rCenti) => {
        const s = withOverrides(demo, {
          'pwm.fswHz': fKHz * 1e3, 'pwm.deadTimeS': deadNs * 1e-9, 'gateDrive.vDriveV': vDeci / 10, 'buck.load.rOhm': rCenti / 100,
        });
        expect(parseScenario(JSON.stringify(s.input))).toEqual(s);
        expect(s.pwm.fswHz).toBe(fKHz * 1e3);
      }),
      { numRuns: 50 },
    );
  });
});

describe('bad scenarios', () => {
  it('always throw a ScenarioError naming the broken field (property)', () => {
    fc.assert(
      fc.property(mutationArb, (m) => {
        const input = structuredClone(demoInput);
        m.apply(input);
        const err = parseError(input);
        const want = acceptablePaths(m.keys);
        const paths = err.problems.map((p) => p.path);
        if (!paths.some((p) => want.includes(p))) throw new Error(`${m.label}: no problem at ${want.join(' or ')}; got ${JSON.stringify(err.problems)}`);
      }),
    );
  });

  it('report every problem at once, each with its value', () => {
    const input = structuredClone(demoInput);
    setAt(input, ['pwm', 'fswHz'], -1);
    setAt(input, ['buck', 'inductor', 'lH'], 'twelve');
    const err = parseError(input);
    expect(err.problems.map((p) => p.path).sort()).toEqual(['buck.inductor.lH', 'pwm.fswHz']);
    expect(err.message).toMatch(/pwm\.fswHz: .*\(unit: Hz\), got -1/);
    expect(err.message).toMatch(/buck\.inductor\.lH: .*got "twelve"/);
  });

  it('a ramp may carry holds (strictly increasing); a step list may not', () => {
    const withInlet = (inletC: unknown): Record<string, unknown> => {
      const input = structuredClone(demoInput);
      input.profiles = { ...(input.profiles as object | undefined), inletC };
      return input;
    };
    const ok = parseScenarioObject(withInlet({ ramp: [[0, -5], [100, 5]], holds: [[30, 20], [60, 12]] }));
    expect(ok.profiles.inletC).toEqual({ ramp: [[0, -5], [100, 5]], holds: [[30, 20], [60, 12]] });
    expect(parseError(withInlet({ ramp: [[0, -5], [100, 5]], holds: [[60, 20], [30, 12]] })).message).toMatch(/profiles\.inletC/);
    expect(parseError(withInlet({ step: [[0, -5]], holds: [[30, 20]] })).message).toMatch(/profiles\.inletC/);
  });

  it('turn arbitrary text into a ScenarioError, never a crash (property)', () => {
    // YAML aliases (`*name`) are kept out here: they hit the known bug tracked just below.
    const text = fc.oneof(fc.string(), fc.constantFrom('', '[]', 'null', '- a', '{', 'pwm: [', 'a: 1\na: 2', '{"pwm": 1}', '!!int abc'));
    fc.assert(
      fc.property(text, (t) => {
        fc.pre(!t.includes('*'));
        expect(() => parseScenario(t)).toThrow(ScenarioError);
      }),
    );
  });

  // Unresolved aliases and self-referencing anchors used to escape as ReferenceError/TypeError
  // (found by the property above with another seed); they are scenario problems like any other.
  it('turns an unresolved YAML alias into a ScenarioError', () => {
    expect(() => parseScenario('*a')).toThrow(ScenarioError);
  });
  it('turns a self-referencing YAML anchor into a ScenarioError', () => {
    expect(() => parseScenario('&a [*a]')).toThrow(ScenarioError);
  });
});

/** Study specs: what a valid spec becomes, and every malformed one reported at its path. */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { ScenarioError } from '../../src/scenario/errors.ts';
import { parseStudySpec, parseStudySpecObject } from '../../src/study/spec.ts';

function problemsOf(input: unknown): string[] {
  try {
    parseStudySpecObject(input);
  } catch (e) {
    if (e instanceof ScenarioError) return e.problems.map((p) => `${p.path}: ${p.message}`);
    throw e;
  }
  return [];
}

const base = { name: 's', seed: 1, kind: 'point' };

describe('parseStudySpecObject', () => {
  it('expands grid ranges and counts grid cells × replicates', () => {
    const s = parseStudySpecObject({
      ...base,
      grid: { 'pwm.fswHz': { from: 50e3, to: 200e3, steps: 3, log: true }, 'gateDrive.vDriveV': [6, 8] },
      random: { samples: 5 },
    });
    expect(s.grid.map((a) => a.path)).toEqual(['pwm.fswHz', 'gateDrive.vDriveV']);
    expect(s.grid[0].values).toEqual([50e3, 100e3, 200e3]);
    expect(s.replicates).toBe(5);
    expect(s.total).toBe(3 * 2 * 5);
  });

  it('a spec with neither grid nor random is one sample', () => {
    expect(parseStudySpecObject(base).total).toBe(1);
  });

  it('fills the device-spread defaults (both devices, lowest gate drive, joint Rds,on)', () => {
    const s = parseStudySpecObject({ ...base, random: { samples: 2 }, deviceSpread: { vthShiftV: { dist: 'normal', mean: 0, sd: 0.3 } } });
    expect(s.deviceSpread).toMatchObject({ at: 'lowestGateDrive', devices: ['highSide', 'lowSide'], rdsOnMode: 'joint', achievableHeat: false });
  });

  it('the demo study spec parses: 1000 device-spread samples of kind point', () => {
    const s = parseStudySpec(readFileSync(new URL('../../cases/studies/spread-lowdrive.yaml', import.meta.url), 'utf8'));
    expect(s.total).toBe(1000);
    expect(s.kind).toBe('point');
    expect(s.deviceSpread?.at).toBe('ladderEnd');
  });

  // Each row: a malformed spec and the `path: message` lines it must produce (substring match).
  const table: Array<[string, unknown, string[]]> = [
    ['missing required fields', {}, ['name: ', 'seed: ', 'kind: ']],
    ['unknown top-level key', { ...base, sample: 3 }, ['sample: unknown field']],
    ['bad kind', { ...base, kind: 'sweep' }, ['kind: Invalid option']],
    ['negative seed', { ...base, seed: -1 }, ['seed: Too small']],
    ['fractional seed', { ...base, seed: 1.5 }, ['seed: ']],
    ['grid axis with zero steps', { ...base, grid: { 'pwm.fswHz': { from: 1, to: 2, steps: 0 } } }, ['grid.pwm.fswHz.steps: Too small']],
    ['log grid axis through zero', { ...base, grid: { 'pwm.fswHz': { from: 0, to: 2, steps: 3, log: true } } }, ['grid.pwm.fswHz: a log sweep needs positive bounds']],
    ['unknown key in a grid axis', { ...base, grid: { 'pwm.fswHz': { from: 1, to: 2, steps: 2, spacing: 'log' } } }, ['grid.pwm.fswHz']],
    ['empty value list', { ...base, grid: { 'pwm.fswHz': [] } }, ['grid.pwm.fswHz: ']],
    ['not a field path', { ...base, grid: { 'pwm fswHz': [1] } }, ['grid.pwm fswHz: must be a dotted field path']],
    ['prototype path', { ...base, grid: { 'a.__proto__.b': [1] } }, ['not a valid field path']],
    ['uniform with min above max', { ...base, random: { samples: 2, params: { 'buck.vinV': { dist: 'uniform', min: 5, max: 1 } } } }, ['random.params.buck.vinV.max: min must not exceed max']],
    ['normal without sd', { ...base, random: { samples: 2, params: { 'buck.vinV': { dist: 'normal', mean: 48 } } } }, ['random.params.buck.vinV.sd: ']],
    ['unknown distribution', { ...base, random: { samples: 2, params: { 'buck.vinV': { dist: 'gauss', mean: 48, sd: 1 } } } }, ['random.params.buck.vinV.dist: ']],
    ['zero samples', { ...base, random: { samples: 0 } }, ['random.samples: Too small']],
    ['a path both on the grid and drawn', { ...base, grid: { 'buck.vinV': [40] }, random: { samples: 2, params: { 'buck.vinV': { dist: 'normal', mean: 48, sd: 1 } } } }, ['random.params.buck.vinV: already a grid axis']],
    ['device spread without a sample count', { ...base, deviceSpread: { vthShiftV: { dist: 'normal', mean: 0, sd: 0.3 } } }, ['deviceSpread: needs random.samples']],
    ['device spread with nothing to spread', { ...base, random: { samples: 2 }, deviceSpread: {} }, ['deviceSpread: give at least one of']],
    ['unknown device', { ...base, random: { samples: 2 }, deviceSpread: { devices: ['midSide'], vthShiftV: { dist: 'normal', mean: 0, sd: 0.3 } } }, ['deviceSpread.devices[0]: ']],
    ['a scale that can reach zero', { ...base, random: { samples: 2 }, deviceSpread: { rthJcScale: { dist: 'uniform', min: 0, max: 2 } } }, ['deviceSpread.rthJcScale.min: a scale factor needs min > 0']],
    ['negative lognormal spread', { ...base, random: { samples: 2 }, deviceSpread: { rdsOnScale: { dist: 'lognormal', median: 1, sigmaLn: -0.1 } } }, ['deviceSpread.rdsOnScale.sigmaLn: Too small']],
    ['unknown device-spread key', { ...base, random: { samples: 2 }, deviceSpread: { vth: { dist: 'normal', mean: 0, sd: 0.3 } } }, ['deviceSpread.vth: unknown field']],
    ['an output listed twice', { ...base, outputs: ['tjPeakC', 'tjPeakC'] }, ['outputs: list each output once']],
    ['too many samples', { ...base, grid: { 'pwm.fswHz': { from: 1, to: 2, steps: 100000 } }, random: { samples: 1000 } }, ['grid: 100000 grid cells × 1000 samples']],
  ];

  it.each(table)('%s: reported at its path', (_what, input, expected) => {
    const problems = problemsOf(input);
    expect(problems.length).toBeGreaterThan(0);
    for (const e of expected) expect(problems.some((p) => p.includes(e)), `${e} in\n${problems.join('\n')}`).toBe(true);
  });

  it('reports every problem at once', () => {
    expect(problemsOf({ name: '', seed: -1, kind: 'x', extra: 1 })).toHaveLength(4);
  });

  it('reports YAML syntax errors with their line', () => {
    expect(() => parseStudySpec('name: a\nseed: [1\n')).toThrow(/line \d+/);
  });
});

describe('the README', () => {
  it('its study spec example is a valid spec', () => {
    const readme = readFileSync(new URL('../../README.md', import.meta.url), 'utf8');
    const at = readme.indexOf('**Spec.**');
    const block = /```yaml\n([\s\S]*?)```/.exec(readme.slice(at));
    expect(block).not.toBeNull();
    const s = parseStudySpec(block![1]);
    expect(s.total).toBe(5 * 3 * 1000);
    expect(s.deviceSpread?.achievableHeat).toBe(true);
  });
});

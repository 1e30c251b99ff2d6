/**
 * Shared helpers for the simulation tests: the demo cases with overrides, a run wrapper, and
 * near-ideal device overrides. Plain data and thin wrappers; nothing here asserts.
 */
import { idealDevice } from '../model/fixtures.ts';
import { readFileSync } from 'node:fs';
import { type Scenario, parseScenario, withOverrides } from '../../src/scenario/parse.ts';
import { type SimOptions, type SimResult, simulate } from '../../src/sim/engine.ts';
import { type SimSystem, buildSystem } from '../../src/sim/system.ts';

export const BUCK_CASE = new URL('../../cases/buck-aux-48v.yaml', import.meta.url);
export const LEG_CASE = new URL('../../cases/leg-standstill-400v.yaml', import.meta.url);

export function buckScenario(patch: Record<string, unknown> = {}): Scenario {
  return withOverrides(parseScenario(readFileSync(BUCK_CASE, 'utf8')), patch);
}

export function legScenario(patch: Record<string, unknown> = {}): Scenario {
  return withOverrides(parseScenario(readFileSync(LEG_CASE, 'utf8')), patch);
}

export function run(sc: Scenario, opts: SimOptions = {}): { sys: SimSystem; res: SimResult } {
  const sys = buildSystem(sc);
  return { sys, res: simulate(sys, opts) };
}

/**
 * Device overrides that make a part's non-idealities negligible at tens of volts and amperes:
 * tests/model/fixtures.ts idealDevice without its identity fields (k = 10⁶ A/V², no series
 * resistance, femto-scale capacitances and charges, a 1 mV diode, no temperature coefficients).
 */
const { part: _part, label: _label, vdsRatedV: _v, lambdaPerV: _l, qrrRefA: _q, tjMaxC: _t, ...idealFields } = idealDevice();
export const NEAR_IDEAL_DEVICE = Object.freeze(idealFields);

/** Overrides that keep a part as it is but remove every temperature coefficient: losses then do not depend on Tj. */
export const NO_TEMPCO = {
  vthTempCoeffVPerK: 0,
  rdsTempCoeffPerK: 0,
  diodeVfTempCoeffVPerK: 0,
  qrrTempCoeffPerK: 0,
} as const;

/** `devices.highSide` / `devices.lowSide` patch with the same overrides on both sides. */
export function bothDevices(part: string, over: Record<string, number>): Record<string, unknown> {
  return { 'devices.highSide': { part, ...over }, 'devices.lowSide': { part, ...over } };
}

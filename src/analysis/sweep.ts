/**
 * One-parameter sweeps: the values, and the scenario variants built with `withOverrides`, each
 * re-validated. Every variant is built before any point is computed, so a value the schema
 * rejects is reported up front (with its index) and no partial sweep is produced.
 */
import { ScenarioError, type ScenarioProblem } from '../scenario/errors.ts';
import { type Scenario, withOverrides } from '../scenario/parse.ts';
import { buildPlant, thermalSpecOf } from '../model/plant.ts';
import { type OperatingPoint, type PointContext, operatingPoint, pointContext, pointContextOn } from './operatingPoint.ts';

export const MAX_SWEEP_STEPS = 100_000;

/**
 * `steps` values from `from` to `to` inclusive, evenly spaced, or geometrically when `log`.
 * The end points are exact. Throws RangeError on an impossible request.
 */
export function sweepValues(from: number, to: number, steps: number, log = false): number[] {
  if (!Number.isFinite(from) || !Number.isFinite(to)) throw new RangeError(`sweep bounds must be finite numbers, got ${from} and ${to}`);
  if (!Number.isInteger(steps) || steps < 1 || steps > MAX_SWEEP_STEPS)
    throw new RangeError(`steps must be a whole number from 1 to ${MAX_SWEEP_STEPS}, got ${steps}`);
  if (log && !(from > 0 && to > 0)) throw new RangeError(`a log sweep needs positive bounds, got ${from} and ${to}`);
  if (steps === 1) return [from];
  const out = new Array<number>(steps);
  for (let i = 0; i < steps; i++) {
    const u = i / (steps - 1);
    out[i] = log ? from * Math.pow(to / from, u) : from + (to - from) * u;
  }
  out[steps - 1] = to;
  return out;
}

export interface SweepPoint {
  readonly value: number;
  readonly scenario: Scenario;
  readonly point: OperatingPoint;
}

/**
 * The variant of `scenario` for each value of `param`. Throws one ScenarioError listing, for each
 * rejected value, its problems prefixed with the value (`pwm.fswHz = -1: ...`).
 */
export function sweepVariants(scenario: Scenario, param: string, values: readonly number[]): Scenario[] {
  const variants: Scenario[] = [];
  const problems: ScenarioProblem[] = [];
  for (const value of values) {
    try {
      variants.push(withOverrides(scenario, { [param]: value }));
    } catch (e) {
      if (!(e instanceof ScenarioError)) throw e;
      for (const p of e.problems) problems.push({ path: p.path, message: `${p.message} (at ${param} = ${value})` });
      // The same structural problem repeats at every value: report each distinct one once.
      if (problems.length > 20) break;
    }
  }
  if (problems.length > 0) throw new ScenarioError(dedupe(problems));
  return variants;
}

function dedupe(problems: readonly ScenarioProblem[]): ScenarioProblem[] {
  const seen = new Set<string>();
  return problems.filter((p) => {
    const key = `${p.path}\u0000${p.message.replace(/\(at .*\)$/, '')}`;
    if (seen.has(key)) return false;
    seen.add(key);
    return true;
  });
}

/**
 * A variant's context, reusing the base's thermal network when the variant leaves the thermal
 * path unchanged (building the network costs about as much as solving a point).
 */
function contextFor(variant: Scenario, base: PointContext, baseSpecJson: string): PointContext {
  if (JSON.stringify(thermalSpecOf(variant)) !== baseSpecJson) return pointContext(variant);
  return pointContextOn(variant, buildPlant(variant), base.net, base.thermalMemo);
}

/** The steady-state operating point of each variant. */
export function sweepPoints(scenario: Scenario, param: string, values: readonly number[]): SweepPoint[] {
  const variants = sweepVariants(scenario, param, values);
  const base = pointContext(scenario);
  const baseSpecJson = JSON.stringify(thermalSpecOf(scenario));
  return variants.map((s, i) => ({ value: values[i], scenario: s, point: operatingPoint(contextFor(s, base, baseSpecJson)) }));
}

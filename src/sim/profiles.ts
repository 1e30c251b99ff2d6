/**
 * Scenario profiles as functions of time: a constant, a held step list, or a linear ramp between
 * breakpoints (held before the first and after the last). The engine lands on every breakpoint.
 */
import type { ProfileSpec } from '../scenario/schema.ts';

export interface Profile {
  valueAt(tS: number): number;
  /** First breakpoint strictly after tS (Infinity when none). */
  nextBreakS(tS: number): number;
  readonly constant: boolean;
}

export function constantProfile(v: number): Profile {
  return { valueAt: () => v, nextBreakS: () => Infinity, constant: true };
}

export function makeProfile(spec: ProfileSpec | undefined, fallback: number): Profile {
  if (spec === undefined) return constantProfile(fallback);
  if (typeof spec === 'number') return constantProfile(spec);
  const ramp = 'ramp' in spec;
  const pts = ramp ? spec.ramp : spec.step;
  const ts = pts.map((p) => p[0]);
  const vs = pts.map((p) => p[1]);
  // Before the first breakpoint a step profile holds the fallback (the scenario's own value); a ramp holds its first value.
  const index = (t: number): number => {
    let lo = 0;
    let hi = ts.length - 1;
    if (t < ts[0]) return -1;
    while (lo < hi) {
      const mid = (lo + hi + 1) >> 1;
      if (ts[mid] <= t) lo = mid;
      else hi = mid - 1;
    }
    return lo;
  };
  return {
    constant: false,
    valueAt(t: number): number {
      const i = index(t);
      if (i < 0) return ramp ? vs[0] : fallback;
      if (!ramp || i === ts.length - 1) return vs[i];
      const f = (t - ts[i]) / (ts[i + 1] - ts[i]);
      return vs[i] + f * (vs[i + 1] - vs[i]);
    },
    nextBreakS(t: number): number {
      const i = index(t);
      return i + 1 < ts.length ? ts[i + 1] : Infinity;
    },
  };
}

/** True while a ramp is moving at tS (the engine must then step inputs finely). */
export function rampActive(p: Profile, tS: number): boolean {
  if (p.constant) return false;
  const a = p.valueAt(tS);
  const b = p.valueAt(tS + 1e-9);
  return a !== b;
}

/**
 * Scenario profiles as functions of time: a constant, a held step list, or a linear ramp between
 * breakpoints. Before its first breakpoint a step profile holds the scenario's own value; a ramp
 * holds its first value. The engine lands on every breakpoint.
 *
 * A live session changes an input by appending a step at the present time (`LiveProfile.setFrom`),
 * so the change is itself a breakpoint and the session replays exactly as a step profile (or, on
 * a ramp, as the ramp with `holds`, evaluated by the same `LiveProfile`).
 */
import type { ProfileSpec } from '../scenario/schema.ts';

export interface Profile {
  valueAt(tS: number): number;
  /** First breakpoint strictly after tS (Infinity when none). */
  nextBreakS(tS: number): number;
  readonly constant: boolean;
  /** Piecewise constant: the value only changes at breakpoints (a constant or a step list). */
  readonly stepwise?: boolean;
}

export function constantProfile(v: number): Profile {
  return { valueAt: () => v, nextBreakS: () => Infinity, constant: true, stepwise: true };
}

/** Index of the last breakpoint at or before t (−1 before the first). */
function lastAtOrBefore(ts: readonly number[], t: number): number {
  if (ts.length === 0 || t < ts[0]) return -1;
  let lo = 0;
  let hi = ts.length - 1;
  while (lo < hi) {
    const mid = (lo + hi + 1) >> 1;
    if (ts[mid] <= t) lo = mid;
    else hi = mid - 1;
  }
  return lo;
}

export function makeProfile(spec: ProfileSpec | undefined, fallback: number): Profile {
  if (spec === undefined) return constantProfile(fallback);
  if (typeof spec === 'number') return constantProfile(spec);
  if ('ramp' in spec && spec.holds !== undefined) {
    // The ramp, overridden from the first hold on — what a live session does with it.
    const held = new LiveProfile(makeProfile({ ramp: spec.ramp }, fallback));
    for (const [t, v] of spec.holds) held.setFrom(t, v);
    return held;
  }
  const ramp = 'ramp' in spec;
  const pts = ramp ? spec.ramp : spec.step;
  const ts = pts.map((p) => p[0]);
  const vs = pts.map((p) => p[1]);
  return {
    constant: false,
    stepwise: !ramp,
    valueAt(t: number): number {
      const i = lastAtOrBefore(ts, t);
      if (i < 0) return ramp ? vs[0] : fallback;
      if (!ramp || i === ts.length - 1) return vs[i];
      const f = (t - ts[i]) / (ts[i + 1] - ts[i]);
      return vs[i] + f * (vs[i + 1] - vs[i]);
    },
    nextBreakS(t: number): number {
      const i = lastAtOrBefore(ts, t);
      return i + 1 < ts.length ? ts[i + 1] : Infinity;
    },
  };
}

/** True while a ramp is moving at tS (the engine must then step inputs finely). */
export function rampActive(p: Profile, tS: number): boolean {
  if (p.constant) return false;
  return p.valueAt(tS) !== p.valueAt(tS + 1e-9);
}

/** A profile that live commands can override from a given time on. */
export class LiveProfile implements Profile {
  private readonly ts: number[] = [];
  private readonly vs: number[] = [];
  constructor(private readonly base: Profile) {}

  get constant(): boolean {
    return this.base.constant && this.ts.length === 0;
  }

  /** Live steps are held values, so this is piecewise constant exactly when the base is. */
  get stepwise(): boolean {
    return this.base.stepwise === true;
  }

  /** Hold `value` from `tS` on (replacing any later live steps). */
  setFrom(tS: number, value: number): void {
    while (this.ts.length > 0 && this.ts[this.ts.length - 1] >= tS) {
      this.ts.pop();
      this.vs.pop();
    }
    this.ts.push(tS);
    this.vs.push(value);
  }

  valueAt(t: number): number {
    const i = lastAtOrBefore(this.ts, t);
    return i < 0 ? this.base.valueAt(t) : this.vs[i];
  }

  nextBreakS(t: number): number {
    const i = lastAtOrBefore(this.ts, t);
    const own = i + 1 < this.ts.length ? this.ts[i + 1] : Infinity;
    return this.ts.length > 0 && t >= this.ts[0] ? own : Math.min(own, this.base.nextBreakS(t));
  }

  /** The live steps, as `[tS, value]` pairs. */
  steps(): Array<[number, number]> {
    return this.ts.map((t, i) => [t, this.vs[i]]);
  }
}

/**
 * Cached reads of one profile for a caller whose time mostly moves forward in small steps (the
 * engine reads several inputs at every iteration). A piecewise-constant profile's value is
 * reused while t stays in [t of the last search, next breakpoint); anything else is read
 * afresh. `at(t)` always equals `profile.valueAt(t)`. Call `invalidate()` after the profile
 * changes (a live step).
 */
export class ProfileReader {
  private lo = Infinity;
  private hi = -Infinity;
  private v = NaN;
  constructor(readonly profile: Profile) {}

  at(t: number): number {
    if (t >= this.lo && t < this.hi) return this.v;
    const p = this.profile;
    const v = p.valueAt(t);
    if (p.stepwise) {
      // A constant holds at every time; a step list from here up to its next breakpoint.
      this.lo = p.constant ? -Infinity : t;
      this.hi = p.nextBreakS(t);
      this.v = v;
    }
    return v;
  }

  invalidate(): void {
    this.lo = Infinity;
    this.hi = -Infinity;
  }
}

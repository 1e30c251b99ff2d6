/**
 * The supervisor's stable switching-frequency band: the largest contiguous fsw interval around
 * the nominal frequency in which the inner loop (configured basis and gains) is stable and holds
 * both margin floors. A log grid is scanned, then each edge is bisected between the last passing
 * and the first failing frequency. Results are cached per scenario and options, so the
 * supervisor can ask at every tick.
 */
import type { PiBasis } from '../control/pi.ts';
import type { Scenario } from '../scenario/parse.ts';
import { type MarginOverrides, evaluateLoop, linearPoint, marginContext } from './marginContext.ts';
import { LinearizationError } from './linearize.ts';

export interface StableBandOptions {
  readonly pmFloorDeg: number;
  readonly gmFloorDb: number;
  readonly fswMinHz: number;
  readonly fswMaxHz: number;
  /** Gate drive at which to evaluate (default: the scenario's). */
  readonly vDriveV?: number;
  readonly deadTimeS?: number;
  /** Grid points over [fswMinHz, fswMaxHz] (default 24). */
  readonly steps?: number;
  /** Frequency the band must contain (default: the scenario's fsw, clamped into the range). */
  readonly aroundHz?: number;
  /** Default: the configured basis. */
  readonly basis?: PiBasis;
}

export type BandEdge = 'range' | 'phaseMargin' | 'gainMargin' | 'unstable' | 'noOperatingPoint';

export interface StableBand {
  /** Band edges in Hz; NaN when the frequency to contain fails the floors itself. */
  readonly loHz: number;
  readonly hiHz: number;
  readonly ok: boolean;
  readonly aroundHz: number;
  /** Why the band stops at each end. */
  readonly loLimit: BandEdge;
  readonly hiLimit: BandEdge;
  readonly reason: string | undefined;
  readonly samples: ReadonlyArray<{ fswHz: number; pmDeg: number; gmDb: number; stable: boolean; holds: boolean }>;
}

interface Probe { fswHz: number; pmDeg: number; gmDb: number; stable: boolean; holds: boolean; limit: BandEdge }

const cache = new WeakMap<Scenario, Map<string, StableBand>>();

export function stableFswBand(scenario: Scenario, opts: StableBandOptions): StableBand {
  const { pmFloorDeg, gmFloorDb, fswMinHz, fswMaxHz } = opts;
  if (!(fswMinHz > 0 && fswMaxHz > fswMinHz)) throw new RangeError(`stableFswBand: need 0 < fswMinHz < fswMaxHz, got ${fswMinHz}, ${fswMaxHz}`);
  if (!Number.isFinite(pmFloorDeg) || !Number.isFinite(gmFloorDb)) throw new RangeError(`stableFswBand: floors must be finite, got ${pmFloorDeg}°, ${gmFloorDb} dB`);
  const steps = opts.steps ?? 24;
  if (!Number.isInteger(steps) || steps < 2 || steps > 10_000) throw new RangeError(`stableFswBand: steps must be a whole number from 2 to 10000, got ${steps}`);
  const key = JSON.stringify([pmFloorDeg, gmFloorDb, fswMinHz, fswMaxHz, opts.vDriveV, opts.deadTimeS, steps, opts.aroundHz, opts.basis]);
  let perScenario = cache.get(scenario);
  if (!perScenario) cache.set(scenario, (perScenario = new Map()));
  const hit = perScenario.get(key);
  if (hit) return hit;

  const ctx = marginContext(scenario);
  const basis = opts.basis ?? ctx.configuredBasis;
  const base: MarginOverrides = { vDriveV: opts.vDriveV, deadTimeS: opts.deadTimeS };
  const probe = (fswHz: number): Probe => {
    const o = { ...base, fswHz };
    try {
      const ev = evaluateLoop(ctx, linearPoint(ctx, o), basis, o, 10);
      const m = ev.analysis.margins;
      const stable = ev.analysis.stable;
      const limit: BandEdge = !stable ? 'unstable' : m.pmDeg < pmFloorDeg ? 'phaseMargin' : m.gmDb < gmFloorDb ? 'gainMargin' : 'range';
      return { fswHz, pmDeg: m.pmDeg, gmDb: m.gmDb, stable, holds: limit === 'range', limit };
    } catch (e) {
      if (!(e instanceof LinearizationError)) throw e;
      return { fswHz, pmDeg: NaN, gmDb: NaN, stable: false, holds: false, limit: 'noOperatingPoint' };
    }
  };
  const around = Math.min(Math.max(opts.aroundHz ?? scenario.pwm.fswHz, fswMinHz), fswMaxHz);
  const grid: number[] = [];
  for (let i = 0; i < steps; i++) grid.push(fswMinHz * Math.pow(fswMaxHz / fswMinHz, i / (steps - 1)));
  grid[steps - 1] = fswMaxHz;
  if (!grid.includes(around)) grid.push(around);
  grid.sort((a, b) => a - b);
  const probes = grid.map(probe);
  const iAround = grid.indexOf(around);
  const samples = probes.map(({ limit: _l, ...p }) => p);
  let result: StableBand;
  if (!probes[iAround].holds) {
    const p = probes[iAround];
    result = {
      loHz: NaN, hiHz: NaN, ok: false, aroundHz: around, loLimit: p.limit, hiLimit: p.limit, samples,
      reason: p.limit === 'noOperatingPoint' ? `no steady operating point at ${around} Hz` : `the loop fails the floors at ${around} Hz itself (PM ${p.pmDeg.toFixed(1)}°, GM ${p.gmDb.toFixed(1)} dB${p.stable ? '' : ', unstable'})`,
    };
  } else {
    let lo = iAround;
    while (lo > 0 && probes[lo - 1].holds) lo--;
    let hi = iAround;
    while (hi < probes.length - 1 && probes[hi + 1].holds) hi++;
    // Bisect each edge on log f between the passing and the failing grid point.
    const edge = (pass: number, fail: number): { f: number; limit: BandEdge } => {
      let a = pass;
      let b = fail;
      let lim = probe(b).limit;
      for (let it = 0; it < 10; it++) {
        const m = Math.sqrt(a * b);
        const p = probe(m);
        if (p.holds) a = m;
        else { b = m; lim = p.limit; }
      }
      return { f: a, limit: lim };
    };
    const loE = lo > 0 ? edge(grid[lo], grid[lo - 1]) : { f: grid[0], limit: 'range' as BandEdge };
    const hiE = hi < grid.length - 1 ? edge(grid[hi], grid[hi + 1]) : { f: grid[grid.length - 1], limit: 'range' as BandEdge };
    result = { loHz: loE.f, hiHz: hiE.f, ok: true, aroundHz: around, loLimit: loE.limit, hiLimit: hiE.limit, reason: undefined, samples };
  }
  perScenario.set(key, Object.freeze(result));
  return result;
}

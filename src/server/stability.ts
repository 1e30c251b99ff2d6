/**
 * The stability panel's numbers for a live operating point, from the margin analysis
 * (src/analysis/margins.ts and its context): loop margins and Bode data of the configured gain
 * basis at the present knobs, load, temperatures and gains, and a margin map over switching
 * frequency × gate drive with the present point marked. The map is computed row by row so a
 * session can spread the work over several ticks.
 */
import { LinearizationError } from '../analysis/linearize.ts';
import { evaluateLoop, linearPoint } from '../analysis/marginContext.ts';
import { type MarginOverrides, marginContext, marginsBode } from '../analysis/margins.ts';
import type { Scenario } from '../scenario/parse.ts';

export interface LivePoint {
  fswHz: number;
  deadTimeS: number;
  vDriveV: number;
  loadROhm?: number;
  loadIA?: number;
  vinV: number;
  tjHsC: number;
  tjLsC: number;
  kp: number;
  ki: number;
}

export interface PointMargin {
  pmDeg: number;
  gmDb: number;
  crossoverHz: number;
  phaseCrossoverHz: number;
  stable: boolean;
}

export interface MapSpec {
  fswHz: number[];
  vDriveV: number[];
}

/** JSON cannot carry Infinity: "no crossover" margins travel as the strings "Infinity"/"-Infinity"; NaN as null. */
export function jsonSafe<T>(v: T): unknown {
  if (typeof v === 'number') return Number.isNaN(v) ? null : v === Infinity ? 'Infinity' : v === -Infinity ? '-Infinity' : v;
  if (Array.isArray(v)) return v.map(jsonSafe);
  if (v && typeof v === 'object') {
    const o: Record<string, unknown> = {};
    for (const [k, x] of Object.entries(v)) o[k] = jsonSafe(x);
    return o;
  }
  return v;
}

export function overridesOf(p: LivePoint): MarginOverrides {
  const o: MarginOverrides = {
    fswHz: p.fswHz, deadTimeS: p.deadTimeS, vDriveV: p.vDriveV, vinV: p.vinV,
    // Rounded so the analysis cache sees repeated points, not a new one every tick.
    tjHsC: Math.round(p.tjHsC * 2) / 2, tjLsC: Math.round(p.tjLsC * 2) / 2,
    kp: p.kp, ki: p.ki,
  };
  if (p.loadROhm !== undefined && Number.isFinite(p.loadROhm)) o.loadROhm = p.loadROhm;
  if (p.loadIA !== undefined && Number.isFinite(p.loadIA)) o.loadIA = p.loadIA;
  return o;
}

/** Margins of the configured basis at a point; a point without a small-signal loop gives a reason instead. */
export function pointMargin(scenario: Scenario, p: LivePoint, pointsPerDecade = 10): PointMargin | { refused: string } {
  const ctx = marginContext(scenario);
  const o = overridesOf(p);
  try {
    const lp = linearPoint(ctx, o);
    const ev = evaluateLoop(ctx, lp, ctx.configuredBasis, o, pointsPerDecade);
    const m = ev.analysis.margins;
    return { pmDeg: m.pmDeg, gmDb: m.gmDb, crossoverHz: m.crossoverHz, phaseCrossoverHz: m.phaseCrossoverHz, stable: ev.analysis.stable };
  } catch (e) {
    if (e instanceof LinearizationError) return { refused: e.message };
    throw e;
  }
}

export interface PanelResult {
  basis: string;
  point: LivePoint;
  margins: PointMargin | { refused: string };
  bode: { freqHz: number[]; magDb: number[]; phaseDeg: number[] } | null;
  pmFloorDeg: number;
  gmFloorDb: number;
  warnings: string[];
}

export function floorsOf(scenario: Scenario): { pmFloorDeg: number; gmFloorDb: number } {
  return { pmFloorDeg: scenario.supervisor?.pmFloorDeg ?? 45, gmFloorDb: scenario.supervisor?.gmFloorDb ?? 6 };
}

/** Margins and Bode data at the live point (configured basis). */
export function stabilityAt(scenario: Scenario, p: LivePoint, bodePoints = 160): PanelResult {
  const ctx = marginContext(scenario);
  const margins = pointMargin(scenario, p, 20);
  let bode: PanelResult['bode'] = null;
  const warnings: string[] = [];
  if (!('refused' in margins)) {
    try {
      const b = marginsBode(ctx, overridesOf(p), bodePoints);
      const d = b.exact[ctx.configuredBasis];
      bode = { freqHz: d.freqHz, magDb: d.magDb, phaseDeg: d.phaseDeg };
    } catch (e) {
      if (!(e instanceof LinearizationError)) throw e;
      warnings.push(e.message);
    }
  }
  if (ctx.quasiStaticNote) warnings.push(ctx.quasiStaticNote);
  return { basis: ctx.configuredBasis, point: p, margins, bode, ...floorsOf(scenario), warnings };
}

/** Axes of the live margin map: the supervisor's actuator ranges when it has them, else a band around the point. */
export function mapSpecFor(scenario: Scenario, p: LivePoint, nF = 12, nV = 7): MapSpec {
  const sup = scenario.supervisor;
  let fLo = sup ? sup.fsw.minHz : p.fswHz / 3;
  let fHi = sup ? sup.fsw.maxHz : p.fswHz * 3;
  fLo = Math.min(fLo, p.fswHz);
  fHi = Math.max(fHi, p.fswHz);
  let vLo = sup?.gateDrive.enabled ? sup.gateDrive.minV : p.vDriveV * 0.6;
  let vHi = sup?.gateDrive.enabled ? sup.gateDrive.maxV : p.vDriveV * 1.2;
  vLo = Math.min(vLo, p.vDriveV);
  vHi = Math.max(vHi, p.vDriveV);
  const fswHz = Array.from({ length: nF }, (_, i) => fLo * Math.pow(fHi / fLo, i / (nF - 1)));
  const vDriveV = Array.from({ length: nV }, (_, i) => vLo + ((vHi - vLo) * i) / (nV - 1));
  return { fswHz, vDriveV };
}

/** One row of the map (fixed gate drive, every frequency): phase margin in degrees, NaN where refused. */
export function mapRow(scenario: Scenario, p: LivePoint, spec: MapSpec, row: number): { pmDeg: number[]; gmDb: number[] } {
  const pmDeg: number[] = [];
  const gmDb: number[] = [];
  for (const f of spec.fswHz) {
    if (p.deadTimeS * f >= 0.25) {
      pmDeg.push(NaN);
      gmDb.push(NaN);
      continue;
    }
    const m = pointMargin(scenario, { ...p, fswHz: f, vDriveV: spec.vDriveV[row] }, 8);
    if ('refused' in m) {
      pmDeg.push(NaN);
      gmDb.push(NaN);
    } else {
      pmDeg.push(m.stable ? m.pmDeg : Math.min(m.pmDeg, 0));
      gmDb.push(m.gmDb);
    }
  }
  return { pmDeg, gmDb };
}

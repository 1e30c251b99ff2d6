/**
 * PI gain suggestion: the (kp, ki) in the configured basis that maximize the worst-case
 * crossover frequency while the loop stays stable and holds a phase-margin and a gain-margin
 * floor at every corner of a switching-frequency band × load set.
 *
 * Search: for a fixed ratio ρ = ki/kp (the PI zero), scaling both gains by k scales L by k, so
 * the crossover rises with k and the gain margin falls by exactly 20·log10 k: the largest
 * feasible k is found by bisection on log k. ρ is scanned on a log grid and refined by
 * golden-section search around the best. Each corner is linearized once; only the loop is
 * rebuilt per candidate.
 */
import type { PiBasis } from '../control/pi.ts';
import type { Scenario } from '../scenario/parse.ts';
import { samplePeriodS } from '../sim/system.ts';
import { type LinearPoint, type MarginContext, type MarginOverrides, evaluateLoop, gainsIn, linearPoint, loadPathOf, marginContext } from './marginContext.ts';

export interface SuggestOptions {
  readonly fswBandHz: readonly [number, number];
  /** Values of the scenario's load field (buck.load.rOhm / .iA, halfBridge.load.rOhm); default: the scenario's load. */
  readonly loads?: readonly number[];
  readonly pmFloorDeg?: number;
  readonly gmFloorDb?: number;
  /** Frequencies checked across the band, geometrically spaced, ends included (default 3). */
  readonly fswSteps?: number;
  /** Default: the configured basis. */
  readonly basis?: PiBasis;
}

export interface CornerMargins {
  readonly fswHz: number;
  readonly load: number;
  /** Lowest gain crossover (the loop's bandwidth); NaN when |L| never reaches 1. */
  readonly crossoverHz: number;
  readonly pmDeg: number;
  readonly gmDb: number;
  readonly stable: boolean;
  readonly holds: boolean;
}

export interface GainSuggestion {
  readonly basis: PiBasis;
  readonly loadField: string;
  readonly pmFloorDeg: number;
  readonly gmFloorDb: number;
  /** NaN when no gains hold the floors. */
  readonly kp: number;
  readonly ki: number;
  readonly worstCrossoverHz: number;
  readonly corners: readonly CornerMargins[];
  readonly binding: { readonly fswHz: number; readonly load: number; readonly constraint: 'phaseMargin' | 'gainMargin' | 'stability' } | undefined;
  /** The scenario's own gains at the same corners. */
  readonly current: { readonly kp: number; readonly ki: number; readonly corners: readonly CornerMargins[]; readonly holds: boolean };
  readonly explanation: readonly string[];
}

interface Corner { fswHz: number; load: number; o: MarginOverrides; lp: LinearPoint }

function evalCorners(ctx: MarginContext, corners: readonly Corner[], basis: PiBasis, kp: number, ki: number, pmFloor: number, gmFloor: number): CornerMargins[] {
  return corners.map((c) => {
    const ev = evaluateLoop(ctx, c.lp, basis, c.o, 10, { kp, ki });
    const m = ev.analysis.margins;
    const stable = ev.analysis.stable;
    // The bandwidth: the lowest gain crossover (|L| > 1 from DC up to it). A resonance peak poking
    // above 0 dB adds crossings higher up; maximizing those would reward a loop with no low-frequency gain.
    const bw = m.gainCrossingsHz.length > 0 ? m.gainCrossingsHz[0] : NaN;
    return { fswHz: c.fswHz, load: c.load, crossoverHz: bw, pmDeg: m.pmDeg, gmDb: m.gmDb, stable, holds: stable && m.pmDeg >= pmFloor && m.gmDb >= gmFloor };
  });
}

const worst = (cs: readonly CornerMargins[]): number => Math.min(...cs.map((c) => (Number.isNaN(c.crossoverHz) ? 0 : c.crossoverHz)));

export function suggestGains(scenario: Scenario, opts: SuggestOptions): GainSuggestion {
  const [lo, hi] = opts.fswBandHz;
  if (!(lo > 0 && hi >= lo) || !Number.isFinite(hi)) throw new RangeError(`suggestGains: fswBandHz must be [lo, hi] with 0 < lo ≤ hi, got [${lo}, ${hi}]`);
  const pmFloor = opts.pmFloorDeg ?? scenario.supervisor?.pmFloorDeg ?? 45;
  const gmFloor = opts.gmFloorDb ?? scenario.supervisor?.gmFloorDb ?? 6;
  const ctx = marginContext(scenario);
  const basis = opts.basis ?? ctx.configuredBasis;
  const loadField = loadPathOf(scenario);
  const loadKey: 'loadROhm' | 'loadIA' = loadField === 'buck.load.iA' ? 'loadIA' : 'loadROhm';
  const nominalLoad = scenario.topology === 'halfBridge' ? scenario.halfBridge!.load.rOhm : (scenario.buck!.load as Record<string, number>)[loadField === 'buck.load.iA' ? 'iA' : 'rOhm'];
  const loads = opts.loads && opts.loads.length > 0 ? opts.loads : [nominalLoad];
  for (const l of loads) if (!(l > 0 || (loadKey === 'loadIA' && l >= 0))) throw new RangeError(`suggestGains: load values must be > 0, got ${l}`);
  const nF = lo === hi ? 1 : Math.max(2, opts.fswSteps ?? 3);
  const fsws = Array.from({ length: nF }, (_, i) => (nF === 1 ? lo : lo * Math.pow(hi / lo, i / (nF - 1))));
  const corners: Corner[] = [];
  for (const f of fsws) for (const l of loads) {
    const o: MarginOverrides = { fswHz: f, [loadKey]: l };
    corners.push({ fswHz: f, load: l, o, lp: linearPoint(ctx, o) });
  }
  const cur = gainsIn(ctx, basis);
  const currentCorners = evalCorners(ctx, corners, basis, cur.kp, cur.ki, pmFloor, gmFloor);

  // Gain scale: 1/|DC gain| of the plant at the first corner; ρ in the basis's own ki/kp units.
  const l0 = corners[0].lp.lin;
  const a = l0.a;
  const det = l0.n === 2 ? a[0] * a[3] - a[1] * a[2] : a[0];
  const dc = l0.n === 2 ? Math.abs(l0.d - (l0.c[0] * (a[3] * l0.b[0] - a[1] * l0.b[1]) + l0.c[1] * (-a[2] * l0.b[0] + a[0] * l0.b[1])) / det) : Math.abs(l0.d - (l0.c[0] * l0.b[0]) / a[0]);
  const kScale = dc > 0 && Number.isFinite(dc) ? 1 / dc : 1;
  const perSample = basis === 'perSample';
  const rhoOf = (omegaZ: number): number => (perSample ? omegaZ * ctx.nominalTsS : omegaZ);
  const fNyqMin = Math.min(...fsws.map((f) => 0.5 / samplePeriodS(ctx.sys, f)));

  const feasible = (kp: number, rho: number): CornerMargins[] | undefined => {
    const cs = evalCorners(ctx, corners, basis, kp, kp * rho, pmFloor, gmFloor);
    return cs.every((c) => c.holds) ? cs : undefined;
  };
  const bestForRho = (rho: number): { kp: number; cs: CornerMargins[] } | undefined => {
    let kLo = kScale * 1e-4;
    let csLo = feasible(kLo, rho);
    if (!csLo) return undefined;
    let kHi = kLo * 10;
    let tries = 0;
    while (feasible(kHi, rho) && tries++ < 12) { kLo = kHi; kHi *= 10; }
    csLo = feasible(kLo, rho)!;
    for (let it = 0; it < 22; it++) {
      const m = Math.sqrt(kLo * kHi);
      const cs = feasible(m, rho);
      if (cs) { kLo = m; csLo = cs; } else kHi = m;
    }
    return { kp: kLo, cs: csLo };
  };
  // PI zero from 1e-4 to 0.5 of the lowest Nyquist frequency (in Hz: fNyq·10^−4 … fNyq·0.5).
  const zeros: number[] = [];
  for (let i = 0; i <= 24; i++) zeros.push(2 * Math.PI * fNyqMin * Math.pow(10, -4 + (i * Math.log10(5e3)) / 24));
  let best: { rho: number; kp: number; cs: CornerMargins[]; score: number } | undefined;
  for (const wz of zeros) {
    const rho = rhoOf(wz);
    const r = bestForRho(rho);
    if (r && (!best || worst(r.cs) > best.score)) best = { rho, kp: r.kp, cs: r.cs, score: worst(r.cs) };
  }
  if (best) {
    // Golden-section refinement on log ρ within one grid step either side.
    const step = Math.log10(5e3) / 24;
    let x0 = Math.log10(best.rho) - step;
    let x3 = Math.log10(best.rho) + step;
    const g = 0.6180339887498949;
    const score = (x: number): number => {
      const r = bestForRho(Math.pow(10, x));
      if (r && worst(r.cs) > best!.score) best = { rho: Math.pow(10, x), kp: r.kp, cs: r.cs, score: worst(r.cs) };
      return r ? worst(r.cs) : 0;
    };
    let x1 = x3 - g * (x3 - x0);
    let x2 = x0 + g * (x3 - x0);
    let s1 = score(x1);
    let s2 = score(x2);
    for (let it = 0; it < 12; it++) {
      if (s1 >= s2) { x3 = x2; x2 = x1; s2 = s1; x1 = x3 - g * (x3 - x0); s1 = score(x1); }
      else { x0 = x1; x1 = x2; s1 = s2; x2 = x0 + g * (x3 - x0); s2 = score(x2); }
    }
  }
  const unit = perSample ? 'per sample' : '1/s';
  const fmtHz = (x: number): string => (x >= 1e3 ? `${(x / 1e3).toPrecision(3)} kHz` : `${x.toPrecision(3)} Hz`);
  const loadUnit = loadKey === 'loadIA' ? 'A' : 'Ω';
  const curHolds = currentCorners.every((c) => c.holds);
  const explanation: string[] = [];
  explanation.push(`checked ${corners.length} corners: fsw ${fsws.map(fmtHz).join(', ')} × ${loadField} ${loads.join(', ')} ${loadUnit}; floors PM ≥ ${pmFloor}°, GM ≥ ${gmFloor} dB, closed-loop poles inside the unit circle`);
  explanation.push(
    basis === 'continuous'
      ? 'continuous basis: the coefficients are recomputed for each sample period, so the loop keeps its shape across the band (only the delay lag grows as fsw falls)'
      : 'per-sample basis: the coefficients stay fixed, so the effective integral gain ki/Ts grows with fsw — the highest frequency is usually the binding corner',
  );
  if (!best) {
    explanation.push('no PI gains hold both floors at every corner: narrow the band, relax the floors, or add a sensor filter / phase lead');
    return { basis, loadField, pmFloorDeg: pmFloor, gmFloorDb: gmFloor, kp: NaN, ki: NaN, worstCrossoverHz: NaN, corners: [], binding: undefined, current: { kp: cur.kp, ki: cur.ki, corners: currentCorners, holds: curHolds }, explanation };
  }
  const kp = best.kp;
  const ki = best.kp * best.rho;
  const cs = best.cs;
  // The binding corner: the least slack against its floor (in units of the floor's own scale).
  let binding: GainSuggestion['binding'];
  let slackMin = Infinity;
  for (const c of cs) {
    const sPm = (c.pmDeg - pmFloor) / 10;
    const sGm = (c.gmDb - gmFloor) / 2;
    if (sPm < slackMin) { slackMin = sPm; binding = { fswHz: c.fswHz, load: c.load, constraint: 'phaseMargin' }; }
    if (sGm < slackMin) { slackMin = sGm; binding = { fswHz: c.fswHz, load: c.load, constraint: 'gainMargin' }; }
  }
  // What limits a slightly larger gain: the first corner to fail at 1.01·k.
  const over = evalCorners(ctx, corners, basis, kp * 1.01, ki * 1.01, pmFloor, gmFloor).find((c) => !c.holds);
  if (over) binding = { fswHz: over.fswHz, load: over.load, constraint: !over.stable ? 'stability' : over.pmDeg < pmFloor ? 'phaseMargin' : 'gainMargin' };
  const wz = perSample ? best.rho / ctx.nominalTsS : best.rho;
  explanation.push(`suggested kp = ${kp.toPrecision(4)}, ki = ${ki.toPrecision(4)} ${unit} (PI zero at ${fmtHz(wz / (2 * Math.PI))}${perSample ? ` at the nominal ${fmtHz(1 / ctx.nominalTsS)} sampling` : ''}): worst-case crossover ${fmtHz(best.score)}`);
  if (binding) {
    const c = cs.find((x) => x.fswHz === binding!.fswHz && x.load === binding!.load)!;
    const what = binding.constraint === 'phaseMargin' ? `phase margin ${c.pmDeg.toFixed(1)}° against the ${pmFloor}° floor` : binding.constraint === 'gainMargin' ? `gain margin ${c.gmDb.toFixed(1)} dB against the ${gmFloor} dB floor` : 'closed-loop stability';
    explanation.push(`binding corner: fsw ${fmtHz(binding.fswHz)}, ${loadField} ${binding.load} ${loadUnit} — ${what}${over ? '; 1 % more gain breaks it' : ''}`);
  }
  explanation.push(curHolds ? `the scenario's gains (kp ${cur.kp}, ki ${cur.ki} ${unit}) already hold the floors; worst-case crossover ${fmtHz(worst(currentCorners))}` : `the scenario's gains (kp ${cur.kp}, ki ${cur.ki} ${unit}) fail the floors at ${currentCorners.filter((c) => !c.holds).length} of ${currentCorners.length} corners`);
  return { basis, loadField, pmFloorDeg: pmFloor, gmFloorDb: gmFloor, kp, ki, worstCrossoverHz: best.score, corners: cs, binding, current: { kp: cur.kp, ki: cur.ki, corners: currentCorners, holds: curHolds }, explanation };
}

/**
 * Loop margins of a scenario's inner loop: at its operating point for both gain bases, Bode data,
 * and margin maps over one or two parameters. The configured basis uses the scenario's gains; the
 * other basis uses the equivalent gains at the scenario's own switching frequency (same kp, same
 * integral per sample), so a map over fsw shows what each basis does as the frequency moves:
 * continuous-basis gains are rescaled with the sample period, per-sample gains are not.
 *
 * Pipeline: operating point → linearize → exact discrete loop → margins and closed-loop poles.
 */
import type { PiBasis } from '../control/pi.ts';
import { ScenarioError, type ScenarioProblem } from '../scenario/errors.ts';
import { type Scenario, withOverrides } from '../scenario/parse.ts';
import { samplePeriodS } from '../sim/system.ts';
import { BASES, type LinearPoint, type LoopEvaluation, type MarginContext, type MarginOverrides, evaluateLoop, linearPoint, marginContext } from './marginContext.ts';
import { LinearizationError } from './linearize.ts';
import type { StabilityMargins } from './stabilityMargins.ts';
import { type BodeData, approxLoopGainAt, bode, logGridHz, loopGainAt } from './loopGain.ts';

export { suggestGains, type GainSuggestion, type SuggestOptions } from './suggestGains.ts';
export { stableFswBand, type StableBand, type StableBandOptions } from './stableBand.ts';
export { BASES, type MarginContext, type MarginOverrides, loadPathOf, marginContext } from './marginContext.ts';

export interface BasisMargins extends StabilityMargins {
  readonly basis: PiBasis;
  readonly configured: boolean;
  readonly kp: number;
  /** In the basis's own units: 1/s (continuous) or per sample. */
  readonly ki: number;
  readonly b0: number;
  readonly b1: number;
  readonly kiEquivalentPerS: number;
  readonly maxPoleAbs: number;
  readonly poles: ReadonlyArray<{ re: number; im: number }>;
  /** Verdict from the closed-loop poles (all |λ| < 1). */
  readonly stable: boolean;
  readonly nyquistUnstable: number;
  readonly marginsAgree: boolean;
}

export interface PlantSummary {
  readonly stateNames: readonly string[];
  readonly a: number[];
  readonly b: number[];
  readonly c: number[];
  readonly d: number;
  /** Control-to-output DC gain G(0) = D − C·A⁻¹·B. */
  readonly dcGain: number;
  /** Natural frequency and quality factor of a two-state plant (NaN otherwise). */
  readonly f0Hz: number;
  readonly q: number;
  /** Corner frequencies of a two-state plant with real poles (Q ≤ ½), else empty. */
  readonly realPolesHz: readonly number[];
  readonly equilibriumResidual: number;
  readonly stepDiscrepancy: number;
}

export interface MarginsResult {
  readonly scenario: string;
  readonly topology: 'buck' | 'halfBridge';
  readonly regulated: 'vOutV' | 'iA';
  readonly point: {
    readonly fswHz: number;
    readonly tsS: number;
    readonly deadTimeS: number;
    readonly vDriveV: number;
    readonly duty: number;
    readonly y: number;
    readonly iMeanA: number;
    readonly vOutV: number;
    readonly vBusV: number;
    readonly tjHsC: number;
    readonly tjLsC: number;
    readonly thermal: 'ok' | 'fixed' | 'unconverged';
  };
  readonly loop: { readonly delaySamples: number; readonly sensorFilterHz: number | null; readonly nominalFswHz: number; readonly nominalTsS: number };
  readonly plant: PlantSummary;
  readonly configuredBasis: PiBasis;
  readonly bases: Readonly<Record<PiBasis, BasisMargins>>;
  readonly warnings: string[];
}

function plantSummary(lp: LinearPoint): PlantSummary {
  const l = lp.lin;
  let dc = NaN;
  let f0 = NaN;
  let q = NaN;
  let realPolesHz: number[] = [];
  if (l.n === 2) {
    const [a11, a12, a21, a22] = l.a;
    const det = a11 * a22 - a12 * a21;
    // −C·A⁻¹·B with A⁻¹ = adj/det
    const x1 = (a22 * l.b[0] - a12 * l.b[1]) / det;
    const x2 = (-a21 * l.b[0] + a11 * l.b[1]) / det;
    dc = l.d - (l.c[0] * x1 + l.c[1] * x2);
    const tr = a11 + a22;
    if (det > 0) {
      f0 = Math.sqrt(det) / (2 * Math.PI);
      q = Math.sqrt(det) / -tr;
    }
    const disc = tr * tr - 4 * det;
    if (disc >= 0) realPolesHz = [(-tr - Math.sqrt(disc)) / 2, (-tr + Math.sqrt(disc)) / 2].map((p) => Math.abs(p) / (2 * Math.PI)).sort((a, b) => a - b);
  } else if (l.n === 1) {
    dc = l.d - (l.c[0] * l.b[0]) / l.a[0];
    realPolesHz = [Math.abs(l.a[0]) / (2 * Math.PI)];
  }
  return {
    stateNames: l.stateNames, a: [...l.a], b: [...l.b], c: [...l.c], d: l.d, dcGain: dc, f0Hz: f0, q, realPolesHz,
    equilibriumResidual: l.equilibriumResidual, stepDiscrepancy: l.stepDiscrepancy,
  };
}

function basisMargins(ev: LoopEvaluation, configured: boolean): BasisMargins {
  const m = ev.analysis.margins;
  return {
    basis: ev.basis, configured, kp: ev.kp, ki: ev.ki, b0: ev.b0, b1: ev.b1, kiEquivalentPerS: ev.kiEquivalentPerS,
    crossoverHz: m.crossoverHz, pmDeg: m.pmDeg, phaseCrossoverHz: m.phaseCrossoverHz, gmDb: m.gmDb, delayMarginS: m.delayMarginS,
    gainCrossingsHz: m.gainCrossingsHz, phaseCrossingsHz: m.phaseCrossingsHz,
    maxPoleAbs: ev.analysis.poles.maxAbs,
    poles: ev.analysis.poles.re.map((re, i) => ({ re, im: ev.analysis.poles.im[i] })),
    stable: ev.analysis.stable, nyquistUnstable: ev.analysis.nyquistUnstable, marginsAgree: ev.analysis.marginsAgree,
  };
}

function contextOf(src: Scenario | MarginContext): MarginContext {
  return 'cache' in src && 'sys' in src ? (src as MarginContext) : marginContext(src as Scenario);
}

/**
 * Margins at the scenario's operating point (with overrides) for both gain bases. Throws
 * LinearizationError when the point has no small-signal loop (runaway, lost regulation).
 */
export function marginsAt(src: Scenario | MarginContext, o: MarginOverrides = {}): MarginsResult {
  const ctx = contextOf(src);
  const lp = linearPoint(ctx, o);
  const evs = BASES.map((b) => evaluateLoop(ctx, lp, b, o));
  const warnings = new Set<string>(lp.lin.warnings);
  if (ctx.quasiStaticNote) warnings.add(ctx.quasiStaticNote);
  if (lp.thermalStatus === 'unconverged') warnings.add('the electro-thermal operating point did not converge; margins use the last iterate');
  for (const ev of evs) for (const w of ev.analysis.warnings) warnings.add(`${ev.basis}: ${w}`);
  const ep = lp.ep;
  const bases = Object.fromEntries(evs.map((ev) => [ev.basis, basisMargins(ev, ev.basis === ctx.configuredBasis)])) as Record<PiBasis, BasisMargins>;
  const filter = o.sensorFilterHz === null ? null : (o.sensorFilterHz ?? ctx.sys.sensorFilterHz ?? null);
  return {
    scenario: ctx.scenario.name,
    topology: ep.topology,
    regulated: ep.topology === 'buck' ? 'vOutV' : 'iA',
    point: {
      fswHz: lp.knobs.fswHz, tsS: evs[0].tsS, deadTimeS: lp.knobs.deadTimeS, vDriveV: lp.knobs.vDriveV, duty: ep.duty, y: lp.lin.y0,
      iMeanA: ep.iMeanA, vOutV: ep.vOutV, vBusV: ep.vBusV, tjHsC: lp.tjHsC, tjLsC: lp.tjLsC, thermal: lp.thermalStatus,
    },
    loop: { delaySamples: o.delaySamples ?? ctx.sys.delaySamples, sensorFilterHz: filter, nominalFswHz: ctx.scenario.pwm.fswHz, nominalTsS: ctx.nominalTsS },
    plant: plantSummary(lp),
    configuredBasis: ctx.configuredBasis,
    bases,
    warnings: [...warnings],
  };
}

export interface MarginsBode {
  readonly freqHz: number[];
  /** Exact discrete loop per basis. */
  readonly exact: Readonly<Record<PiBasis, BodeData>>;
  /** Continuous approximation (plant(jω)·e^{−jω(N+½)Ts}) per basis. */
  readonly approx: Readonly<Record<PiBasis, BodeData>>;
}

/** Bode data of the loop at a point for both bases, on a log grid from fMinHz (default fNyquist·1e−4) to the Nyquist frequency. */
export function marginsBode(src: Scenario | MarginContext, o: MarginOverrides = {}, points = 400, fMinHz?: number): MarginsBode {
  const ctx = contextOf(src);
  const lp = linearPoint(ctx, o);
  const fNyq = 0.5 / samplePeriodS(ctx.sys, lp.knobs.fswHz);
  const grid = logGridHz(fMinHz ?? fNyq * 1e-4, fNyq, points);
  const exact = {} as Record<PiBasis, BodeData>;
  const approx = {} as Record<PiBasis, BodeData>;
  for (const b of BASES) {
    const ev = evaluateLoop(ctx, lp, b, o);
    exact[b] = bode((w) => loopGainAt(ev.loop, w), grid);
    approx[b] = bode((w) => approxLoopGainAt(ev.loop, w), grid);
  }
  return { freqHz: grid, exact, approx };
}

// ---------------------------------------------------------------- maps

export interface MapAxis {
  readonly path: string;
  readonly values: readonly number[];
}

export interface MapCellBasis {
  readonly crossoverHz: number;
  readonly pmDeg: number;
  readonly gmDb: number;
  readonly phaseCrossoverHz: number;
  readonly maxPoleAbs: number;
  readonly stable: boolean;
}

export interface MapCell {
  /** One value per axis. */
  readonly values: readonly number[];
  readonly status: 'ok' | 'refused';
  readonly reason?: string;
  /** Relative Jacobian discrepancy between the two linearization steps (> 1e−3: not smooth here). */
  readonly stepDiscrepancy?: number;
  readonly bases?: Readonly<Record<PiBasis, MapCellBasis>>;
}

export interface MarginMap {
  readonly scenario: string;
  readonly configuredBasis: PiBasis;
  readonly axes: readonly MapAxis[];
  /** Row-major: the first axis varies slowest. */
  readonly cells: readonly MapCell[];
}

/** Scenario paths evaluated directly (no re-parse per cell), and the override each sets. */
export function fastPathOf(scenario: Scenario, path: string): keyof MarginOverrides | undefined {
  switch (path) {
    case 'pwm.fswHz': return 'fswHz';
    case 'pwm.deadTimeS': return 'deadTimeS';
    case 'gateDrive.vDriveV': return 'vDriveV';
    case 'control.kp': return 'kp';
    case 'control.ki': return 'ki';
    case 'control.delaySamples': return 'delaySamples';
    case 'control.sensorFilterHz': return 'sensorFilterHz';
    case 'buck.vinV': return scenario.topology === 'buck' ? 'vinV' : undefined;
    case 'halfBridge.vdcV': return scenario.topology === 'halfBridge' ? 'vinV' : undefined;
    case 'buck.load.rOhm': return scenario.buck && 'rOhm' in scenario.buck.load ? 'loadROhm' : undefined;
    case 'buck.load.iA': return scenario.buck && 'iA' in scenario.buck.load ? 'loadIA' : undefined;
    case 'halfBridge.load.rOhm': return scenario.topology === 'halfBridge' ? 'loadROhm' : undefined;
    default: return undefined;
  }
}

/**
 * Every axis value (and every corner, for constraints coupling two fields) is checked against the
 * schema once with `withOverrides`; a rejected value is reported up front, no partial map is made.
 */
function validateAxes(scenario: Scenario, axes: readonly MapAxis[]): void {
  const problems: ScenarioProblem[] = [];
  const tryPatch = (patch: Record<string, number>): void => {
    try {
      withOverrides(scenario, patch);
    } catch (e) {
      if (!(e instanceof ScenarioError)) throw e;
      const at = Object.entries(patch).map(([k, v]) => `${k} = ${v}`).join(', ');
      for (const p of e.problems) if (!problems.some((q) => q.path === p.path)) problems.push({ path: p.path, message: `${p.message} (at ${at})` });
    }
  };
  for (const ax of axes) {
    if (ax.values.length === 0) problems.push({ path: ax.path, message: 'a map axis needs at least one value' });
    for (const v of new Set(ax.values)) {
      if (!Number.isFinite(v)) problems.push({ path: ax.path, message: `map values must be finite numbers, got ${v}` });
      else tryPatch({ [ax.path]: v });
    }
  }
  if (axes.length === 2 && problems.length === 0) {
    const [a, b] = axes;
    for (const va of [Math.min(...a.values), Math.max(...a.values)])
      for (const vb of [Math.min(...b.values), Math.max(...b.values)]) tryPatch({ [a.path]: va, [b.path]: vb });
  }
  if (problems.length > 0) throw new ScenarioError(problems);
}

export interface MarginMapOptions {
  /** Base overrides applied to every cell (e.g. fixed temperatures). */
  readonly overrides?: MarginOverrides;
  /** Grid density of the margin search (default 8 per decade, refined adaptively). */
  readonly pointsPerDecade?: number;
}

/** Margins over one or two scenario parameters, both bases per cell. */
export function marginMap(scenario: Scenario, axes: readonly MapAxis[], opts: MarginMapOptions = {}): MarginMap {
  if (axes.length < 1 || axes.length > 2) throw new RangeError(`a margin map has one or two axes, got ${axes.length}`);
  if (axes.length === 2 && axes[0].path === axes[1].path) throw new RangeError(`the two map axes must differ, got ${axes[0].path} twice`);
  validateAxes(scenario, axes);
  const fast = axes.map((a) => fastPathOf(scenario, a.path));
  const ctxCache = new Map<string, MarginContext>();
  const ctxFor = (vals: readonly number[]): MarginContext => {
    const patch: Record<string, number> = {};
    axes.forEach((a, i) => { if (!fast[i]) patch[a.path] = vals[i]; });
    const key = JSON.stringify(patch);
    let c = ctxCache.get(key);
    if (!c) {
      c = marginContext(Object.keys(patch).length ? withOverrides(scenario, patch) : scenario);
      ctxCache.set(key, c);
    }
    return c;
  };
  const ppd = opts.pointsPerDecade ?? 8;
  const cells: MapCell[] = [];
  const evalCell = (vals: number[]): MapCell => {
    const o: MarginOverrides = { ...opts.overrides };
    axes.forEach((_, i) => { const k = fast[i]; if (k) (o as Record<string, number>)[k] = vals[i]; });
    const ctx = ctxFor(vals);
    let lp: LinearPoint;
    try {
      lp = linearPoint(ctx, o, [], false);
    } catch (e) {
      if (e instanceof LinearizationError) return { values: vals, status: 'refused', reason: e.message };
      throw e;
    }
    const bases = {} as Record<PiBasis, MapCellBasis>;
    for (const b of BASES) {
      const ev = evaluateLoop(ctx, lp, b, o, ppd);
      const m = ev.analysis.margins;
      bases[b] = { crossoverHz: m.crossoverHz, pmDeg: m.pmDeg, gmDb: m.gmDb, phaseCrossoverHz: m.phaseCrossoverHz, maxPoleAbs: ev.analysis.poles.maxAbs, stable: ev.analysis.stable };
    }
    return { values: vals, status: 'ok', stepDiscrepancy: lp.lin.stepDiscrepancy, bases };
  };
  if (axes.length === 1) for (const v of axes[0].values) cells.push(evalCell([v]));
  else for (const va of axes[0].values) for (const vb of axes[1].values) cells.push(evalCell([va, vb]));
  return { scenario: scenario.name, configuredBasis: marginContext(scenario).configuredBasis, axes, cells };
}

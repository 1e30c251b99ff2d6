/**
 * Everything the margin analysis of one scenario reuses: the plant and thermal network, the
 * controller configuration exactly as the simulator builds it (buildSystem), and a cache of
 * linearized operating points keyed by the knobs and inputs that define them. Maps, gain
 * searches and the supervisor's stable band evaluate cells through `evaluateLoop` without
 * re-parsing the scenario: knobs (fsw, dead time, gate drive), load, source voltage and the loop
 * settings (gains, basis, delay, filter) are applied directly.
 */
import { type PiBasis, piCoefficients, piEquivalentKi } from '../control/pi.ts';
import { electricalPoint, type ElectricalPoint } from '../model/electrical.ts';
import type { BuckParams, HalfBridgeParams, Knobs, Plant } from '../model/plant.ts';
import type { Scenario } from '../scenario/parse.ts';
import { type SimSystem, buildSystem, samplePeriodS } from '../sim/system.ts';
import { type DisturbanceName, type LinearPlant, LinearizationError, linearizeAtPoint } from './linearize.ts';
import { type LoopAnalysis, analyzeLoop } from './loopAnalysis.ts';
import { type DiscreteLoop, discreteLoop } from './loopGain.ts';
import { type PointContext, operatingPoint, pointContextOn } from './operatingPoint.ts';

export const BASES: readonly PiBasis[] = ['continuous', 'perSample'];

/** What a margin evaluation may change relative to the scenario (all optional). */
export interface MarginOverrides {
  fswHz?: number;
  deadTimeS?: number;
  vDriveV?: number;
  /** Buck resistive load, or half-bridge load resistance. */
  loadROhm?: number;
  /** Buck current load. */
  loadIA?: number;
  /** Buck input voltage, or half-bridge DC source voltage. */
  vinV?: number;
  /** Fixed junction temperatures instead of the electro-thermal steady state. */
  tjHsC?: number;
  tjLsC?: number;
  /** Gains in the configured basis's units. */
  kp?: number;
  ki?: number;
  delaySamples?: number;
  /** null removes the filter. */
  sensorFilterHz?: number | null;
}

export interface MarginContext {
  readonly scenario: Scenario;
  readonly point: PointContext;
  readonly sys: SimSystem;
  /** Sample period at the scenario's own switching frequency: per-sample and continuous gains are equivalent there. */
  readonly nominalTsS: number;
  readonly configuredBasis: PiBasis;
  /** Half-bridge with a sine reference: linearized at the reference peak (quasi-static). */
  readonly quasiStaticNote: string | undefined;
  readonly cache: Map<string, LinearPoint | LinearizationError>;
}

export interface LinearPoint {
  readonly lin: LinearPlant;
  readonly ep: ElectricalPoint;
  readonly knobs: Knobs;
  readonly tjHsC: number;
  readonly tjLsC: number;
  readonly thermalStatus: 'ok' | 'fixed' | 'unconverged';
}

const contexts = new WeakMap<Scenario, MarginContext>();
/** Points kept per scenario: enough for the supervisor's band scans and a gain search; maps bypass the cache. */
const CACHE_MAX = 1024;

/** The (cached) margin context of a scenario. Throws ScenarioError when it has no `control` section. */
export function marginContext(scenario: Scenario): MarginContext {
  let ctx = contexts.get(scenario);
  if (ctx) return ctx;
  const sys = buildSystem(scenario);
  let plant = sys.plant;
  let note: string | undefined;
  if (plant.conv.kind === 'halfBridge' && plant.conv.reference.kind === 'sine') {
    const r = plant.conv.reference;
    const peak = r.offsetA + (r.offsetA >= 0 ? 1 : -1) * r.amplitudeA;
    plant = { ...plant, conv: { ...plant.conv, reference: { kind: 'dc', iA: peak } } };
    note = `sine reference: no equilibrium, so the loop is linearized quasi-statically at the reference peak ${peak} A (the fundamental is far below the loop's crossover)`;
  }
  ctx = {
    scenario,
    point: pointContextOn(scenario, plant, sys.net),
    sys,
    nominalTsS: samplePeriodS(sys, scenario.pwm.fswHz),
    configuredBasis: sys.pi.basis,
    quasiStaticNote: note,
    cache: new Map(),
  };
  contexts.set(scenario, ctx);
  return ctx;
}

/** The scenario's load as a map/suggestion axis: buck load resistance or current, half-bridge load resistance. */
export function loadPathOf(scenario: Scenario): 'buck.load.rOhm' | 'buck.load.iA' | 'halfBridge.load.rOhm' {
  if (scenario.topology === 'halfBridge') return 'halfBridge.load.rOhm';
  return scenario.buck && 'iA' in scenario.buck.load ? 'buck.load.iA' : 'buck.load.rOhm';
}

function plantWith(plant: Plant, o: MarginOverrides): Plant {
  if (o.loadROhm === undefined && o.loadIA === undefined && o.vinV === undefined) return plant;
  const c = plant.conv;
  if (c.kind === 'buck') {
    let load = c.load;
    if (o.loadROhm !== undefined) load = { rOhm: o.loadROhm };
    if (o.loadIA !== undefined) load = { iA: o.loadIA };
    const conv: BuckParams = { ...c, load, vinV: o.vinV ?? c.vinV };
    return { ...plant, conv };
  }
  if (o.loadIA !== undefined) throw new LinearizationError('loadIA applies to a buck with a current load only');
  const conv: HalfBridgeParams = { ...c, loadROhm: o.loadROhm ?? c.loadROhm, vdcV: o.vinV ?? c.vdcV };
  return { ...plant, conv };
}

function pointKey(k: Knobs, o: MarginOverrides, dist: readonly string[]): string {
  return `${k.fswHz}|${k.deadTimeS}|${k.vDriveV}|${o.loadROhm}|${o.loadIA}|${o.vinV}|${o.tjHsC}|${o.tjLsC}|${dist.join(',')}`;
}

/**
 * The linearized steady operating point at the overrides (cached unless `useCache` is false:
 * maps visit each point once). Throws LinearizationError when there is none: thermal runaway,
 * lost regulation, or not an equilibrium.
 */
export function linearPoint(ctx: MarginContext, o: MarginOverrides = {}, disturbances: readonly DisturbanceName[] = [], useCache = true): LinearPoint {
  const base = ctx.point.plant.knobs;
  const knobs: Knobs = { fswHz: o.fswHz ?? base.fswHz, deadTimeS: o.deadTimeS ?? base.deadTimeS, vDriveV: o.vDriveV ?? base.vDriveV };
  if (!useCache) return computeLinearPoint(ctx, knobs, o, disturbances);
  const key = pointKey(knobs, o, disturbances);
  const hit = ctx.cache.get(key);
  if (hit instanceof LinearizationError) throw hit;
  if (hit) return hit;
  let result: LinearPoint | LinearizationError;
  try {
    result = computeLinearPoint(ctx, knobs, o, disturbances);
  } catch (e) {
    if (!(e instanceof LinearizationError)) throw e;
    result = e;
  }
  if (ctx.cache.size >= CACHE_MAX) ctx.cache.clear();
  ctx.cache.set(key, result);
  if (result instanceof LinearizationError) throw result;
  return result;
}

function computeLinearPoint(ctx: MarginContext, knobs: Knobs, o: MarginOverrides, disturbances: readonly DisturbanceName[]): LinearPoint {
  const plant = plantWith(ctx.point.plant, o);
  let ep: ElectricalPoint;
  let tjH: number;
  let tjL: number;
  let thermalStatus: LinearPoint['thermalStatus'];
  if (o.tjHsC !== undefined || o.tjLsC !== undefined) {
    tjH = o.tjHsC ?? o.tjLsC!;
    tjL = o.tjLsC ?? o.tjHsC!;
    ep = electricalPoint(plant, knobs, tjH, tjL);
    thermalStatus = 'fixed';
  } else {
    const op = operatingPoint({ ...ctx.point, plant }, knobs);
    if (op.status === 'runaway')
      throw new LinearizationError(`no steady operating point at fsw ${knobs.fswHz} Hz, gate drive ${knobs.vDriveV} V: thermal runaway`);
    ep = op.electrical;
    tjH = op.tjHsC;
    tjL = op.tjLsC;
    thermalStatus = op.status === 'ok' ? 'ok' : 'unconverged';
  }
  const lin = linearizeAtPoint(plant, ep, tjH, tjL, { disturbances });
  return { lin, ep, knobs, tjHsC: tjH, tjLsC: tjL, thermalStatus };
}

/** Gains (kp, ki) of `basis` equivalent to the configured ones: same kp, same integral per sample at the nominal period. */
export function gainsIn(ctx: MarginContext, basis: PiBasis, o: MarginOverrides = {}): { kp: number; ki: number } {
  const kp = o.kp ?? ctx.sys.pi.kp;
  const ki = o.ki ?? ctx.sys.pi.ki;
  if (basis === ctx.configuredBasis) return { kp, ki };
  return basis === 'perSample' ? { kp, ki: ki * ctx.nominalTsS } : { kp, ki: ki / ctx.nominalTsS };
}

export interface LoopEvaluation {
  readonly basis: PiBasis;
  readonly kp: number;
  readonly ki: number;
  readonly b0: number;
  readonly b1: number;
  readonly kiEquivalentPerS: number;
  readonly tsS: number;
  readonly loop: DiscreteLoop;
  readonly analysis: LoopAnalysis;
}

/**
 * The discrete loop of `basis` at a linear point, with its analysis. Gains: `gains` (in the units
 * of `basis`) when given, else the configured gains (or o.kp, o.ki) converted with `gainsIn`.
 */
export function evaluateLoop(ctx: MarginContext, lp: LinearPoint, basis: PiBasis, o: MarginOverrides = {}, pointsPerDecade?: number, gains?: { kp: number; ki: number }): LoopEvaluation {
  const tsS = samplePeriodS(ctx.sys, lp.knobs.fswHz);
  const { kp, ki } = gains ?? gainsIn(ctx, basis, o);
  const cfg = { ...ctx.sys.pi, basis, kp, ki };
  const pi = piCoefficients(cfg, tsS);
  const filter = o.sensorFilterHz === null ? undefined : (o.sensorFilterHz ?? ctx.sys.sensorFilterHz);
  const loop = discreteLoop(lp.lin, { tsS, delaySamples: o.delaySamples ?? ctx.sys.delaySamples, pi, sensorFilterHz: filter });
  const analysis = analyzeLoop(loop, { pointsPerDecade });
  return { basis, kp, ki, b0: pi.b0, b1: pi.b1, kiEquivalentPerS: piEquivalentKi(pi, tsS), tsS, loop, analysis };
}

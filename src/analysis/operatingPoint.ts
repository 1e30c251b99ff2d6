/**
 * Steady-state operating point: electrical point iterated with the junction temperatures from
 * the thermal network's DC solution, closing the Rds,on(Tj) loop. Plain fixed-point iteration on
 * purpose: it diverges exactly when the electro-thermal loop gain ∂P/∂Tj·Rth exceeds one, which
 * is the thermal-runaway condition, so divergence is reported as runaway rather than damped away.
 */
import { type ElectricalDraft, type ElectricalPoint, buildElectrical, draftElectrical, newElectricalDraft } from '../model/electrical.ts';
import { type Knobs, type Plant, buildPlant, thermalSpecOf } from '../model/plant.ts';
import {
  type ThermalInputs,
  type ThermalNetwork,
  buildThermalNetwork,
  heatToAmbientW,
  heatToCoolantW,
  thermalSteadyState,
} from '../model/thermal/network.ts';
import { ScenarioError } from '../scenario/errors.ts';
import type { Scenario } from '../scenario/parse.ts';
import { type Caution, electricalCautions, thermalCautions } from './cautions.ts';

export interface OperatingPoint {
  /** `unconverged`: the iteration neither settled nor ran away (reported, never silent). */
  status: 'ok' | 'runaway' | 'unconverged';
  iterations: number;
  electrical: ElectricalPoint;
  tjHsC: number;
  tjLsC: number;
  heatsinkC: number;
  coolantOutC: number;
  heatToCoolantW: number;
  heatToAmbientW: number;
  /** Share of the converter's total loss that reaches the coolant (ambient pickup excluded). */
  usefulHeatFraction: number;
  cautions: Caution[];
}

export interface PointConditions {
  inletC: number;
  flowKgPerS: number;
  ambientC: number;
}

export interface PointContext {
  readonly scenario: Scenario;
  readonly plant: Plant;
  readonly net: ThermalNetwork;
  /**
   * The network's linear steady-state responses, computed on first use. Contexts that share a
   * network may share this too (sweeps); it is checked against `net` before use. Kept on the
   * context rather than in a WeakMap keyed by the network, so a study's thousands of
   * short-lived networks die young instead of waiting for a full collection.
   */
  readonly thermalMemo: ThermalMemo;
}

export interface ThermalMemo {
  net?: ThermalNetwork;
  linear?: LinearThermal;
  baseline?: PointConditions & { qCoolW: number };
}

/** A context on a given network (shared with `memo` when the network is shared). */
export function pointContextOn(scenario: Scenario, plant: Plant, net: ThermalNetwork, memo: ThermalMemo = {}): PointContext {
  return { scenario, plant, net, thermalMemo: memo };
}

export function pointContext(scenario: Scenario): PointContext {
  let net: ThermalNetwork;
  try {
    net = buildThermalNetwork(thermalSpecOf(scenario), { steadyStateOnly: true });
  } catch (e) {
    // The thermal builder names its own fields (spec.devices[0]…); report them as scenario problems.
    const msg = (e as Error).message.replace(/^spec\.devices\[0\]/, 'thermal.devices.highSide').replace(/^spec\.devices\[1\]/, 'thermal.devices.lowSide').replace(/^spec\./, 'thermal.');
    const [path, ...rest] = msg.split(': ');
    throw new ScenarioError([{ path, message: rest.join(': ') || msg }]);
  }
  return pointContextOn(scenario, buildPlant(scenario), net);
}

/** Losses routed into the thermal network: device losses at the junctions, a share of the passives at the plate. */
export function thermalInputsOf(plant: Plant, draft: ElectricalDraft, cond: PointConditions, out?: ThermalInputs): ThermalInputs {
  const r = out ?? { deviceLossW: [0, 0], sinkExtraW: 0, inletC: 0, flowKgPerS: 0, ambientC: 0 };
  (r.deviceLossW as number[])[0] = draft.hsLossW;
  (r.deviceLossW as number[])[1] = draft.lsLossW;
  r.sinkExtraW = plant.passiveToPlateFraction * draft.passiveW;
  r.inletC = cond.inletC;
  r.flowKgPerS = cond.flowKgPerS;
  r.ambientC = cond.ambientC;
  return r;
}

const TOL_K = 1e-7;
const MAX_IT = 200;

/** Coolant heat with no loss at all, per network and conditions (sweeps ask for it at every point). */
function memoFor(ctx: PointContext): ThermalMemo {
  const m = ctx.thermalMemo;
  if (m.net !== ctx.net) {
    m.net = ctx.net;
    m.linear = undefined;
    m.baseline = undefined;
  }
  return m;
}

function sameConditions(a: PointConditions, b: PointConditions): boolean {
  return a.inletC === b.inletC && a.flowKgPerS === b.flowKgPerS && a.ambientC === b.ambientC;
}

function baselineCoolantW(ctx: PointContext, c: PointConditions): number {
  const memo = memoFor(ctx);
  const m = memo.baseline;
  if (m && sameConditions(m, c)) return m.qCoolW;
  const net = ctx.net;
  const baseline = thermalSteadyState(net, { deviceLossW: [0, 0], sinkExtraW: 0, inletC: c.inletC, flowKgPerS: c.flowKgPerS, ambientC: c.ambientC });
  const qCoolW = heatToCoolantW(net, baseline, c.inletC, c.flowKgPerS);
  memo.baseline = { inletC: c.inletC, flowKgPerS: c.flowKgPerS, ambientC: c.ambientC, qCoolW };
  return qCoolW;
}

/**
 * The thermal network is linear: steady temperatures are the zero-loss baseline plus each input's
 * response per watt. Three unit solves per network and conditions replace a dense solve at every
 * electro-thermal iteration (results equal to rounding).
 */
export interface LinearThermal extends PointConditions { base: Float64Array; uHs: Float64Array; uLs: Float64Array; uSink: Float64Array; out: Float64Array }
function linearThermal(ctx: PointContext, c: PointConditions): LinearThermal {
  const memo = memoFor(ctx);
  const m = memo.linear;
  if (m && sameConditions(m, c)) return m;
  const net = ctx.net;
  const at = (hs: number, ls: number, sink: number): Float64Array =>
    thermalSteadyState(net, { deviceLossW: [hs, ls], sinkExtraW: sink, inletC: c.inletC, flowKgPerS: c.flowKgPerS, ambientC: c.ambientC });
  const base = at(0, 0, 0);
  const minus = (a: Float64Array): Float64Array => a.map((v, i) => v - base[i]);
  const lt: LinearThermal = { ...c, base, uHs: minus(at(1, 0, 0)), uLs: minus(at(0, 1, 0)), uSink: minus(at(0, 0, 1)), out: new Float64Array(net.nNodes) };
  memo.linear = lt;
  return lt;
}

function steadyTemps(lt: LinearThermal, t: ThermalInputs): Float64Array {
  const pH = t.deviceLossW[0], pL = t.deviceLossW[1], pS = t.sinkExtraW;
  const o = lt.out;
  for (let i = 0; i < o.length; i++) o[i] = lt.base[i] + pH * lt.uHs[i] + pL * lt.uLs[i] + pS * lt.uSink[i];
  return o;
}

/**
 * The electro-thermal iteration drafts the electrical point at every step and builds only the
 * one it returns (see `ElectricalDraft`). Module-level: `operatingPoint` does not re-enter.
 */
const draft = newElectricalDraft();

export function operatingPoint(ctx: PointContext, knobs?: Partial<Knobs>, cond?: Partial<PointConditions>): OperatingPoint {
  const { scenario, plant, net } = ctx;
  const k: Knobs = { ...plant.knobs, ...knobs };
  const c: PointConditions = {
    inletC: cond?.inletC ?? scenario.thermal.coolant.inletC,
    flowKgPerS: cond?.flowKgPerS ?? scenario.thermal.coolant.flowKgPerS,
    ambientC: cond?.ambientC ?? scenario.thermal.ambientC,
  };
  const runawayC = scenario.limits.runawayTjC;
  let tjH = c.inletC;
  let tjL = c.inletC;
  draftElectrical(plant, k, tjH, tjL, draft);
  const tIn = thermalInputsOf(plant, draft, c);
  const lt = linearThermal(ctx, c);
  let temps = steadyTemps(lt, tIn);
  let status: OperatingPoint['status'] = 'ok';
  let it = 0;
  // Relaxation only halves when the update changes sign (negative loop gain, e.g. below the
  // zero-temperature-coefficient point); a monotone climb is left undamped so runaway shows.
  let relax = 1;
  let hotClimbs = 0;
  let lastStep = 0;
  for (; it < MAX_IT; it++) {
    const stepH = temps[net.layout.junction[0]] - tjH;
    const stepL = temps[net.layout.junction[1]] - tjL;
    const done = Math.abs(stepH) < TOL_K && Math.abs(stepL) < TOL_K;
    const step = Math.abs(stepH) > Math.abs(stepL) ? stepH : stepL;
    if (step * lastStep < 0) relax *= 0.5;
    lastStep = step;
    tjH += relax * stepH;
    tjL += relax * stepL;
    if (done) break;
    // Runaway: still climbing past the limit for several iterations (a hot first guess alone is not runaway).
    if (!(tjH < runawayC && tjL < runawayC)) {
      hotClimbs = step > 0 ? hotClimbs + 1 : 0;
      if (hotClimbs >= 5 || !(Math.max(tjH, tjL) < 4 * runawayC)) {
        status = 'runaway';
        break;
      }
    } else hotClimbs = 0;
    draftElectrical(plant, k, tjH, tjL, draft);
    temps = steadyTemps(lt, thermalInputsOf(plant, draft, c, tIn));
  }
  // Build the point last drafted: the one whose losses set the final temperatures.
  const ep = buildElectrical(draft);
  if (it >= MAX_IT && status === 'ok') status = 'unconverged';
  const qCool = heatToCoolantW(net, temps, c.inletC, c.flowKgPerS);
  // The converter's own share: the network is linear, so subtract what the coolant would pick
  // up from ambient with no loss at all (a cold inlet also draws heat from a warmer room).
  const qCool0 = baselineCoolantW(ctx, c);
  const qAmb = heatToAmbientW(net, temps, c.ambientC);
  const lim = scenario.limits;
  const cautions = [...electricalCautions(plant, ep, tjH, tjL, lim), ...thermalCautions(plant, tjH, tjL, lim)];
  if (status === 'runaway')
    cautions.unshift({
      code: 'thermalRunaway',
      severity: 'danger',
      message: `thermal runaway: no electro-thermal equilibrium below ${runawayC} °C (loss grows faster with temperature than the cooling removes it)`,
    });
  return {
    status,
    iterations: it,
    electrical: ep,
    tjHsC: tjH,
    tjLsC: tjL,
    heatsinkC: temps[net.layout.heatsink],
    coolantOutC: temps[net.layout.coolant],
    heatToCoolantW: qCool,
    heatToAmbientW: qAmb,
    usefulHeatFraction: ep.totalLossW > 0 ? (qCool - qCool0) / ep.totalLossW : 0,
    cautions,
  };
}

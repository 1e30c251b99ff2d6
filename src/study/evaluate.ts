/**
 * Evaluate one sample: build its scenario, run the study's kind on it (steady-state point,
 * margins, or a full replay) and reduce the outcome to a flat summary with the risk flags the
 * study report counts. Pure apart from an optional cache of nominal results, which changes
 * only how fast a sample is computed, never its record.
 */
import { type OperatingPoint, type PointContext, operatingPoint, pointContext } from '../analysis/operatingPoint.ts';
import { knobsAtEffort } from '../control/supervisor.ts';
import { ScenarioError } from '../scenario/errors.ts';
import type { Scenario } from '../scenario/parse.ts';
import { simulate } from '../sim/engine.ts';
import { supervisorFor } from '../sim/supervisorHook.ts';
import { buildSystem } from '../sim/system.ts';
import { MARGINS_FIELDS, type MarginsSummary, evaluateMargins } from './margins.ts';
import { r7 } from './round.ts';
import type { SamplePlan } from './sampler.ts';
import { type StudyContext, paramPatch, sampleScenarios } from './variant.ts';


export interface PointSummary {
  status: OperatingPoint['status'];
  regulated: boolean;
  fswHz: number;
  deadTimeS: number;
  vDriveV: number;
  totalLossW: number;
  semiconductorLossW: number;
  heatToCoolantW: number;
  efficiency: number;
  tjHsC: number;
  tjLsC: number;
  tjPeakC: number;
  /** Smallest (tjMaxC − margin − Tj) over the two devices; negative when over. */
  tjHeadroomK: number;
  hsSaturated: boolean;
  lsSaturated: boolean;
  hsCannotTurnOn: boolean;
  lsCannotTurnOn: boolean;
  /** Either switch saturates or cannot pass its Miller plateau (leg flags or cautions). */
  saturation: boolean;
  runaway: boolean;
  tjOverLimit: boolean;
  cautions: string[];
}

export interface RunSummary {
  status: string;
  cause: string | null;
  limitation: string | null;
  tEndS: number;
  tjHsPeakC: number;
  tjLsPeakC: number;
  tjPeakC: number;
  tjHeadroomK: number;
  heatToCoolantMeanW: number;
  totalLossMeanW: number;
  runaway: boolean;
  tjOverLimit: boolean;
  warnings: string[];
}

export interface SpreadCost {
  nominalTotalLossW: number;
  nominalHeatToCoolantW: number;
  nominalTjPeakC: number;
  dLossW: number;
  dHeatToCoolantW: number;
  dTjPeakK: number;
  achievableHeatW?: number;
  nominalAchievableHeatW?: number;
  dAchievableHeatW?: number;
}

export type SampleResult =
  | (PointSummary & Partial<SpreadCost>)
  | RunSummary
  | MarginsSummary
  | { status: 'invalid' | 'failed'; error: string };

export interface SampleRecord {
  index: number;
  seed: number;
  params: SamplePlan['params'];
  devices?: SamplePlan['devices'];
  result: SampleResult;
}

function headroomK(ctx: StudyContext, s: Scenario, tjHsC: number, tjLsC: number): number {
  const m = ctx.tjMarginK;
  return Math.min(s.devices.highSide.tjMaxC - m - tjHsC, s.devices.lowSide.tjMaxC - m - tjLsC);
}

export function pointSummary(ctx: StudyContext, s: Scenario, op: OperatingPoint): PointSummary {
  const e = op.electrical;
  const leg = e.leg;
  const codes = [...new Set(op.cautions.map((c) => c.code))];
  const headroom = headroomK(ctx, s, op.tjHsC, op.tjLsC);
  return {
    status: op.status,
    regulated: e.regulated,
    fswHz: r7(e.knobs.fswHz),
    deadTimeS: r7(e.knobs.deadTimeS),
    vDriveV: r7(e.knobs.vDriveV),
    totalLossW: r7(e.totalLossW),
    semiconductorLossW: r7(e.semiW),
    heatToCoolantW: r7(op.heatToCoolantW),
    efficiency: r7(e.efficiency),
    tjHsC: r7(op.tjHsC),
    tjLsC: r7(op.tjLsC),
    tjPeakC: r7(Math.max(op.tjHsC, op.tjLsC)),
    tjHeadroomK: r7(headroom),
    hsSaturated: leg.hsSaturated,
    lsSaturated: leg.lsSaturated,
    hsCannotTurnOn: leg.hsCannotTurnOn,
    lsCannotTurnOn: leg.lsCannotTurnOn,
    saturation:
      leg.hsSaturated || leg.lsSaturated || leg.hsCannotTurnOn || leg.lsCannotTurnOn || codes.includes('channelSaturation') || codes.includes('cannotTurnOn'),
    runaway: op.status === 'runaway',
    tjOverLimit: op.status === 'runaway' || headroom < 0,
    cautions: codes,
  };
}

/**
 * The most coolant heat the supervisor's effort ladder (fsw up, then dead time up, then gate
 * drive down to its minimum) reaches with this build while both junctions stay at or below
 * tjMaxC − margin without runaway. Loss rises along the ladder, so the feasible efforts form an
 * interval from 0 and bisection finds its end.
 */
export function achievableHeatW(ctx: StudyContext, s: Scenario, pc: PointContext = pointContext(s)): number {
  const ladder = ctx.ladder;
  if (!ladder) throw new ScenarioError([{ path: 'supervisor', message: 'required for deviceSpread.achievableHeat' }]);
  const at = (effort: number): { ok: boolean; heatW: number } => {
    const op = operatingPoint(pc, knobsAtEffort(ladder, effort));
    return { ok: op.status === 'ok' && headroomK(ctx, s, op.tjHsC, op.tjLsC) >= 0, heatW: op.heatToCoolantW };
  };
  const top = at(3);
  if (top.ok) return top.heatW;
  let lo = 0;
  let hi = 3;
  let best = at(0);
  if (!best.ok) return 0;
  for (let it = 0; it < 14; it++) {
    const mid = 0.5 * (lo + hi);
    const m = at(mid);
    if (m.ok) {
      lo = mid;
      best = m;
    } else hi = mid;
  }
  return best.heatW;
}

export interface NominalCache {
  get(key: string): (PointSummary & { achievableHeatW?: number }) | undefined;
  set(key: string, value: PointSummary & { achievableHeatW?: number }): void;
}

function evaluatePoint(ctx: StudyContext, plan: SamplePlan, cache?: NominalCache): PointSummary & Partial<SpreadCost> {
  const { nominal, drawn } = sampleScenarios(ctx, plan);
  const wantHeat = ctx.spec.deviceSpread?.achievableHeat === true;
  const pc = pointContext(drawn);
  const summary = pointSummary(ctx, drawn, operatingPoint(pc));
  if (!plan.devices) return summary;
  const key = JSON.stringify(paramPatch(ctx, plan));
  let nom = cache?.get(key);
  if (!nom) {
    const ns = nominal();
    const npc = pointContext(ns);
    nom = pointSummary(ctx, ns, operatingPoint(npc));
    if (wantHeat) nom = { ...nom, achievableHeatW: r7(achievableHeatW(ctx, ns, npc)) };
    cache?.set(key, nom);
  }
  const cost: SpreadCost = {
    nominalTotalLossW: nom.totalLossW,
    nominalHeatToCoolantW: nom.heatToCoolantW,
    nominalTjPeakC: nom.tjPeakC,
    dLossW: r7(summary.totalLossW - nom.totalLossW),
    dHeatToCoolantW: r7(summary.heatToCoolantW - nom.heatToCoolantW),
    dTjPeakK: r7(summary.tjPeakC - nom.tjPeakC),
  };
  if (wantHeat && nom.achievableHeatW !== undefined) {
    const a = r7(achievableHeatW(ctx, drawn, pc));
    cost.achievableHeatW = a;
    cost.nominalAchievableHeatW = nom.achievableHeatW;
    cost.dAchievableHeatW = r7(a - nom.achievableHeatW);
  }
  return { ...summary, ...cost };
}

function evaluateRun(ctx: StudyContext, plan: SamplePlan): RunSummary {
  const { drawn: s } = sampleScenarios(ctx, plan);
  const sys = buildSystem(s);
  let tjHs = -Infinity;
  let tjLs = -Infinity;
  let heatSum = 0;
  let lossSum = 0;
  let n = 0;
  const supervisor = supervisorFor(sys);
  const r = simulate(sys, {
    supervisor,
    keepRecords: false,
    onRecord: (rec) => {
      tjHs = Math.max(tjHs, rec.tjHsC);
      tjLs = Math.max(tjLs, rec.tjLsC);
      heatSum += rec.heatToCoolantW;
      lossSum += rec.totalLossW;
      n++;
    },
  });
  const junction = sys.net.layout.junction;
  const tjHsPeak = Math.max(tjHs, r.finalTempsC[junction[0]]);
  const tjLsPeak = Math.max(tjLs, r.finalTempsC[junction[1]]);
  const headroom = headroomK(ctx, s, tjHsPeak, tjLsPeak);
  const peak = Math.max(tjHsPeak, tjLsPeak);
  const runaway = r.causeCode === 'thermalRunaway' || peak >= s.limits.runawayTjC;
  return {
    status: r.status,
    cause: r.cause ?? null,
    limitation: supervisor?.limitation?.() ?? null,
    tEndS: r7(r.tEndS),
    tjHsPeakC: r7(tjHsPeak),
    tjLsPeakC: r7(tjLsPeak),
    tjPeakC: r7(peak),
    tjHeadroomK: r7(headroom),
    heatToCoolantMeanW: r7(n > 0 ? heatSum / n : NaN),
    totalLossMeanW: r7(n > 0 ? lossSum / n : NaN),
    runaway,
    tjOverLimit: runaway || headroom < 0,
    warnings: [...r.warnings],
  };
}

/**
 * The record of sample `plan`. A scenario the draws make invalid is recorded (`invalid`, with
 * the problems) rather than stopping the study; so is an unexpected failure (`failed`).
 */
export function evaluateSample(ctx: StudyContext, plan: SamplePlan, cache?: NominalCache): SampleRecord {
  let result: SampleResult;
  try {
    if (ctx.spec.kind === 'point') result = evaluatePoint(ctx, plan, cache);
    else if (ctx.spec.kind === 'run') result = evaluateRun(ctx, plan);
    else result = evaluateMargins(ctx, sampleScenarios(ctx, plan).drawn);
  } catch (e) {
    if (e instanceof ScenarioError) result = { status: 'invalid', error: e.message.replace(/\n/g, '; ') };
    else result = { status: 'failed', error: e instanceof Error ? e.message : String(e) };
  }
  return { index: plan.index, seed: plan.seed, params: plan.params, ...(plan.devices ? { devices: plan.devices } : {}), result };
}

const POINT_FIELDS = [
  'status', 'regulated', 'fswHz', 'deadTimeS', 'vDriveV', 'totalLossW', 'semiconductorLossW', 'heatToCoolantW', 'efficiency',
  'tjHsC', 'tjLsC', 'tjPeakC', 'tjHeadroomK', 'hsSaturated', 'lsSaturated', 'hsCannotTurnOn', 'lsCannotTurnOn', 'saturation',
  'runaway', 'tjOverLimit', 'cautions', 'nominalTotalLossW', 'nominalHeatToCoolantW', 'nominalTjPeakC', 'dLossW',
  'dHeatToCoolantW', 'dTjPeakK', 'achievableHeatW', 'nominalAchievableHeatW', 'dAchievableHeatW', 'error',
] as const satisfies ReadonlyArray<keyof (PointSummary & SpreadCost) | 'error'>;

const RUN_FIELDS = [
  'status', 'cause', 'limitation', 'tEndS', 'tjHsPeakC', 'tjLsPeakC', 'tjPeakC', 'tjHeadroomK', 'heatToCoolantMeanW',
  'totalLossMeanW', 'runaway', 'tjOverLimit', 'warnings', 'error',
] as const satisfies ReadonlyArray<keyof RunSummary | 'error'>;

/** Result fields each kind can put in results.csv (`outputs`). */
export const RESULT_FIELDS: Readonly<Record<string, readonly string[]>> = { point: POINT_FIELDS, run: RUN_FIELDS, margins: MARGINS_FIELDS };

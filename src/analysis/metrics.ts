/**
 * Run metrics from the records and the engine's full-resolution statistics: heat tracking per
 * demand step, output regulation, energy totals, junction temperatures, the efficiency penalty
 * at zero demand against the best achievable point, and actuator travel.
 */
import { electricalPoint } from '../model/electrical.ts';
import type { Plant } from '../model/plant.ts';
import type { Scenario } from '../scenario/parse.ts';
import type { SimRecord, SimResult } from '../sim/engine.ts';

export interface StepMetrics {
  tStartS: number;
  tEndS: number;
  demandW: number;
  /** Mean of the tracked quantity over the last quarter of the step. */
  finalW: number;
  steadyErrorW: number;
  /** Time from the step until the tracked quantity stays inside the band (NaN: never). */
  settlingS: number;
  /** Peak excursion beyond the new demand, in % of the step size (0 when none). */
  overshootPct: number;
  iaeWs: number;
  rmsErrorW: number;
  bandW: number;
  /** The supervisor reported the demand unreachable during this step. */
  limited: boolean;
}

export interface RunMetrics {
  trackedQuantity: 'electricalLoss' | 'semiconductorLoss' | 'coolantHeat';
  heatTracking: { steps: StepMetrics[]; iaeWs: number; rmsErrorW: number; bandRule: string };
  regulation: {
    reference: number;
    unit: 'V' | 'A';
    maxDeviation: number;
    maxDeviationDuringMoves: number;
    settleAfterMovesMaxS: number;
    settleAfterMovesMeanS: number;
    moves: number;
  };
  energyJ: { input: number; output: number; totalLoss: number; semiconductorLoss: number; heatToCoolant: number; heatElsewhere: number };
  usefulHeatFraction: number;
  temperatures: { peakTjC: number; peakTjAtS: number; limitC: number; marginK: number; timeAboveLimitMinusMarginS: number; timeAboveLimitS: number };
  zeroDemand: { samples: number; efficiency: number; bestEfficiency: number; penaltyPctPoints: number } | undefined;
  actuatorTravel: { fswHz: number; deadTimeS: number; vDriveV: number };
}

/** The band a step must settle into: 3 % of the demand or 0.5 W, whichever is larger (our convention). */
export function trackingBandW(demandW: number): number {
  return Math.max(0.03 * Math.abs(demandW), 0.5);
}

function tracked(r: SimRecord, q: RunMetrics['trackedQuantity']): number {
  if (q === 'electricalLoss') return r.totalLossW;
  if (q === 'semiconductorLoss') return r.semiLossW;
  return r.heatToCoolantW;
}

export function stepMetrics(records: readonly SimRecord[], q: RunMetrics['trackedQuantity']): StepMetrics[] {
  const steps: StepMetrics[] = [];
  let i0 = 0;
  for (let i = 1; i <= records.length; i++) {
    if (i < records.length && records[i].demandW === records[i0].demandW) continue;
    const seg = records.slice(i0, i);
    i0 = i;
    const demand = seg[0].demandW;
    if (!(demand > 0) || seg.length < 2) continue;
    const prevDemand = steps.length > 0 ? steps[steps.length - 1].demandW : 0;
    const tStart = seg[0].tS - (seg.length > 1 ? seg[1].tS - seg[0].tS : 0);
    const band = trackingBandW(demand);
    let settle = NaN;
    for (let k = seg.length - 1; k >= 0; k--) {
      if (Math.abs(tracked(seg[k], q) - demand) > band) {
        settle = k + 1 < seg.length ? seg[k + 1].tS - tStart : NaN;
        break;
      }
      if (k === 0) settle = seg[0].tS - tStart;
    }
    const tail = seg.slice(Math.floor(0.75 * seg.length));
    const finalW = tail.reduce((a, r) => a + tracked(r, q), 0) / tail.length;
    const up = demand >= prevDemand;
    let peak = 0;
    for (const r of seg) peak = Math.max(peak, up ? tracked(r, q) - demand : demand - tracked(r, q));
    const stepSize = Math.abs(demand - prevDemand);
    let iae = 0;
    let se = 0;
    let tPrev = tStart;
    for (const r of seg) {
      const e = tracked(r, q) - demand;
      const dt = r.tS - tPrev;
      iae += Math.abs(e) * dt;
      se += e * e * dt;
      tPrev = r.tS;
    }
    const span = seg[seg.length - 1].tS - tStart;
    steps.push({
      tStartS: tStart,
      tEndS: seg[seg.length - 1].tS,
      demandW: demand,
      finalW,
      steadyErrorW: finalW - demand,
      settlingS: settle,
      overshootPct: stepSize > 0 ? (100 * Math.max(peak, 0)) / stepSize : 0,
      iaeWs: iae,
      rmsErrorW: span > 0 ? Math.sqrt(se / span) : 0,
      bandW: band,
      // The first record of a step still carries the previous step's state.
      limited: seg.slice(1).some((r) => typeof r.shortfallW === 'number' && r.shortfallW > band),
    });
  }
  return steps;
}

/**
 * Best achievable efficiency over the supervisor's allowed ranges at the given temperatures and
 * loads (grid over fsw and dead time at the highest gate drive) — the reference for the
 * zero-demand penalty. Same loss model as everything else.
 */
export function bestEfficiency(plant: Plant, sc: Scenario, tjH: number, tjL: number): number {
  const sup = sc.supervisor;
  const fLo = sup?.fsw.enabled ? sup.fsw.minHz : sc.pwm.fswHz;
  const fHi = sup?.fsw.enabled ? sup.fsw.maxHz : sc.pwm.fswHz;
  const dLo = sup?.deadTime.enabled ? sup.deadTime.minS : sc.pwm.deadTimeS;
  const dHi = sup?.deadTime.enabled ? sup.deadTime.maxS : sc.pwm.deadTimeS;
  const vg = sup?.gateDrive.enabled ? sup.gateDrive.maxV : sc.gateDrive.vDriveV;
  let best = 0;
  for (let i = 0; i <= 40; i++) {
    const f = fLo * Math.pow(fHi / fLo, i / 40);
    for (let j = 0; j <= 4; j++) {
      const d = dLo + ((dHi - dLo) * j) / 4;
      const ep = electricalPoint(plant, { fswHz: f, deadTimeS: d, vDriveV: vg }, tjH, tjL);
      if (ep.regulated && ep.capOut.utilization <= 1 && ep.capIn.utilization <= 1) best = Math.max(best, ep.efficiency);
    }
  }
  return best;
}

export function runMetrics(sc: Scenario, plant: Plant, res: SimResult): RunMetrics {
  const recs = res.records;
  const q = sc.supervisor?.controlled ?? 'electricalLoss';
  const steps = stepMetrics(recs, q);
  const iae = steps.reduce((a, s) => a + s.iaeWs, 0);
  const spanS = steps.reduce((a, s) => a + (s.tEndS - s.tStartS), 0);
  const rms = spanS > 0 ? Math.sqrt(steps.reduce((a, s) => a + s.rmsErrorW * s.rmsErrorW * (s.tEndS - s.tStartS), 0) / spanS) : 0;
  const st = res.stats;
  const settle = st.moveSettleS;
  const E = res.energiesJ;
  const totalLoss = E.hs + E.ls + E.passive + E.gateDriver;
  const tjMax = Math.min(plant.leg.hs.tjMaxC, plant.leg.ls.tjMaxC);
  // Zero demand: the settled second half of each zero-demand stretch (after the first 5 s).
  let zero: RunMetrics['zeroDemand'];
  if (sc.supervisor) {
    const picked: SimRecord[] = [];
    let since = -Infinity;
    for (let i = 0; i < recs.length; i++) {
      if (recs[i].demandW > 0) { since = -Infinity; continue; }
      if (since === -Infinity) since = recs[i].tS;
      if (recs[i].tS - since >= 5) picked.push(recs[i]);
    }
    if (picked.length > 0) {
      let eff = 0, best = 0;
      const every = Math.max(1, Math.floor(picked.length / 10));
      let n = 0;
      for (let i = 0; i < picked.length; i += every) {
        const r = picked[i];
        eff += r.efficiency;
        best += bestEfficiency(plant, sc, r.tjHsC, r.tjLsC);
        n++;
      }
      zero = { samples: n, efficiency: eff / n, bestEfficiency: best / n, penaltyPctPoints: (100 * (best - eff)) / n };
    }
  }
  const travel = { fswHz: 0, deadTimeS: 0, vDriveV: 0 };
  for (let i = 1; i < recs.length; i++) {
    travel.fswHz += Math.abs(recs[i].fswHz - recs[i - 1].fswHz);
    travel.deadTimeS += Math.abs(recs[i].deadTimeS - recs[i - 1].deadTimeS);
    travel.vDriveV += Math.abs(recs[i].vDriveV - recs[i - 1].vDriveV);
  }
  return {
    trackedQuantity: q,
    heatTracking: { steps, iaeWs: iae, rmsErrorW: rms, bandRule: 'settled when within max(3 % of demand, 0.5 W) to the end of the step' },
    regulation: {
      reference: recs.length > 0 ? recs[recs.length - 1].reference : NaN,
      unit: plant.conv.kind === 'buck' ? 'V' : 'A',
      maxDeviation: st.maxYDev,
      maxDeviationDuringMoves: st.maxDevDuringMoves,
      settleAfterMovesMaxS: settle.length ? Math.max(...settle) : 0,
      settleAfterMovesMeanS: settle.length ? settle.reduce((a, b) => a + b, 0) / settle.length : 0,
      moves: settle.length,
    },
    energyJ: {
      input: E.pin,
      output: E.pout,
      totalLoss,
      semiconductorLoss: E.hs + E.ls,
      heatToCoolant: st.heatToCoolantJ,
      heatElsewhere: totalLoss - st.heatToCoolantJ,
    },
    usefulHeatFraction: totalLoss > 0 ? st.heatToCoolantJ / totalLoss : 0,
    temperatures: {
      peakTjC: st.peakTjC,
      peakTjAtS: st.peakTjAtS,
      limitC: tjMax,
      marginK: sc.limits.tjMarginK,
      timeAboveLimitMinusMarginS: st.timeAboveTjMarginS,
      timeAboveLimitS: st.timeAboveTjMaxS,
    },
    zeroDemand: zero,
    actuatorTravel: travel,
  };
}

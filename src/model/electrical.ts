/**
 * Electrical steady state of a converter at given knobs and junction temperatures: the duty
 * that regulates the output (buck voltage, half-bridge current), ripple, and every loss.
 *
 * Power bookkeeping follows the averaged switch: the leg delivers v̄_node·ī to the branch; the
 * switching, gate and ripple-borne losses (AC copper, core, capacitor ESR) are drawn from the
 * bus. Pin − Pout − ΣPloss then equals ī·(v̄_node − v_far): the residual of the duty solve.
 */
import { type LegInput, type LegResult, evaluateLeg, newLegInput, newLegResult, setLegInput } from './leg.ts';
import { coreLossW, dcrOhm, deltaBT, peakFluxT } from './magnetics.ts';
import type { BuckParams, HalfBridgeParams, Knobs, Plant } from './plant.ts';

export interface CapacitorState {
  rmsA: number;
  lossW: number;
  ratingA: number;
  /** Ripple current over rating (> 1 crosses the rating). */
  utilization: number;
}

export interface ElectricalPoint {
  topology: 'buck' | 'halfBridge';
  duty: number;
  /** The loop's target was reachable inside the duty limits. */
  regulated: boolean;
  vBusV: number;
  /** Buck: output voltage; half-bridge: voltage across the load branch (node − midpoint). */
  vOutV: number;
  iMeanA: number;
  knobs: Knobs;
  leg: LegResult;
  inductorCopperW: number;
  inductorCoreW: number;
  deltaBT: number;
  /** Peak flux density and the core's saturation level (NaN without a core model). */
  bPeakT: number;
  bSatT: number;
  capOut: CapacitorState;
  capIn: CapacitorState;
  vOutRipplePpV: number;
  pinW: number;
  poutW: number;
  semiW: number;
  gateDriverW: number;
  passiveW: number;
  totalLossW: number;
  efficiency: number;
  /** |Pin − Pout − ΣPloss| / Pin. */
  balanceResidual: number;
}

const legIn: LegInput = newLegInput();

function legAt(plant: Plant, k: Knobs, vBus: number, iMean: number, vFar: number, lH: number, duty: number, tjH: number, tjL: number, out: LegResult): LegResult {
  return evaluateLeg(plant.leg, setLegInput(legIn, vBus, iMean, vFar, lH, duty, k, tjH, tjL), out);
}

/**
 * Solve g(D) = 0 for g increasing in D on [lo, hi]: secant steps safeguarded by bisection.
 * Returns NaN-free D; `ok` false when the root lies outside (then D is the violated bound).
 * Contract relied on by the callers: the last call of `g` is at the returned D, so whatever g
 * writes as a side effect (the leg evaluation) describes the returned point.
 */
export function solveIncreasing(g: (d: number) => number, lo: number, hi: number, guess: number, tolV: number): { d: number; ok: boolean; g: number } {
  // The bounds are evaluated only when needed (a step leaves the bracket, or the iteration ends
  // unconverged): with the root inside, the secant path is the same as with them evaluated first,
  // and two leg evaluations per solve are saved. A bound evaluated that shows the root outside
  // returns that bound, as an up-front check would have.
  let a = lo;
  let b = hi;
  let ga = NaN;
  let gb = NaN;
  let aKnown = false;
  let bKnown = false;
  let x0 = Math.min(Math.max(guess, a), b);
  let g0 = g(x0);
  let x1 = x0 + 1e-4 * (g0 > 0 ? -1 : 1);
  x1 = Math.min(Math.max(x1, a), b);
  let g1 = g(x1);
  for (let it = 0; it < 100; it++) {
    if (g1 > 0) { b = x1; gb = g1; bKnown = true; } else { a = x1; ga = g1; aKnown = true; }
    if (Math.abs(g1) <= tolV) return { d: x1, ok: true, g: g1 };
    let x2 = g1 !== g0 ? x1 - (g1 * (x1 - x0)) / (g1 - g0) : 0.5 * (a + b);
    if (!(x2 > a && x2 < b)) {
      if (!aKnown) {
        ga = g(a);
        aKnown = true;
        if (ga >= 0) return { d: a, ok: ga <= tolV, g: ga };
      }
      if (!bKnown) {
        gb = g(b);
        bKnown = true;
        if (gb <= 0) return { d: b, ok: gb >= -tolV, g: gb };
      }
      x2 = a + (ga / (ga - gb)) * (b - a);
    }
    if (!(x2 > a && x2 < b)) x2 = 0.5 * (a + b);
    x0 = x1; g0 = g1;
    x1 = x2; g1 = g(x2);
    if (b - a < 1e-15) break;
  }
  if (!aKnown) {
    const gLo = g(lo);
    if (gLo >= 0) return { d: lo, ok: gLo <= tolV, g: gLo };
  }
  if (!bKnown) {
    const gHi = g(hi);
    if (gHi <= 0) return { d: hi, ok: gHi >= -tolV, g: gHi };
  }
  if (!aKnown || !bKnown) g1 = g(x1); // restore the side effect at the returned point
  return { d: x1, ok: Math.abs(g1) <= tolV * 1e3, g: g1 };
}

function capState(c: { esrOhm: number; rippleRatingA: number }, msA2: number): CapacitorState {
  const rms = Math.sqrt(Math.max(msA2, 0));
  return { rmsA: rms, lossW: c.esrOhm * rms * rms, ratingA: c.rippleRatingA, utilization: rms / c.rippleRatingA };
}

function snapshot(r: LegResult): LegResult {
  return { ...r, hs: { ...r.hs }, ls: { ...r.ls } };
}

/** Scratch for the duty solve; every returned point holds its own snapshot. */
const buckScratch = newLegResult();

function loadCurrentA(b: BuckParams, vo: number): number {
  return 'rOhm' in b.load ? vo / b.load.rOhm : b.load.iA;
}

/** State of the buck duty solve, read by `buckDutyResidual` (no closure per call on the hot path). */
const buckSolve = { plant: null as Plant | null, k: null as Knobs | null, vin: 0, io: 0, vFar: 0, lH: 1, tjH: 25, tjL: 25 };

/** Node average minus the far-end voltage at duty d: zero when the output is regulated. */
function buckDutyResidual(d: number): number {
  const st = buckSolve;
  return legAt(st.plant as Plant, st.k as Knobs, st.vin, st.io, st.vFar, st.lH, d, st.tjH, st.tjL, buckScratch).vNodeMeanV - st.vFar;
}

/** Buck, load from the plant unless `loadOverride` gives the load resistance or current. */
export function buckElectrical(plant: Plant, k: Knobs, tjH: number, tjL: number, vinOverrideV?: number): ElectricalPoint {
  const b = plant.conv as BuckParams;
  const vin = vinOverrideV ?? b.vinV;
  const rL = dcrOhm(b.dcr20Ohm, b.inductorTempC);
  const leg = buckScratch;
  let vo = b.voutRefV;
  let io = loadCurrentA(b, vo);
  const st = buckSolve;
  st.plant = plant; st.k = k; st.vin = vin; st.io = io; st.vFar = vo + io * rL; st.lH = b.lH; st.tjH = tjH; st.tjL = tjL;
  const sol = solveIncreasing(buckDutyResidual, plant.dutyMin, plant.dutyMax, (vo + io * rL) / vin, 1e-12 * vin);
  st.plant = st.k = null;
  let duty = sol.d;
  let regulated = sol.ok;
  if (!regulated) {
    // Duty pinned at a limit: the output settles where the node average meets the branch drop.
    const h = (v: number): number => {
      const i = loadCurrentA(b, v);
      return v + i * rL - legAt(plant, k, vin, i, v + i * rL, b.lH, duty, tjH, tjL, leg).vNodeMeanV;
    };
    const s2 = solveIncreasing(h, 0, vin, vo, 1e-12 * vin);
    vo = s2.d;
    io = loadCurrentA(b, vo);
    legAt(plant, k, vin, io, vo + io * rL, b.lH, duty, tjH, tjL, leg);
  }
  // Regulated: solveIncreasing evaluated g last at the returned duty, so `leg` holds that point.
  return finishBuck(plant, b, k, vin, vo, io, rL, duty, regulated, leg);
}

function finishBuck(plant: Plant, b: BuckParams, k: Knobs, vin: number, vo: number, io: number, rL: number, duty: number, regulated: boolean, leg: LegResult): ElectricalPoint {
  const copperW = rL * leg.iMsA2;
  const coreW = coreLossW(b.core, b.lH, leg.ripplePpA, k.fswHz, leg.riseFraction);
  const capOut = capState(b.cout, leg.iMsA2 - io * io);
  const capIn = capState(b.cin, leg.iBusMsA2 - leg.iBusCondMeanA * leg.iBusCondMeanA);
  const acCopperW = rL * (leg.iMsA2 - io * io);
  const pNode = leg.vNodeMeanV * io;
  const passiveW = copperW + coreW + capOut.lossW + capIn.lossW;
  const pinW = pNode + leg.semiW + leg.gateDriverW + acCopperW + coreW + capOut.lossW + capIn.lossW;
  const poutW = vo * io;
  const totalLossW = leg.semiW + leg.gateDriverW + passiveW;
  const ripplePp = leg.ripplePpA / (8 * b.cout.cF * k.fswHz) + leg.ripplePpA * b.cout.esrOhm;
  return {
    topology: 'buck', duty, regulated, vBusV: vin, vOutV: vo, iMeanA: io, knobs: { ...k }, leg: snapshot(leg),
    inductorCopperW: copperW, inductorCoreW: coreW, deltaBT: b.core ? deltaBT(b.core, b.lH, leg.ripplePpA) : 0,
    bPeakT: b.core ? peakFluxT(b.core, b.lH, Math.max(Math.abs(leg.iPeakA), Math.abs(leg.iValleyA))) : NaN,
    bSatT: b.core ? (b.core.bSatT ?? Infinity) : NaN,
    capOut, capIn, vOutRipplePpV: ripplePp, pinW, poutW, semiW: leg.semiW, gateDriverW: leg.gateDriverW, passiveW, totalLossW,
    efficiency: pinW > 0 ? poutW / pinW : 0,
    balanceResidual: pinW > 0 ? Math.abs(pinW - poutW - totalLossW) / pinW : 0,
  };
}

const PHASES = 24;

/**
 * Half-bridge leg into R–L(–EMF) returning to the DC-link midpoint. DC reference: one point.
 * Sine reference: quasi-static average over the fundamental (fundamental ≪ fsw), with the
 * branch voltage including L·di/dt. DC link: source through its resistance (fixed point).
 */
export function halfBridgeElectrical(plant: Plant, k: Knobs, tjH: number, tjL: number): ElectricalPoint {
  const h = plant.conv as HalfBridgeParams;
  const ref = h.reference;
  const nPh = ref.kind === 'dc' ? 1 : PHASES;
  const leg = newLegResult();
  const acc = newLegResult();
  let vLink = h.vdcV;
  let dutySum = 0;
  let regulated = true;
  let pinW = 0, poutW = 0, linkMs = 0, linkMean = 0, iMsLoad = 0, vOutMean = 0, iMeanLoad = 0;
  for (let pass = 0; pass < 3; pass++) {
    const accHs = acc.hs, accLs = acc.ls;
    for (const key of Object.keys(accHs) as (keyof typeof accHs)[]) { accHs[key] = 0; accLs[key] = 0; }
    acc.iPeakA = -Infinity; acc.iValleyA = Infinity; acc.ripplePpA = 0; acc.gateDriverW = 0; acc.semiW = 0;
    acc.shootThrough = acc.hsSaturated = acc.lsSaturated = acc.hsCannotTurnOn = acc.lsCannotTurnOn = acc.dcm = false;
    acc.overlapS = acc.shootPeakA = 0;
    dutySum = 0; pinW = 0; poutW = 0; linkMs = 0; linkMean = 0; iMsLoad = 0; vOutMean = 0; iMeanLoad = 0;
    regulated = true;
    for (let p = 0; p < nPh; p++) {
      const th = (2 * Math.PI * (p + 0.5)) / nPh;
      const i = ref.kind === 'dc' ? ref.iA : ref.offsetA + ref.amplitudeA * Math.sin(th);
      const didt = ref.kind === 'dc' ? 0 : ref.amplitudeA * 2 * Math.PI * ref.freqHz * Math.cos(th);
      const vFar = 0.5 * vLink + h.backEmfV + h.loadROhm * i + h.loadLH * didt;
      const g = (d: number): number => legAt(plant, k, vLink, i, vFar, h.loadLH, d, tjH, tjL, leg).vNodeMeanV - vFar;
      const sol = solveIncreasing(g, plant.dutyMin, plant.dutyMax, vFar / vLink, 1e-12 * vLink);
      regulated &&= sol.ok;
      // solveIncreasing evaluated g last at sol.d: `leg` holds that point.
      dutySum += sol.d;
      for (const key of Object.keys(leg.hs) as (keyof typeof leg.hs)[]) { acc.hs[key] += leg.hs[key] / nPh; acc.ls[key] += leg.ls[key] / nPh; }
      acc.gateDriverW += leg.gateDriverW / nPh;
      acc.semiW += leg.semiW / nPh;
      acc.iPeakA = Math.max(acc.iPeakA, leg.iPeakA);
      acc.iValleyA = Math.min(acc.iValleyA, leg.iValleyA);
      acc.ripplePpA = Math.max(acc.ripplePpA, leg.ripplePpA);
      acc.iMsA2 += leg.iMsA2 / nPh;
      acc.riseFraction = leg.riseFraction;
      acc.gapRiseS = leg.gapRiseS; acc.gapFallS = leg.gapFallS; acc.diodeRiseS = leg.diodeRiseS; acc.diodeFallS = leg.diodeFallS;
      acc.shootThrough ||= leg.shootThrough; acc.overlapS = Math.max(acc.overlapS, leg.overlapS); acc.shootPeakA = Math.max(acc.shootPeakA, leg.shootPeakA);
      acc.hsSaturated ||= leg.hsSaturated; acc.lsSaturated ||= leg.lsSaturated; acc.hsCannotTurnOn ||= leg.hsCannotTurnOn; acc.lsCannotTurnOn ||= leg.lsCannotTurnOn;
      // Power through the averaged switch plus the losses it carries.
      const legLoss = leg.semiW + leg.gateDriverW;
      const rippleW = h.loadROhm * (leg.iMsA2 - i * i);
      // The load returns to an ideal midpoint (a second leg held at half the link, or a split
      // link with a balancing path), so the link delivers the branch power plus the losses.
      const vBranch = leg.vNodeMeanV - 0.5 * vLink;
      pinW += (vBranch * i + legLoss + rippleW) / nPh;
      poutW += (vBranch * i + rippleW - h.loadLH * didt * i) / nPh;
      iMsLoad += leg.iMsA2 / nPh;
      vOutMean += vBranch / nPh;
      iMeanLoad += i / nPh;
      // Link current: high-side conduction; the midpoint return splits evenly between the two halves.
      linkMean += (leg.iBusCondMeanA - 0.5 * i) / nPh;
      linkMs += (leg.iBusMsA2 - leg.iBusCondMeanA * i + 0.25 * i * i) / nPh;
    }
    const capW = h.link.esrOhm * Math.max(linkMs - linkMean * linkMean, 0);
    const iIn = (pinW + capW) / vLink;
    const next = h.vdcV - h.rSourceOhm * iIn;
    if (Math.abs(next - vLink) < 1e-9 * h.vdcV) break;
    vLink = next;
  }
  acc.vNodeMeanV = vOutMean + 0.5 * vLink;
  const capLink = capState(h.link, linkMs - linkMean * linkMean);
  pinW += capLink.lossW;
  const totalLossW = acc.semiW + acc.gateDriverW + capLink.lossW;
  return {
    topology: 'halfBridge', duty: dutySum / nPh, regulated, vBusV: vLink, vOutV: vOutMean, iMeanA: iMeanLoad, knobs: { ...k },
    leg: acc, inductorCopperW: 0, inductorCoreW: 0, deltaBT: 0, bPeakT: NaN, bSatT: NaN, capOut: capState({ esrOhm: 0, rippleRatingA: Infinity }, 0), capIn: capLink,
    vOutRipplePpV: 0, pinW, poutW, semiW: acc.semiW, gateDriverW: acc.gateDriverW, passiveW: capLink.lossW, totalLossW,
    efficiency: pinW > 0 ? poutW / pinW : 0,
    balanceResidual: pinW > 0 ? Math.abs(pinW - poutW - totalLossW) / pinW : 0,
  };
}

export function electricalPoint(plant: Plant, k: Knobs, tjH: number, tjL: number): ElectricalPoint {
  return plant.conv.kind === 'buck' ? buckElectrical(plant, k, tjH, tjL) : halfBridgeElectrical(plant, k, tjH, tjL);
}

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
  // `+lo`, `+hi`: with the bare arguments in the bracket, the optimizing compiler kept the bounds
  // as generic values and boxed every computed update in a fresh heap number.
  let a = +lo;
  let b = +hi;
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

/** Fill `out` with a capacitor's ripple state at mean-square ripple current `msA2`. */
function setCapState(c: { esrOhm: number; rippleRatingA: number }, msA2: number, out: CapacitorState): CapacitorState {
  const rms = Math.sqrt(Math.max(msA2, 0));
  out.rmsA = rms;
  out.lossW = c.esrOhm * rms * rms;
  out.ratingA = c.rippleRatingA;
  out.utilization = rms / c.rippleRatingA;
  return out;
}

function newCapState(): CapacitorState {
  return { rmsA: 0, lossW: 0, ratingA: 0, utilization: 0 };
}

function capState(c: { esrOhm: number; rippleRatingA: number }, msA2: number): CapacitorState {
  return setCapState(c, msA2, newCapState());
}

function snapshot(r: LegResult): LegResult {
  return { ...r, hs: { ...r.hs }, ls: { ...r.ls } };
}

/**
 * A solved point before it is built into an `ElectricalPoint`: the losses the thermal network
 * takes, and (buck) the solve's outcome with the leg and the passives in reusable storage. The
 * electro-thermal iteration of the operating point drafts a point at every step but builds only
 * the last one: building (a snapshot of the leg, capacitor states, a copy of the knobs) at every
 * step was a fifth of the garbage a device-spread study produced. A draft builds one point.
 */
export interface ElectricalDraft {
  /** Loss in the high-side and low-side device (junction heat) and in the passives. */
  hsLossW: number;
  lsLossW: number;
  passiveW: number;
  plant: Plant | null;
  k: Knobs | null;
  /** Half-bridge: built while solving (its phase average assembles the point anyway). */
  point: ElectricalPoint | null;
  vinV: number;
  voutV: number;
  ioA: number;
  duty: number;
  regulated: boolean;
  readonly leg: LegResult;
  inductorCopperW: number;
  inductorCoreW: number;
  acCopperW: number;
  readonly capOut: CapacitorState;
  readonly capIn: CapacitorState;
}

export function newElectricalDraft(): ElectricalDraft {
  return {
    hsLossW: 0, lsLossW: 0, passiveW: 0, plant: null, k: null, point: null, vinV: 0, voutV: 0, ioA: 0, duty: 0,
    regulated: false, leg: newLegResult(), inductorCopperW: 0, inductorCoreW: 0, acCopperW: 0, capOut: newCapState(), capIn: newCapState(),
  };
}

function loadCurrentA(b: BuckParams, vo: number): number {
  return 'rOhm' in b.load ? vo / b.load.rOhm : b.load.iA;
}

/** State of the buck duty solve, read by `buckDutyResidual` (no closure per call on the hot path). */
const buckSolve = { plant: null as Plant | null, k: null as Knobs | null, vin: 0, io: 0, vFar: 0, lH: 1, tjH: 25, tjL: 25, leg: null as LegResult | null };

/** Node average minus the far-end voltage at duty d: zero when the output is regulated. */
function buckDutyResidual(d: number): number {
  const st = buckSolve;
  return legAt(st.plant as Plant, st.k as Knobs, st.vin, st.io, st.vFar, st.lH, d, st.tjH, st.tjL, st.leg as LegResult).vNodeMeanV - st.vFar;
}

/**
 * Duty pinned at a limit: the output settles where the node average meets the branch drop.
 * Returns that output voltage, with `leg` evaluated there. A function of its own so that the
 * regulated path, taken at nearly every call, creates no closure context.
 */
function pinnedDutyOutputV(plant: Plant, k: Knobs, vin: number, rL: number, duty: number, voGuessV: number, tjH: number, tjL: number, leg: LegResult): number {
  const b = plant.conv as BuckParams;
  const h = (v: number): number => {
    const i = loadCurrentA(b, v);
    return v + i * rL - legAt(plant, k, vin, i, v + i * rL, b.lH, duty, tjH, tjL, leg).vNodeMeanV;
  };
  const vo = solveIncreasing(h, 0, vin, voGuessV, 1e-12 * vin).d;
  const io = loadCurrentA(b, vo);
  legAt(plant, k, vin, io, vo + io * rL, b.lH, duty, tjH, tjL, leg);
  return vo;
}

/** Buck, load from the plant; `vinOverrideV` replaces the input voltage. Solves into `out`. */
function draftBuck(plant: Plant, k: Knobs, tjH: number, tjL: number, vinOverrideV: number | undefined, out: ElectricalDraft): ElectricalDraft {
  const b = plant.conv as BuckParams;
  const vin = vinOverrideV ?? b.vinV;
  const rL = dcrOhm(b.dcr20Ohm, b.inductorTempC);
  const leg = out.leg;
  let vo = b.voutRefV;
  let io = loadCurrentA(b, vo);
  const st = buckSolve;
  st.plant = plant; st.k = k; st.vin = vin; st.io = io; st.vFar = vo + io * rL; st.lH = b.lH; st.tjH = tjH; st.tjL = tjL; st.leg = leg;
  const sol = solveIncreasing(buckDutyResidual, plant.dutyMin, plant.dutyMax, (vo + io * rL) / vin, 1e-12 * vin);
  st.plant = st.k = st.leg = null;
  const duty = sol.d;
  const regulated = sol.ok;
  if (!regulated) {
    vo = pinnedDutyOutputV(plant, k, vin, rL, duty, vo, tjH, tjL, leg);
    io = loadCurrentA(b, vo);
  }
  // Regulated: solveIncreasing evaluated g last at the returned duty, so `leg` holds that point.
  out.plant = plant; out.k = k; out.point = null;
  out.vinV = vin; out.voutV = vo; out.ioA = io; out.duty = duty; out.regulated = regulated;
  out.inductorCopperW = rL * leg.iMsA2;
  out.inductorCoreW = coreLossW(b.core, b.lH, leg.ripplePpA, k.fswHz, leg.riseFraction);
  setCapState(b.cout, leg.iMsA2 - io * io, out.capOut);
  setCapState(b.cin, leg.iBusMsA2 - leg.iBusCondMeanA * leg.iBusCondMeanA, out.capIn);
  out.acCopperW = rL * (leg.iMsA2 - io * io);
  out.passiveW = out.inductorCopperW + out.inductorCoreW + out.capOut.lossW + out.capIn.lossW;
  out.hsLossW = leg.hs.totalW;
  out.lsLossW = leg.ls.totalW;
  return out;
}

function buildBuck(d: ElectricalDraft, plant: Plant, k: Knobs): ElectricalPoint {
  const b = plant.conv as BuckParams;
  const leg = d.leg;
  const vin = d.vinV, vo = d.voutV, io = d.ioA;
  const copperW = d.inductorCopperW;
  const coreW = d.inductorCoreW;
  const capOut = { ...d.capOut };
  const capIn = { ...d.capIn };
  const pNode = leg.vNodeMeanV * io;
  const passiveW = d.passiveW;
  const pinW = pNode + leg.semiW + leg.gateDriverW + d.acCopperW + coreW + capOut.lossW + capIn.lossW;
  const poutW = vo * io;
  const totalLossW = leg.semiW + leg.gateDriverW + passiveW;
  const ripplePp = leg.ripplePpA / (8 * b.cout.cF * k.fswHz) + leg.ripplePpA * b.cout.esrOhm;
  return {
    topology: 'buck', duty: d.duty, regulated: d.regulated, vBusV: vin, vOutV: vo, iMeanA: io, knobs: { ...k }, leg: snapshot(leg),
    inductorCopperW: copperW, inductorCoreW: coreW, deltaBT: b.core ? deltaBT(b.core, b.lH, leg.ripplePpA) : 0,
    bPeakT: b.core ? peakFluxT(b.core, b.lH, Math.max(Math.abs(leg.iPeakA), Math.abs(leg.iValleyA))) : NaN,
    bSatT: b.core ? (b.core.bSatT ?? Infinity) : NaN,
    capOut, capIn, vOutRipplePpV: ripplePp, pinW, poutW, semiW: leg.semiW, gateDriverW: leg.gateDriverW, passiveW, totalLossW,
    efficiency: pinW > 0 ? poutW / pinW : 0,
    balanceResidual: pinW > 0 ? Math.abs(pinW - poutW - totalLossW) / pinW : 0,
  };
}

/** Scratch draft of `electricalPoint` and `buckElectrical` (built before they return). */
const pointDraft = newElectricalDraft();

/** Buck, load from the plant; `vinOverrideV` replaces the input voltage. */
export function buckElectrical(plant: Plant, k: Knobs, tjH: number, tjL: number, vinOverrideV?: number): ElectricalPoint {
  return buildElectrical(draftBuck(plant, k, tjH, tjL, vinOverrideV, pointDraft));
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

/** Solve the point at (k, Tj) into `out` without building it (see `ElectricalDraft`). */
export function draftElectrical(plant: Plant, k: Knobs, tjH: number, tjL: number, out: ElectricalDraft): ElectricalDraft {
  if (plant.conv.kind === 'buck') return draftBuck(plant, k, tjH, tjL, undefined, out);
  const point = halfBridgeElectrical(plant, k, tjH, tjL);
  out.plant = plant; out.k = k; out.point = point;
  out.hsLossW = point.leg.hs.totalW;
  out.lsLossW = point.leg.ls.totalW;
  out.passiveW = point.passiveW;
  return out;
}

/**
 * The point a draft holds, as a new object independent of the draft. A draft builds once: its
 * references to the plant and knobs are released here (a module-level draft keeps nothing alive).
 */
export function buildElectrical(d: ElectricalDraft): ElectricalPoint {
  const { plant, k, point } = d;
  if (!plant || !k) throw new Error('buildElectrical: no drafted point to build (a draft builds one point)');
  d.plant = d.k = d.point = null;
  return point ?? buildBuck(d, plant, k);
}

export function electricalPoint(plant: Plant, k: Knobs, tjH: number, tjL: number): ElectricalPoint {
  return buildElectrical(draftElectrical(plant, k, tjH, tjL, pointDraft));
}

/**
 * One switching period of a half-bridge leg (high-side and low-side MOSFET, each with its
 * body diode) feeding an inductive branch, cycle-averaged but ripple-aware. This is the single
 * source of truth for switch-node voltage, peak/valley currents and every semiconductor loss:
 * the buck and the half-bridge topologies, the operating point, the simulator, the supervisor's
 * feed-forward and the linearization all call `evaluateLeg`.
 *
 * Sign convention: the branch current iA flows out of the switch node into the inductor.
 * Timing convention: each turn-on is delayed by the dead time (rising-edge delay), so the
 * high-side channel conducts for D·T − gap₁ and the low side for (1 − D)·T − gap₂, where the
 * gaps are the effective dead times after driver delays. During a gap the node follows the
 * current: it swings at the rate i/C_oss,total and then clamps on a body diode, or stays on
 * the outgoing device's diode when the current opposes the swing (hard commutation next).
 */
import {
  type DeviceParams,
  type GateDriveParams,
  type SwitchTiming,
  channelDropAt,
  diodeDropV,
  gateChargeCoulomb,
  kAt,
  newSwitchTiming,
  qrrCoulomb,
  rdsTempFactor,
  saturationCurrentAt,
  switchTiming,
  turnOffEnergyJ,
  turnOnEnergyJ,
  vthAt,
} from './device.ts';

export interface LegParams {
  readonly hs: DeviceParams;
  readonly ls: DeviceParams;
  readonly gate: GateDriveParams;
  readonly lowSideMode: 'sync' | 'diode';
  readonly commutationLoopH: number;
  readonly skewS: number;
}

/** The knobs and states at which the leg is evaluated. */
export interface LegInput {
  vBusV: number;
  /** Mean branch current, out of the switch node. */
  iMeanA: number;
  /** Voltage at the far end of the inductance including resistive drops (buck: Vout + i·DCR). */
  vFarV: number;
  lH: number;
  duty: number;
  fswHz: number;
  deadTimeS: number;
  vDriveV: number;
  tjHsC: number;
  tjLsC: number;
}

/** Fill a reusable LegInput in place (hot paths allocate nothing). */
export function setLegInput(
  out: LegInput, vBusV: number, iMeanA: number, vFarV: number, lH: number, duty: number,
  knobs: { readonly fswHz: number; readonly deadTimeS: number; readonly vDriveV: number }, tjHsC: number, tjLsC: number,
): LegInput {
  out.vBusV = vBusV;
  out.iMeanA = iMeanA;
  out.vFarV = vFarV;
  out.lH = lH;
  out.duty = duty;
  out.fswHz = knobs.fswHz;
  out.deadTimeS = knobs.deadTimeS;
  out.vDriveV = knobs.vDriveV;
  out.tjHsC = tjHsC;
  out.tjLsC = tjLsC;
  return out;
}

export function newLegInput(): LegInput {
  return { vBusV: 0, iMeanA: 0, vFarV: 0, lH: 1, duty: 0.5, fswHz: 1, deadTimeS: 0, vDriveV: 0, tjHsC: 25, tjLsC: 25 };
}

export interface DeviceLoss {
  conductionW: number;
  diodeW: number;
  turnOnW: number;
  turnOffW: number;
  cossW: number;
  recoveryW: number;
  gateW: number;
  shootThroughW: number;
  totalW: number;
}

export interface LegResult {
  vNodeMeanV: number;
  iPeakA: number;
  iValleyA: number;
  ripplePpA: number;
  /** Mean square of the branch current over a period. */
  iMsA2: number;
  /** Fraction of the period with rising current (for the iGSE duty term). */
  riseFraction: number;
  /** Mean and mean-square of the current drawn through the high side from the bus (conduction only). */
  iBusCondMeanA: number;
  iBusMsA2: number;
  dcm: boolean;
  hs: DeviceLoss;
  ls: DeviceLoss;
  /** Gate-drive power dissipated in the driver and external resistors (not in the devices). */
  gateDriverW: number;
  /** Effective dead time (signed) at the low→high and high→low edges. */
  gapRiseS: number;
  gapFallS: number;
  /** Time the body diodes conduct at each edge. */
  diodeRiseS: number;
  diodeFallS: number;
  shootThrough: boolean;
  overlapS: number;
  shootPeakA: number;
  /** The branch current exceeds what the channel can carry at this gate drive. */
  hsSaturated: boolean;
  lsSaturated: boolean;
  hsCannotTurnOn: boolean;
  lsCannotTurnOn: boolean;
  /** Semiconductor loss (both devices). */
  semiW: number;
}

function newDeviceLoss(): DeviceLoss {
  return { conductionW: 0, diodeW: 0, turnOnW: 0, turnOffW: 0, cossW: 0, recoveryW: 0, gateW: 0, shootThroughW: 0, totalW: 0 };
}

export function newLegResult(): LegResult {
  return {
    vNodeMeanV: 0, iPeakA: 0, iValleyA: 0, ripplePpA: 0, iMsA2: 0, riseFraction: 0.5, iBusCondMeanA: 0, iBusMsA2: 0,
    dcm: false, hs: newDeviceLoss(), ls: newDeviceLoss(), gateDriverW: 0, gapRiseS: 0, gapFallS: 0, diodeRiseS: 0,
    diodeFallS: 0, shootThrough: false, overlapS: 0, shootPeakA: 0, hsSaturated: false, lsSaturated: false,
    hsCannotTurnOn: false, lsCannotTurnOn: false, semiW: 0,
  };
}

function clearLoss(d: DeviceLoss): void {
  d.conductionW = d.diodeW = d.turnOnW = d.turnOffW = d.cossW = d.recoveryW = d.gateW = d.shootThroughW = d.totalW = 0;
}

function sumLoss(d: DeviceLoss): void {
  d.totalW = d.conductionW + d.diodeW + d.turnOnW + d.turnOffW + d.cossW + d.recoveryW + d.gateW + d.shootThroughW;
}

// 4-point Gauss–Legendre on [0, 1]: exact for the mean of polynomials up to degree 7.
const GL_X = [0.0694318442029737, 0.3300094782075719, 0.6699905217924281, 0.9305681557970263];
const GL_W = [0.1739274225687269, 0.3260725774312731, 0.3260725774312731, 0.1739274225687269];

/**
 * A linear current ramp `fromA` → `toA` over one conduction interval, set by the caller, and its
 * conduction means: loss (W), drop (V, signed as seen from the node) and current; with the
 * channel's saturation current at the same gate drive and Tj. The end currents travel in the
 * object rather than as arguments (and the saturation current comes back in it): doubles passed
 * to or returned from a call the compiler does not inline are boxed in fresh heap numbers, and
 * this runs several times per evaluation.
 */
interface Ramp { fromA: number; toA: number; lossW: number; dropV: number; iMeanA: number; iMsA2: number; iSatA: number }
const rampHs: Ramp = { fromA: 0, toA: 0, lossW: 0, dropV: 0, iMeanA: 0, iMsA2: 0, iSatA: 0 };
const rampLs: Ramp = { fromA: 0, toA: 0, lossW: 0, dropV: 0, iMeanA: 0, iMsA2: 0, iSatA: 0 };

/**
 * Mean over the current ramp in `out` of a device's conduction, written back into `out`: `hs`
 * true for the high side (positive current is its first quadrant), at that device's junction
 * temperature and the gate drive in `x`. Splits at a zero crossing so the quadrature never
 * straddles the channel/diode change of law.
 */
function conductRamp(p: LegParams, hs: boolean, x: LegInput, out: Ramp): Ramp {
  const i0 = out.fromA;
  const i1 = out.toA;
  out.lossW = out.dropV = 0;
  out.iMeanA = 0.5 * (i0 + i1);
  out.iMsA2 = (i0 * i0 + i0 * i1 + i1 * i1) / 3;
  const vgs = x.vDriveV;
  const tjC = hs ? x.tjHsC : x.tjLsC;
  // Drops are capped at the bus. The cap is computed here, not passed in: a plain argument
  // reaching `v` below next to computed drops made the optimizing compiler box every drop of
  // the quadrature in a fresh heap number (about half a kilobyte of garbage per leg evaluation).
  const vCap = Math.max(x.vBusV, 1e-3);
  const dev = hs ? p.hs : p.ls;
  const chOn = hs || p.lowSideMode === 'sync';
  // Temperature-dependent channel constants once per ramp (same arithmetic as channelDropV).
  const kT = kAt(dev, tjC);
  const vov = vgs - vthAt(dev, tjC);
  const rs = dev.rSeries25Ohm * rdsTempFactor(dev, tjC);
  out.iSatA = saturationCurrentAt(kT, vov);
  const segs = i0 * i1 < 0 ? 2 : 1;
  const xz = segs === 2 ? i0 / (i0 - i1) : 1;
  for (let s = 0; s < segs; s++) {
    const a = s === 0 ? i0 : 0;
    const b = s === 0 ? (segs === 2 ? 0 : i1) : i1;
    const w = segs === 1 ? 1 : s === 0 ? xz : 1 - xz;
    for (let k = 0; k < 4; k++) {
      const i = a + (b - a) * GL_X[k];
      // First quadrant for this device: HS with i > 0, LS with i < 0.
      const forward = hs ? i > 0 : i < 0;
      const mag = Math.abs(i);
      let v: number;
      // Third quadrant: channel and body diode in parallel, the smaller drop (as reverseDropV).
      if (forward) v = chOn ? channelDropAt(kT, vov, rs, dev.lambdaPerV, mag, vCap) : vCap;
      else v = chOn ? Math.min(diodeDropV(dev, mag, tjC), channelDropAt(kT, vov, rs, dev.lambdaPerV, mag, vCap)) : diodeDropV(dev, mag, tjC);
      out.lossW += w * GL_W[k] * v * mag;
      // Node voltage offset: HS forward lowers the node below the bus, LS reverse lowers it below 0.
      const signedDrop = hs ? (forward ? -v : v) : forward ? v : -v;
      out.dropV += w * GL_W[k] * signedDrop;
    }
  }
  return out;
}

const tHs: SwitchTiming = newSwitchTiming();
const tLs: SwitchTiming = newSwitchTiming();
/** Incoming device's timing at the current it actually switches on (the edge current). */
const tOnEdge: SwitchTiming = newSwitchTiming();

/**
 * Timing at the mean current, remembered per side: a duty solve evaluates the leg several times
 * at the same current, temperature and drive, and only the duty changes between calls.
 */
interface TimingMemo {
  dev: DeviceParams | null; gate: GateDriveParams | null; vDriveV: number; vBusV: number; iA: number; tjC: number; t: SwitchTiming;
}
const memoHs: TimingMemo = { dev: null, gate: null, vDriveV: NaN, vBusV: NaN, iA: NaN, tjC: NaN, t: newSwitchTiming() };
const memoLs: TimingMemo = { dev: null, gate: null, vDriveV: NaN, vBusV: NaN, iA: NaN, tjC: NaN, t: newSwitchTiming() };

function timingAtMean(m: TimingMemo, dev: DeviceParams, gate: GateDriveParams, vDriveV: number, vBusV: number, iA: number, tjC: number, out: SwitchTiming): void {
  if (m.dev !== dev || m.gate !== gate || m.vDriveV !== vDriveV || m.vBusV !== vBusV || m.iA !== iA || m.tjC !== tjC) {
    switchTiming(dev, gate, vDriveV, vBusV, iA, tjC, m.t);
    m.dev = dev; m.gate = gate; m.vDriveV = vDriveV; m.vBusV = vBusV; m.iA = iA; m.tjC = tjC;
  }
  const t = m.t;
  out.plateauV = t.plateauV; out.canTurnOn = t.canTurnOn; out.tdOnS = t.tdOnS; out.tRiseCurrentS = t.tRiseCurrentS;
  out.tFallVoltageS = t.tFallVoltageS; out.tdOffS = t.tdOffS; out.tRiseVoltageS = t.tRiseVoltageS; out.tFallCurrentS = t.tFallCurrentS;
}

/** Per-edge outcome, in energies (J) and node volt-seconds during the gap. */
interface Edge {
  areaVs: number; diodeS: number; eOnJ: number; eOffJ: number; eCossJ: number; eRrJ: number; eDiodeJ: number;
  hardInIsHs: boolean; diodeInHs: boolean; offOutHard: boolean;
}
const edgeRise: Edge = { areaVs: 0, diodeS: 0, eOnJ: 0, eOffJ: 0, eCossJ: 0, eRrJ: 0, eDiodeJ: 0, hardInIsHs: true, diodeInHs: false, offOutHard: false };
const edgeFall: Edge = { ...edgeRise };

/**
 * One commutation. `toHigh` true: low side hands over to high side (node starts near 0),
 * false: high to low (node starts near the bus). `gapS` is the effective dead time (≥ 0).
 * The diode carries the edge current `i` for the whole gap: exact while the gap is short next
 * to the period; for gaps comparable with the low-side interval (dead time ≳ (1 − D)·T) the
 * ramp during the gap is ignored and the diode loss is underestimated.
 */
function commutate(p: LegParams, toHigh: boolean, i: number, gapS: number, vBus: number, vDriveV: number, tjH: number, tjL: number, out: Edge): void {
  const cTot = p.hs.cossF + p.ls.cossF;
  const outT = toHigh ? tLs : tHs;
  const inDevTj = toHigh ? tjH : tjL;
  const outDev = toHigh ? p.ls : p.hs;
  const outTj = toHigh ? tjL : tjH;
  const inDev = toHigh ? p.hs : p.ls;
  const startV = toHigh ? 0 : vBus;
  const targetV = toHigh ? vBus : 0;
  // Current that swings the node toward the incoming rail: negative current lifts it, positive pulls it down.
  // A product, not `toHigh ? -i : i`: the bare argument in one arm made the compiler box −i.
  const helping = (toHigh ? -1 : 1) * i;
  const mag = Math.abs(i);
  out.areaVs = out.diodeS = out.eOnJ = out.eOffJ = out.eCossJ = out.eRrJ = out.eDiodeJ = 0;
  out.hardInIsHs = toHigh;
  out.offOutHard = false;
  out.diodeInHs = toHigh;
  const outgoingSwitched = toHigh ? p.lowSideMode === 'sync' : true;
  const incomingSwitched = toHigh ? true : p.lowSideMode === 'sync';
  if (helping > 0 && !incomingSwitched) {
    // Diode mode, high side turning off: the node swings onto the low-side diode by itself;
    // that diode's conduction is counted with the low-side interval.
    out.eOffJ = turnOffEnergyJ(vBus, mag, outT);
    out.offOutHard = true;
  } else if (helping > 0) {
    // Outgoing device turns off with current in its first quadrant: hard turn-off, node swings on its own.
    if (outgoingSwitched) {
      out.eOffJ = turnOffEnergyJ(vBus, mag, outT);
      out.offOutHard = true;
    }
    const swingS = Math.max((cTot * vBus) / helping, outgoingSwitched ? outT.tRiseVoltageS : 0);
    if (swingS >= gapS) {
      const frac = gapS > 0 ? gapS / swingS : 0;
      const vReached = startV + (targetV - startV) * frac;
      out.areaVs = gapS * 0.5 * (startV + vReached);
      const vRem = Math.abs(targetV - vReached);
      out.eCossJ = 0.5 * cTot * vRem * vRem;
    } else {
      out.diodeS = gapS - swingS;
      const vf = diodeDropV(inDev, mag, inDevTj);
      out.eDiodeJ = vf * mag * out.diodeS;
      out.diodeInHs = toHigh;
      const clampV = toHigh ? vBus + vf : -vf;
      out.areaVs = swingS * 0.5 * (startV + targetV) + out.diodeS * clampV;
    }
  } else {
    // Current opposes the swing: the outgoing device's diode holds the node, the incoming one switches hard.
    out.diodeS = gapS;
    const vf = diodeDropV(outDev, mag, outTj);
    out.eDiodeJ = vf * mag * gapS;
    out.diodeInHs = !toHigh;
    out.areaVs = gapS * (toHigh ? -vf : vBus + vf);
    // The incoming device turns on at this edge's current (the valley for a buck high side),
    // not at the current it carries when it later turns off: its Miller plateau sits there.
    switchTiming(inDev, p.gate, vDriveV, vBus, mag, inDevTj, tOnEdge);
    out.eOnJ = turnOnEnergyJ(vBus, mag, tOnEdge);
    out.eCossJ = 0.5 * cTot * vBus * vBus;
    out.eRrJ = qrrCoulomb(outDev, mag, outTj) * vBus;
  }
}

/** Share of the gate-drive power dissipated in the device's internal gate resistance (mean of on and off paths). */
function gateShare(p: LegParams, dev: DeviceParams): number {
  const rOn = p.gate.rDriverOnOhm + p.gate.rGateExtOhm + dev.rGateIntOhm;
  const rOff = p.gate.rDriverOffOhm + p.gate.rGateExtOhm + dev.rGateIntOhm;
  return 0.5 * (dev.rGateIntOhm / rOn + dev.rGateIntOhm / rOff);
}

/**
 * Evaluate the leg over one switching period. Writes into and returns `out` (no allocation).
 * Two passes settle the ripple against the conduction drops.
 */
export function evaluateLeg(p: LegParams, x: LegInput, out: LegResult): LegResult {
  const T = 1 / x.fswHz;
  const vBus = x.vBusV;
  const vg = x.vDriveV;
  const diodeMode = p.lowSideMode === 'diode';
  clearLoss(out.hs);
  clearLoss(out.ls);
  const iM = x.iMeanA;
  const tjH = x.tjHsC;
  const tjL = x.tjLsC;

  let delta = ((vBus - x.vFarV) * x.duty * T) / x.lH;
  let gapRise = 0;
  let gapFall = 0;
  let tHsOn = x.duty * T;
  let tLsOn = (1 - x.duty) * T;
  let dcm = false;
  let d2 = 0;
  for (let pass = 0; pass < 2; pass++) {
    const iEndHigh = iM + 0.5 * delta;
    const iEndLow = iM - 0.5 * delta;
    if (pass === 0) {
      timingAtMean(memoHs, p.hs, p.gate, vg, vBus, Math.abs(iM), tjH, tHs);
      timingAtMean(memoLs, p.ls, p.gate, vg, vBus, Math.abs(iM), tjL, tLs);
    } else {
      switchTiming(p.hs, p.gate, vg, vBus, Math.abs(iEndHigh), tjH, tHs);
      switchTiming(p.ls, p.gate, vg, vBus, Math.abs(iEndLow), tjL, tLs);
    }
    if (diodeMode) {
      gapRise = 0;
      gapFall = 0;
    } else {
      gapRise = x.deadTimeS + tHs.tdOnS - tLs.tdOffS - p.skewS;
      gapFall = x.deadTimeS + tLs.tdOnS - tHs.tdOffS - p.skewS;
    }
    // A gap cannot outlast the interval it delays: when the dead time exceeds a device's
    // command pulse that device never turns on and the diode carries the rest of the interval
    // (the period is gap₁ + t_HS + gap₂ + t_LS = T, never more).
    const gR = Math.min(Math.max(gapRise, 0), x.duty * T);
    const gF = Math.min(Math.max(gapFall, 0), (1 - x.duty) * T);
    tHsOn = x.duty * T - gR;
    tLsOn = (1 - x.duty) * T - gF;
    rampHs.fromA = iEndLow; rampHs.toA = iEndHigh;
    conductRamp(p, true, x, rampHs);
    const vHigh = vBus + rampHs.dropV;
    delta = ((vHigh - x.vFarV) * tHsOn) / x.lH;
    // Diode mode cannot carry negative current: discontinuous conduction (Sun, Mitchell, Greuel,
    // Krein, Bass, "Averaged modeling of PWM converters operating in DCM", IEEE TPEL 16(4), 2001).
    dcm = diodeMode && iM - 0.5 * delta < 0 && delta > 0;
  }

  let iPeak: number;
  let iValley: number;
  let vNode: number;
  let busMean: number;
  let busMs: number;
  let iMs: number;
  out.gapRiseS = gapRise;
  out.gapFallS = gapFall;
  out.shootThrough = false;
  out.overlapS = 0;
  out.shootPeakA = 0;
  out.diodeRiseS = out.diodeFallS = 0;

  if (dcm) {
    const ipk = Math.max(delta, 0);
    d2 = ipk > 0 ? Math.max(0, Math.min((2 * iM) / ipk - x.duty, 1 - x.duty)) : 0;
    iPeak = ipk;
    iValley = 0;
    rampHs.fromA = 0; rampHs.toA = ipk;
    conductRamp(p, true, x, rampHs);
    rampLs.fromA = ipk; rampLs.toA = 0;
    conductRamp(p, false, x, rampLs);
    const vHigh = vBus + rampHs.dropV;
    const vLow = rampLs.dropV;
    vNode = vHigh * x.duty + vLow * d2 + x.vFarV * (1 - x.duty - d2);
    out.hs.conductionW = rampHs.lossW * x.duty;
    out.ls.diodeW = rampLs.lossW * d2;
    busMean = rampHs.iMeanA * x.duty;
    busMs = rampHs.iMsA2 * x.duty;
    iMs = rampHs.iMsA2 * (x.duty + d2);
    // Turn-on at zero current into a node resting at vFar: only the output charge is lost.
    const cTot = p.hs.cossF + p.ls.cossF;
    const vSw = Math.max(vBus - x.vFarV, 0);
    out.hs.cossW = 0.5 * cTot * vSw * vSw * x.fswHz;
    switchTiming(p.hs, p.gate, vg, vBus, ipk, tjH, tHs);
    out.hs.turnOffW = turnOffEnergyJ(vBus, ipk, tHs) * x.fswHz;
    out.riseFraction = x.duty;
    out.diodeFallS = d2 * T;
  } else {
    iPeak = iM + 0.5 * delta;
    iValley = iM - 0.5 * delta;
    // Turn-off timing at the settled edge currents (the passes above used the previous ripple
    // estimate): the high side turns off at the peak, the low side at the valley.
    switchTiming(p.hs, p.gate, vg, vBus, Math.max(iPeak, 0), tjH, tHs);
    switchTiming(p.ls, p.gate, vg, vBus, Math.max(-iValley, 0), tjL, tLs);
    rampHs.fromA = iValley; rampHs.toA = iPeak;
    conductRamp(p, true, x, rampHs);
    rampLs.fromA = iPeak; rampLs.toA = iValley;
    conductRamp(p, false, x, rampLs);
    const fHs = tHsOn / T;
    const fLs = tLsOn / T;
    out.hs.conductionW = rampHs.lossW * fHs;
    if (diodeMode) out.ls.diodeW = rampLs.lossW * fLs;
    else out.ls.conductionW = rampLs.lossW * fLs;
    const gR = Math.min(Math.max(gapRise, 0), x.duty * T);
    const gF = Math.min(Math.max(gapFall, 0), (1 - x.duty) * T);
    commutate(p, true, iValley, gR, vBus, vg, tjH, tjL, edgeRise);
    commutate(p, false, iPeak, gF, vBus, vg, tjH, tjL, edgeFall);
    vNode = ((vBus + rampHs.dropV) * tHsOn + rampLs.dropV * tLsOn + edgeRise.areaVs + edgeFall.areaVs) / T;
    const fsw = x.fswHz;
    for (let ei = 0; ei < 2; ei++) {
      const e = ei === 0 ? edgeRise : edgeFall;
      const inLoss = e.hardInIsHs ? out.hs : out.ls;
      const outLoss = e.hardInIsHs ? out.ls : out.hs;
      inLoss.turnOnW += e.eOnJ * fsw;
      inLoss.cossW += e.eCossJ * fsw;
      inLoss.recoveryW += e.eRrJ * fsw;
      outLoss.turnOffW += e.eOffJ * fsw;
      (e.diodeInHs ? out.hs : out.ls).diodeW += e.eDiodeJ * fsw;
    }
    out.diodeRiseS = edgeRise.diodeS;
    out.diodeFallS = edgeFall.diodeS;
    // The high side carries the branch current while it conducts, and through its diode in a gap
    // where the node sits at the bus (negative current).
    busMean = rampHs.iMeanA * fHs;
    busMs = rampHs.iMsA2 * fHs;
    if (iValley < 0 && edgeRise.diodeInHs) { busMean += (iValley * edgeRise.diodeS) / T; busMs += (iValley * iValley * edgeRise.diodeS) / T; }
    if (iPeak < 0 && edgeFall.diodeInHs) { busMean += (iPeak * edgeFall.diodeS) / T; busMs += (iPeak * iPeak * edgeFall.diodeS) / T; }
    iMs = iM * iM + (delta * delta) / 12;
    out.riseFraction = (tHsOn + gR) / T;
    // Shoot-through: channels overlap when the effective gap is negative. The loop current
    // ramps at V/Lσ (E = V²Δt²/(2Lσ), Jeong & Park-style estimate, REFERENCES.md) until the
    // channels saturate; past that the bus voltage stands across the saturated channels:
    // E = ½·Lσ·Isat² + V·Isat·(Δt − Lσ·Isat/V). Each edge with its own overlap. Indicative only.
    const overlap = Math.max(-gapRise, -gapFall, 0);
    if (overlap > 0) {
      const iLimit = Math.min(rampHs.iSatA, rampLs.iSatA);
      const lS = p.commutationLoopH;
      const shootEnergyJ = (dtS: number): number => {
        if (!(dtS > 0)) return 0;
        const iLin = (vBus * dtS) / lS;
        if (iLin <= iLimit) return 0.5 * vBus * iLin * dtS;
        return 0.5 * lS * iLimit * iLimit + vBus * iLimit * (dtS - (lS * iLimit) / vBus);
      };
      const eJ = shootEnergyJ(-gapRise) + shootEnergyJ(-gapFall);
      out.hs.shootThroughW = out.ls.shootThroughW = 0.5 * eJ * fsw;
      out.shootThrough = true;
      out.overlapS = overlap;
      out.shootPeakA = Math.min((vBus * overlap) / lS, iLimit);
    }
  }

  // Gate drive Qg·ΔV·fsw, split between internal gate resistance (device) and driver + external.
  const swing = vg - p.gate.vOffV;
  const pgHs = gateChargeCoulomb(p.hs, vg, p.gate.vOffV) * swing * x.fswHz;
  const pgLs = diodeMode ? 0 : gateChargeCoulomb(p.ls, vg, p.gate.vOffV) * swing * x.fswHz;
  const shHs = gateShare(p, p.hs);
  const shLs = gateShare(p, p.ls);
  out.hs.gateW = pgHs * shHs;
  out.ls.gateW = pgLs * shLs;
  out.gateDriverW = pgHs * (1 - shHs) + pgLs * (1 - shLs);

  out.vNodeMeanV = vNode;
  out.iPeakA = iPeak;
  out.iValleyA = iValley;
  out.ripplePpA = Math.abs(iPeak - iValley);
  out.iMsA2 = iMs;
  out.iBusCondMeanA = busMean;
  out.iBusMsA2 = busMs;
  out.dcm = dcm;
  // Saturation currents at the gate drive and each Tj, from the last ramps (evaluated there).
  const hsIsat = rampHs.iSatA;
  const lsIsat = rampLs.iSatA;
  out.hsSaturated = Math.max(iPeak, iValley) > hsIsat;
  out.lsSaturated = !diodeMode && -Math.min(iPeak, iValley) > lsIsat;
  // tHs/tLs now hold the timings at the settled peak (high side) and valley (low side).
  out.hsCannotTurnOn = !tHs.canTurnOn;
  out.lsCannotTurnOn = !diodeMode && !tLs.canTurnOn;
  sumLoss(out.hs);
  sumLoss(out.ls);
  out.semiW = out.hs.totalW + out.ls.totalW;
  return out;
}

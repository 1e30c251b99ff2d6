/**
 * Cycle-averaged, ripple-aware converter dynamics. The switch-node average, ripple and losses
 * come from `evaluateLeg` (the same code as the steady-state point), so saturation, dead-time
 * error, diode mode and current reversal appear in the dynamics by construction.
 *
 * Buck states: [iL (A), vC (V, output capacitor without ESR)].
 *   L·diL/dt = v̄_node − v_out − DCR·iL,  C·dvC/dt = iL − i_load,  v_out = vC + ESR·(iL − i_load).
 * Half-bridge states: [i (A, load branch), vLink (V, DC link)].
 *   L·di/dt = v̄_node − vLink/2 − e − R·i,  C·dvLink/dt = (V_dc − vLink)/R_s − i_bus.
 */
import { type LegInput, type LegResult, evaluateLeg, newLegInput, newLegResult, setLegInput } from './leg.ts';
import { coreLossW, dcrOhm } from './magnetics.ts';
import type { BuckParams, HalfBridgeParams, Plant } from './plant.ts';

export const BUCK_LAYOUT = Object.freeze({ n: 2, iL: 0, vC: 1 });
export const HB_LAYOUT = Object.freeze({ n: 2, i: 0, vLink: 1 });

/** Everything outside the states that the averaged plant depends on at an instant. */
export interface AvgInputs {
  duty: number;
  fswHz: number;
  deadTimeS: number;
  vDriveV: number;
  tjHsC: number;
  tjLsC: number;
  /** Buck: input voltage; half-bridge: DC source voltage behind its resistance. */
  vSourceV: number;
  /** Buck resistive load (NaN when a current load is used). */
  loadROhm: number;
  /** Buck current load (used when loadROhm is NaN). */
  loadIA: number;
  /** Half-bridge back-EMF. */
  backEmfV: number;
}

export function defaultAvgInputs(plant: Plant): AvgInputs {
  const c = plant.conv;
  return {
    duty: 0.5,
    fswHz: plant.knobs.fswHz,
    deadTimeS: plant.knobs.deadTimeS,
    vDriveV: plant.knobs.vDriveV,
    tjHsC: 25,
    tjLsC: 25,
    vSourceV: c.kind === 'buck' ? c.vinV : c.vdcV,
    loadROhm: c.kind === 'buck' && 'rOhm' in c.load ? c.load.rOhm : NaN,
    loadIA: c.kind === 'buck' && 'iA' in c.load ? c.load.iA : 0,
    backEmfV: c.kind === 'halfBridge' ? c.backEmfV : 0,
  };
}

/** Instantaneous powers and outputs that go with a derivative evaluation (for records and balances). */
export interface AvgOutputs {
  /** Regulated quantity: buck output voltage, half-bridge load current. */
  yMeasured: number;
  vOutV: number;
  iLoadA: number;
  pinW: number;
  poutW: number;
  semiW: number;
  gateDriverW: number;
  passiveW: number;
  totalLossW: number;
  /** Power going into stored electrical energy (½Li² + ½Cv²). */
  pStoreW: number;
  capOutRmsA: number;
  capInRmsA: number;
}

export function newAvgOutputs(): AvgOutputs {
  return { yMeasured: 0, vOutV: 0, iLoadA: 0, pinW: 0, poutW: 0, semiW: 0, gateDriverW: 0, passiveW: 0, totalLossW: 0, pStoreW: 0, capOutRmsA: 0, capInRmsA: 0 };
}

const legIn: LegInput = newLegInput();

function fillLegInput(u: AvgInputs, vBus: number, i: number, vFar: number, lH: number): LegInput {
  return setLegInput(legIn, vBus, i, vFar, lH, u.duty, u, u.tjHsC, u.tjLsC);
}

/** Buck output voltage and load current from the states (ESR couples them; resistive or current load). */
function buckOutput(b: BuckParams, iL: number, vC: number, u: AvgInputs): { vOut: number; iLoad: number } {
  const esr = b.cout.esrOhm;
  if (Number.isNaN(u.loadROhm)) {
    return { vOut: vC + esr * (iL - u.loadIA), iLoad: u.loadIA };
  }
  const vOut = (vC + esr * iL) / (1 + esr / u.loadROhm);
  return { vOut, iLoad: vOut / u.loadROhm };
}

/**
 * dx/dt of the averaged plant. `leg` receives the leg evaluation (reused by the caller for
 * outputs and losses); `outs`, when given, receives powers for records and energy checks.
 */
export function averagedDerivatives(plant: Plant, x: ArrayLike<number>, u: AvgInputs, dx: Float64Array | number[], leg: LegResult, outs?: AvgOutputs): void {
  const c = plant.conv;
  if (c.kind === 'buck') {
    const iL = x[0];
    const vC = x[1];
    const rL = dcrOhm(c.dcr20Ohm, c.inductorTempC);
    const { vOut, iLoad } = buckOutput(c, iL, vC, u);
    const vFar = vOut + rL * iL;
    evaluateLeg(plant.leg, fillLegInput(u, u.vSourceV, iL, vFar, c.lH), leg);
    dx[0] = (leg.vNodeMeanV - vFar) / c.lH;
    dx[1] = (iL - iLoad) / c.cout.cF;
    if (outs) {
      const coreW = coreLossW(c.core, c.lH, leg.ripplePpA, u.fswHz, leg.riseFraction);
      const acMs = Math.max(leg.iMsA2 - iL * iL, 0);
      const cinMs = Math.max(leg.iBusMsA2 - leg.iBusCondMeanA * leg.iBusCondMeanA, 0);
      const esrDcW = c.cout.esrOhm * (iL - iLoad) * (iL - iLoad);
      const capW = c.cout.esrOhm * acMs + c.cin.esrOhm * cinMs;
      const copperW = rL * leg.iMsA2;
      outs.yMeasured = vOut;
      outs.vOutV = vOut;
      outs.iLoadA = iLoad;
      outs.semiW = leg.semiW;
      outs.gateDriverW = leg.gateDriverW;
      outs.passiveW = copperW + coreW + capW + esrDcW;
      outs.totalLossW = leg.semiW + leg.gateDriverW + outs.passiveW;
      outs.poutW = vOut * iLoad;
      outs.pinW = leg.vNodeMeanV * iL + leg.semiW + leg.gateDriverW + rL * acMs + coreW + capW;
      outs.pStoreW = iL * (leg.vNodeMeanV - vFar) + vC * (iL - iLoad);
      outs.capOutRmsA = Math.sqrt(acMs);
      outs.capInRmsA = Math.sqrt(cinMs);
    }
    return;
  }
  const h = c as HalfBridgeParams;
  const i = x[0];
  const vLink = x[1];
  const vFar = 0.5 * vLink + u.backEmfV + h.loadROhm * i;
  evaluateLeg(plant.leg, fillLegInput(u, vLink, i, vFar, h.loadLH), leg);
  const rippleW = h.loadROhm * Math.max(leg.iMsA2 - i * i, 0);
  const vBranch = leg.vNodeMeanV - 0.5 * vLink;
  const legLossW = leg.semiW + leg.gateDriverW;
  const iBus = (vBranch * i + legLossW + rippleW) / Math.max(vLink, 1e-3);
  const iSrc = h.rSourceOhm > 0 ? (u.vSourceV - vLink) / h.rSourceOhm : iBus;
  dx[0] = (leg.vNodeMeanV - vFar) / h.loadLH;
  dx[1] = h.rSourceOhm > 0 ? (iSrc - iBus) / h.link.cF : 0;
  if (outs) {
    const linkMs = Math.max(leg.iBusMsA2 - leg.iBusCondMeanA * leg.iBusCondMeanA, 0);
    const capW = h.link.esrOhm * linkMs;
    outs.yMeasured = i;
    outs.vOutV = vBranch;
    outs.iLoadA = i;
    outs.semiW = leg.semiW;
    outs.gateDriverW = leg.gateDriverW;
    outs.passiveW = capW;
    outs.totalLossW = legLossW + capW;
    outs.poutW = (h.loadROhm * i + u.backEmfV) * i + rippleW;
    outs.pinW = vLink * iSrc + capW;
    outs.pStoreW = i * (leg.vNodeMeanV - vFar) + vLink * (iSrc - iBus) * (h.rSourceOhm > 0 ? 1 : 0);
    outs.capOutRmsA = 0;
    outs.capInRmsA = Math.sqrt(linkMs);
  }
}

/** Scratch leg result for callers that do not keep one. */
export function newAveragedScratch(): LegResult {
  return newLegResult();
}

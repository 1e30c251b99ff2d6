/**
 * Heat-demand supervisor. Turns a heat demand (W) into switching frequency, dead time and gate
 * drive while the inner loop keeps regulating.
 *
 * One scalar effort s ∈ [0, 3] orders the actuators as a ladder: s ∈ [0,1] raises fsw from its
 * most efficient value to its allowed maximum, s ∈ [1,2] lengthens the dead time, s ∈ [2,3]
 * lowers the gate drive toward its allowed minimum. The ladder is continuous at each joint, so
 * hand-over between actuators is bumpless. Feed-forward inverts the loss model (the same
 * operating-point code as everywhere else) over a cached effort table; an integral trim on the
 * measured quantity removes model error; constraints shrink the allowed range of each actuator
 * and cap the loss when a junction nears its limit.
 */
import { kAt, vthAt } from '../model/device.ts';
import { type ElectricalPoint, electricalPoint } from '../model/electrical.ts';
import { thermalSteadyState } from '../model/thermal/network.ts';
import type { Knobs, Plant } from '../model/plant.ts';
import type { EngineView, SupervisorTask } from '../sim/engine.ts';
import type { SimSystem } from '../sim/system.ts';
import { Rng } from './rng.ts';
import {
  type PowerMonitor,
  type TemperatureSensor,
  coolantHeatW,
  createPowerMonitor,
  createTemperatureSensor,
  powerMonitorReading,
  powerMonitorStep,
  temperatureSensorReading,
  temperatureSensorStep,
} from './sensors.ts';

export type Binding =
  | 'none'
  | 'fswMax'
  | 'stableBand'
  | 'deadTimeMax'
  | 'gateDriveMin'
  | 'overdrive'
  | 'tjLimit'
  | 'capRipple'
  | 'allDisabled';

/** What each binding constraint means, for messages. */
export const BINDING_TEXT: Readonly<Record<Binding, string>> = {
  none: 'no constraint binds',
  fswMax: 'switching frequency at its configured maximum',
  stableBand: 'switching frequency at the edge of the band where the inner loop keeps its margin floors',
  deadTimeMax: 'dead time at its configured maximum',
  gateDriveMin: 'gate drive at its configured minimum',
  overdrive: 'gate drive at the floor that keeps the minimum overdrive over a worst-case threshold at peak current',
  tjLimit: 'junction temperature at its limit minus margin',
  capRipple: 'capacitor ripple current at its rating',
  allDisabled: 'every actuator is disabled',
};

interface Ladder {
  fswLo: number; fswHi: number; fswHiBinding: Binding;
  deadLo: number; deadHi: number;
  vgHi: number; vgLo: number; vgLoBinding: Binding;
  enabled: [boolean, boolean, boolean];
}

const TABLE_N = 12;

/** Knobs at effort s on a ladder (continuous, monotone in loss by construction of the bounds). */
function lerpClamped(a: number, b: number, x: number): number {
  return a + (b - a) * Math.min(Math.max(x, 0), 1);
}

// One knob of `knobsAtEffort` each, for the per-tick path (no object per call).
function fswAtEffort(l: Ladder, s: number): number {
  return l.enabled[0] ? lerpClamped(l.fswLo, l.fswHi, s) : l.fswLo;
}
function deadTimeAtEffort(l: Ladder, s: number): number {
  return l.enabled[1] ? lerpClamped(l.deadLo, l.deadHi, s - 1) : l.deadLo;
}
function vDriveAtEffort(l: Ladder, s: number): number {
  return l.enabled[2] ? lerpClamped(l.vgHi, l.vgLo, s - 2) : l.vgHi;
}

export function knobsAtEffort(l: Ladder, s: number): Knobs {
  return { fswHz: fswAtEffort(l, s), deadTimeS: deadTimeAtEffort(l, s), vDriveV: vDriveAtEffort(l, s) };
}

export interface SupervisorState {
  effort: number;
  trimW: number;
  lossCapW: number;
  measuredW: number;
  targetW: number;
  feedForwardW: number;
  maxAchievableW: number;
  /** Correction (≤ 0) of the predicted Tj cap from the measured junction temperature. */
  tjTrimW: number;
  binding: Binding;
  shortfallW: number;
  limitedSinceS: number;
}

/** Equal, or both NaN (an unused load field). */
function sameNum(a: number, b: number): boolean {
  return a === b || (Number.isNaN(a) && Number.isNaN(b));
}

/** Slew toward `wanted` unless it is inside the hysteresis band (0.4 step or 0.2 % of the range). */
function moveActuator(cur: number, wanted: number, slewPerTick: number, step: number, range: number): number {
  const band = Math.max(0.4 * step, 0.002 * range);
  return Math.abs(wanted - cur) < band ? cur : slew(cur, wanted, slewPerTick);
}

function quantize(v: number, step: number): number {
  return step > 0 ? Math.round(v / step) * step : v;
}

function slew(from: number, to: number, maxStep: number): number {
  return to > from ? Math.min(to, from + maxStep) : Math.max(to, from - maxStep);
}

/** Build the supervisor for a system, or undefined when the scenario has none (or it is disabled). */
export function createSupervisor(sys: SimSystem, stableBand?: (vDriveV: number) => [number, number] | undefined): SupervisorTask | undefined {
  const cfg = sys.scenario.supervisor;
  if (!cfg || !cfg.enabled) return undefined;
  const sc = sys.scenario;
  const plant: Plant = sys.plant;
  const rng = new Rng(sc.sim.seed);
  const sens = sc.sensors;
  const pinMon: PowerMonitor = createPowerMonitor(sens.inputPower, rng.fork(1));
  const poutMon: PowerMonitor = createPowerMonitor(sens.outputPower, rng.fork(2));
  const tIn: TemperatureSensor = createTemperatureSensor(sens.coolantTemp, rng.fork(3), sc.thermal.coolant.inletC);
  const tOut: TemperatureSensor = createTemperatureSensor(sens.coolantTemp, rng.fork(4), sc.thermal.coolant.inletC);
  const lim = sc.limits;
  const tjLimitC = Math.min(plant.leg.hs.tjMaxC, plant.leg.ls.tjMaxC) - lim.tjMarginK;
  const st: SupervisorState = {
    effort: 0, trimW: 0, tjTrimW: 0, lossCapW: Infinity, measuredW: 0, targetW: 0, feedForwardW: 0, maxAchievableW: 0,
    binding: 'none', shortfallW: 0, limitedSinceS: NaN,
  };
  // Returned by every tick and refilled in place (the engine copies the values at once).
  const knobs: { fswHz: number; deadTimeS: number; vDriveV: number } = { fswHz: sc.pwm.fswHz, deadTimeS: sc.pwm.deadTimeS, vDriveV: sc.gateDrive.vDriveV };
  // Actuator positions before quantization: they slew continuously; the hardware sees them quantized.
  const cont: { fswHz: number; deadTimeS: number; vDriveV: number } = { ...knobs };
  let table:
    | { s: Float64Array; lossW: Float64Array; tjSsC: Float64Array; ladder: Ladder; sCapTj: number; capFromModelW: number; sorted: boolean }
    | undefined;
  let tableKey: number[] = [];
  let worstLimited = { shortfallW: 0, binding: 'none' as Binding, tS: 0 };

  const quantityOf = (ep: ElectricalPoint): number => {
    if (cfg.controlled === 'electricalLoss') return ep.totalLossW;
    if (cfg.controlled === 'semiconductorLoss') return ep.semiW;
    return ep.semiW + plant.passiveToPlateFraction * ep.passiveW;
  };

  /** Allowed ranges at the present temperatures and conditions. */
  const ladderAt = (tjH: number, tjL: number): Ladder => {
    const fs = cfg.fsw, dt = cfg.deadTime, vg = cfg.gateDrive;
    let fswHi = fs.maxHz;
    let fswHiBinding: Binding = 'fswMax';
    const vgHi = vg.enabled ? vg.maxV : sc.gateDrive.vDriveV;
    const band = stableBand?.(vgHi) ?? cfg.stableBandHz;
    let fswLoBound = fs.minHz;
    if (band) {
      if (band[1] < fswHi) { fswHi = band[1]; fswHiBinding = 'stableBand'; }
      fswLoBound = Math.max(fswLoBound, band[0]);
    }
    // Most efficient fsw inside the allowed range (coarse scan, the loss curve is smooth and U-shaped).
    let fswLo = fswLoBound;
    let best = Infinity;
    const k0: Knobs = { fswHz: 0, deadTimeS: dt.enabled ? dt.minS : sc.pwm.deadTimeS, vDriveV: vgHi };
    if (fs.enabled) {
      for (let i = 0; i <= 8; i++) {
        const f = fswLoBound * Math.pow(fswHi / fswLoBound, i / 8);
        const ep = electricalPoint(plant, { ...k0, fswHz: f }, tjH, tjL);
        // Respect capacitor ripple ratings at the efficient end too.
        if (ep.capOut.utilization > 1 || ep.capIn.utilization > 1) continue;
        if (ep.totalLossW < best) { best = ep.totalLossW; fswLo = f; }
      }
    } else {
      fswLo = fswHi = sc.pwm.fswHz;
    }
    // Lowest gate drive that keeps the minimum overdrive over a worst-case threshold at peak current.
    const ep = electricalPoint(plant, { ...k0, fswHz: fswHi }, tjH, tjL);
    const ipk = Math.max(Math.abs(ep.leg.iPeakA), Math.abs(ep.leg.iValleyA));
    const needed = (dev: typeof plant.leg.hs, tj: number): number =>
      vthAt(dev, Math.min(tj, 25)) + lim.vthSpreadV + Math.sqrt((2 * ipk) / kAt(dev, tj)) + lim.minOverdriveV;
    const vgNeeded = Math.max(needed(plant.leg.hs, tjH), plant.leg.lowSideMode === 'sync' ? needed(plant.leg.ls, tjL) : 0);
    let vgLo = vg.minV;
    let vgLoBinding: Binding = 'gateDriveMin';
    if (vgNeeded > vgLo) { vgLo = Math.min(vgNeeded, vgHi); vgLoBinding = 'overdrive'; }
    return {
      fswLo, fswHi: Math.max(fswHi, fswLo), fswHiBinding,
      deadLo: dt.enabled ? dt.minS : sc.pwm.deadTimeS, deadHi: dt.enabled ? dt.maxS : sc.pwm.deadTimeS,
      vgHi, vgLo, vgLoBinding,
      enabled: [fs.enabled, dt.enabled, vg.enabled],
    };
  };

  const buildTable = (tjH: number, tjL: number, inletC: number, flowKgPerS: number): void => {
    const ladder = ladderAt(tjH, tjL);
    const n = 3 * TABLE_N + 1;
    const s = new Float64Array(n);
    const lossW = new Float64Array(n);
    const tjSsC = new Float64Array(n);
    const net = sys.net;
    for (let i = 0; i < n; i++) {
      s[i] = i / TABLE_N;
      const ep = electricalPoint(plant, knobsAtEffort(ladder, s[i]), tjH, tjL);
      lossW[i] = quantityOf(ep);
      // Keep the table monotone so the inversion is unique (a flat stretch inverts to its start).
      if (i > 0 && lossW[i] < lossW[i - 1]) lossW[i] = lossW[i - 1];
      // Steady junction temperature this effort would settle to: the thermal step response is
      // monotone, so an effort whose steady Tj is below the limit never overshoots it.
      if (flowKgPerS > 0 || Number.isFinite(sc.thermal.heatsink.rSinkAmbientKPerW)) {
        const temps = thermalSteadyState(net, {
          deviceLossW: [ep.leg.hs.totalW, ep.leg.ls.totalW],
          sinkExtraW: plant.passiveToPlateFraction * ep.passiveW,
          inletC, flowKgPerS, ambientC: sc.thermal.ambientC,
        });
        tjSsC[i] = Math.max(temps[net.layout.junction[0]], temps[net.layout.junction[1]]);
      } else tjSsC[i] = Infinity;
    }
    // Monotone by construction unless a loss came out NaN (then `invert` keeps its linear scan).
    const sorted = !lossW.some(Number.isNaN);
    table = { s, lossW, tjSsC, ladder, sCapTj: NaN, capFromModelW: NaN, sorted };
    // The Tj cap depends on the table alone (the limit is fixed): once per table, not per tick.
    table.sCapTj = effortCapTj(tjLimitC);
    table.capFromModelW = invertEffort(table.sCapTj);
  };

  /** Largest effort whose steady junction temperature stays below the limit (interpolated). */
  const effortCapTj = (limitC: number): number => {
    const t = table!;
    if (t.tjSsC[0] > limitC) return 0;
    for (let i = 1; i < t.s.length; i++) {
      if (t.tjSsC[i] > limitC) {
        const a = t.tjSsC[i - 1], b = t.tjSsC[i];
        return t.s[i - 1] + ((limitC - a) / (b - a)) * (t.s[i] - t.s[i - 1]);
      }
    }
    return t.s[t.s.length - 1];
  };

  /** Loss on the table at effort s (linear between rows). */
  const invertEffort = (sv: number): number => {
    const t = table!;
    const i = Math.min(Math.floor(sv * TABLE_N), t.s.length - 2);
    const f = (sv - t.s[i]) * TABLE_N;
    return t.lossW[i] + f * (t.lossW[i + 1] - t.lossW[i]);
  };

  const invert = (lossW: number): number => {
    const t = table!;
    const n = t.s.length;
    if (lossW <= t.lossW[0]) return 0;
    if (lossW >= t.lossW[n - 1]) return t.s[n - 1];
    // First row i ≥ 1 with lossW[i] ≥ lossW: by bisection on a monotone table.
    let i = 1;
    if (t.sorted) {
      let hi = n - 1;
      while (i < hi) {
        const mid = (i + hi) >> 1;
        if (t.lossW[mid] < lossW) i = mid + 1;
        else hi = mid;
      }
    } else {
      while (t.lossW[i] < lossW) i++;
    }
    const a = t.lossW[i - 1], b = t.lossW[i];
    return b > a ? t.s[i - 1] + ((lossW - a) / (b - a)) * (t.s[i] - t.s[i - 1]) : t.s[i - 1];
  };

  const task: SupervisorTask = {
    tickS: cfg.tickS,
    tick(v: EngineView): Knobs {
      const dt = v.dtS;
      // Sensors see the true quantities; the supervisor only uses their readings.
      if (dt > 0) {
        powerMonitorStep(pinMon, v.pinW, dt);
        powerMonitorStep(poutMon, v.poutW, dt);
        temperatureSensorStep(tIn, v.inletC, dt);
        temperatureSensorStep(tOut, v.coolantC, dt);
      }
      const pinR = powerMonitorReading(pinMon);
      const poutR = powerMonitorReading(poutMon);
      const elecLoss = Number.isNaN(pinR) || Number.isNaN(poutR) ? NaN : pinR - poutR;
      const heatR = coolantHeatW(v.flowKgPerS, sc.thermal.coolant.cpJPerKgK, temperatureSensorReading(tIn), temperatureSensorReading(tOut));
      let measured: number;
      if (cfg.controlled === 'electricalLoss') measured = elecLoss;
      else if (cfg.controlled === 'coolantHeat') measured = heatR;
      else measured = Number.isNaN(elecLoss) ? NaN : elecLoss - (v.totalLossW - v.semiW);
      st.measuredW = measured;

      // The table is rebuilt when conditions move: junctions by 2 K, inlet by 1 K, source by 10 mV, or any load/flow change.
      const k0 = Math.round(v.tjHsC / 2), k1 = Math.round(v.tjLsC / 2), k2 = Math.round(v.vSourceV * 100), k6 = Math.round(v.inletC);
      if (!table || k0 !== tableKey[0] || k1 !== tableKey[1] || k2 !== tableKey[2] || !sameNum(v.loadROhm, tableKey[3]) ||
          !sameNum(v.loadIA, tableKey[4]) || k6 !== tableKey[5] || v.flowKgPerS !== tableKey[6]) {
        buildTable(v.tjHsC, v.tjLsC, v.inletC, v.flowKgPerS);
        tableKey = [k0, k1, k2, v.loadROhm, v.loadIA, k6, v.flowKgPerS];
      }
      const t = table!;
      const maxW = t.lossW[t.lossW.length - 1];
      const minW = t.lossW[0];
      st.maxAchievableW = maxW;

      // Junction-temperature constraint, predictive: the effort is capped where the steady Tj
      // reaches limit − margin (lossCapW is that effort's loss). A slow integrator on the measured
      // Tj lowers the target further if the prediction proves optimistic near the limit.
      const tjMax = Math.max(v.tjHsC, v.tjLsC);
      const tjErr = tjLimitC - tjMax;
      const sCapTj = t.sCapTj;
      const capFromModel = t.capFromModelW;
      if (tjErr < 2) st.tjTrimW = Math.min(0, st.tjTrimW + 2 * tjErr * dt);
      else st.tjTrimW = Math.min(0, st.tjTrimW + 0.5 * dt);
      // The cap binds only when it is below what the ladder can give anyway.
      const tjCapActive = sCapTj < t.s[t.s.length - 1] - 1e-9 || st.tjTrimW < 0;
      st.lossCapW = tjCapActive ? Math.max(capFromModel + st.tjTrimW, minW) : Infinity;
      const demand = Math.max(v.demandW, 0);
      let target = demand;
      let binding: Binding = 'none';
      if (target > st.lossCapW) { target = st.lossCapW; binding = 'tjLimit'; }
      st.targetW = target;

      // Feed-forward plus integral trim, with the trim frozen when the effort sits on a bound.
      let sCmd: number;
      if (demand <= 0) {
        st.trimW = 0;
        sCmd = 0;
      } else {
        const err = Number.isNaN(measured) ? 0 : target - measured;
        const sTry = invert(target + st.trimW + cfg.trimKiPerS * err * dt);
        const atTop = sTry >= t.s[t.s.length - 1] - 1e-9 && err > 0;
        const atBottom = sTry <= 0 && err < 0;
        // Conditional integration: no trim while an actuator is still slewing toward its
        // feed-forward position (the error then is the slew, not model error).
        const lossFf = target + st.trimW;
        const s0 = invert(lossFf);
        const l = t.ladder;
        const slewing =
          Math.abs(fswAtEffort(l, s0) - cont.fswHz) > cfg.fsw.slewHzPerS * cfg.tickS ||
          Math.abs(deadTimeAtEffort(l, s0) - cont.deadTimeS) > cfg.deadTime.slewSPerS * cfg.tickS ||
          Math.abs(vDriveAtEffort(l, s0) - cont.vDriveV) > cfg.gateDrive.slewVPerS * cfg.tickS;
        if (!atTop && !atBottom && !slewing) st.trimW += cfg.trimKiPerS * err * dt;
        st.trimW = Math.max(Math.min(st.trimW, 0.5 * maxW + 5), -0.5 * maxW - 5);
        const lossCmd = target + st.trimW;
        // Same argument as s0 when the trim did not move (frozen while slewing or on a bound).
        sCmd = lossCmd === lossFf ? s0 : invert(lossCmd);
      }
      st.feedForwardW = target;
      st.effort = sCmd;
      const lad = t.ladder;
      // Slew limits, quantization, and a hysteresis of 0.4 step (or 0.2 % of the
      // range) so measurement noise does not dither the actuators.
      cont.fswHz = moveActuator(cont.fswHz, fswAtEffort(lad, sCmd), cfg.fsw.slewHzPerS * cfg.tickS, cfg.fsw.stepHz, cfg.fsw.maxHz - cfg.fsw.minHz);
      cont.deadTimeS = moveActuator(cont.deadTimeS, deadTimeAtEffort(lad, sCmd), cfg.deadTime.slewSPerS * cfg.tickS, cfg.deadTime.stepS, cfg.deadTime.maxS - cfg.deadTime.minS);
      cont.vDriveV = moveActuator(cont.vDriveV, vDriveAtEffort(lad, sCmd), cfg.gateDrive.slewVPerS * cfg.tickS, cfg.gateDrive.stepV, cfg.gateDrive.maxV - cfg.gateDrive.minV);
      knobs.fswHz = quantize(cont.fswHz, cfg.fsw.stepHz);
      knobs.deadTimeS = quantize(cont.deadTimeS, cfg.deadTime.stepS);
      knobs.vDriveV = quantize(cont.vDriveV, cfg.gateDrive.stepV);
      // Shortfall: the demand exceeds what the allowed ranges (or the Tj cap) can give.
      const reachable = Math.min(maxW, st.lossCapW);
      const shortfall = demand - reachable;
      if (shortfall > Math.max(0.5, 0.02 * demand)) {
        if (binding === 'none') {
          const l = t.ladder;
          binding = l.enabled[2] ? l.vgLoBinding : l.enabled[1] ? 'deadTimeMax' : l.enabled[0] ? l.fswHiBinding : 'allDisabled';
        }
        if (Number.isNaN(st.limitedSinceS)) st.limitedSinceS = v.tS;
        if (v.tS - st.limitedSinceS > 1 && shortfall > worstLimited.shortfallW) worstLimited = { shortfallW: shortfall, binding, tS: v.tS };
      } else {
        st.limitedSinceS = NaN;
      }
      st.binding = binding;
      st.shortfallW = Math.max(shortfall, 0);
      return knobs;
    },
    recordFields() {
      return {
        measuredW: st.measuredW,
        targetW: st.targetW,
        effort: st.effort,
        trimW: st.trimW,
        maxAchievableW: st.maxAchievableW,
        shortfallW: st.shortfallW,
        binding: st.binding,
      };
    },
    resync(k: Knobs) {
      knobs.fswHz = k.fswHz;
      knobs.deadTimeS = k.deadTimeS;
      knobs.vDriveV = k.vDriveV;
      cont.fswHz = k.fswHz;
      cont.deadTimeS = k.deadTimeS;
      cont.vDriveV = k.vDriveV;
      st.trimW = 0;
    },
    limitation() {
      if (worstLimited.shortfallW <= 0) return undefined;
      return `demand not met: short by up to ${worstLimited.shortfallW.toFixed(1)} W (at ${worstLimited.tS.toFixed(1)} s), binding constraint ${worstLimited.binding} (${BINDING_TEXT[worstLimited.binding]})`;
    },
  };
  return task;
}

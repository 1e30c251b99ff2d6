/**
 * Hybrid simulation engine. Step contract (see README.md in this folder):
 *  1. At an event time, run the due discrete updates in a fixed order — profiles, thermal step,
 *     record, supervisor tick, inner-loop sample — and hold their outputs.
 *  2. tStop = min(next sample, next thermal step, next record, next supervisor tick, next
 *     profile breakpoint, tEnd).
 *  3. Integrate the averaged electrical states to tStop with the held duty (odex, or the exact
 *     ZOH local-linear step), accumulating energies.
 *  4. Check for divergence; publish records. Settled stretches (no error, no motion, no ramp)
 *     jump straight to the next non-sample event with the held equilibrium.
 * Outcomes are a status value, never an exception: ok | diverged | interrupted | limited.
 */
import { type AvgInputs, type AvgOutputs, averagedDerivatives, defaultAvgInputs, newAvgOutputs } from '../model/averaged.ts';
import { type LegResult, newLegResult } from '../model/leg.ts';
import { electricalPoint } from '../model/electrical.ts';
import {
  type ThermalDiscrete,
  discretizeThermal,
  heatToCoolantW,
  stepThermalDiscrete,
  thermalInputIndex,
} from '../model/thermal/network.ts';
import { DelayLine, type PiConfig, createPiState, piCoefficients, piReset, piStep } from '../control/pi.ts';
import { ENERGY, OdexStepper, ZohStepper, addEnergies } from './electricalStep.ts';
import { type SimSystem, samplePeriodS } from './system.ts';
import { rampActive } from './profiles.ts';

export type SimStatus = 'ok' | 'diverged' | 'interrupted' | 'limited';

export interface Knobs {
  fswHz: number;
  deadTimeS: number;
  vDriveV: number;
}

/** What a supervisor sees at its tick (true plant quantities; sensor models live with the supervisor). */
export interface EngineView {
  readonly tS: number;
  readonly dtS: number;
  readonly demandW: number;
  readonly knobs: Readonly<Knobs>;
  readonly tjHsC: number;
  readonly tjLsC: number;
  readonly heatsinkC: number;
  readonly coolantC: number;
  readonly inletC: number;
  readonly flowKgPerS: number;
  readonly heatToCoolantW: number;
  /** Mean powers since the previous tick. */
  readonly pinW: number;
  readonly poutW: number;
  readonly semiW: number;
  readonly totalLossW: number;
  readonly capOutRmsA: number;
  readonly capInRmsA: number;
  readonly vSourceV: number;
  readonly loadROhm: number;
  readonly loadIA: number;
}

export interface SupervisorTask {
  readonly tickS: number;
  tick(view: EngineView): Knobs;
  /** Extra numeric fields for each record (measured loss, binding constraint code, …). */
  recordFields?(): Record<string, number | string>;
  /** When the demand cannot be met: the binding constraint. */
  limitation?(): string | undefined;
}

export interface SimRecord {
  tS: number;
  demandW: number;
  heatToCoolantW: number;
  pinW: number;
  poutW: number;
  totalLossW: number;
  semiLossW: number;
  hsLossW: number;
  lsLossW: number;
  passiveLossW: number;
  gateDriverW: number;
  efficiency: number;
  /** Buck output voltage or half-bridge load current (mean over the interval). */
  yMeasured: number;
  reference: number;
  duty: number;
  fswHz: number;
  deadTimeS: number;
  vDriveV: number;
  tjHsC: number;
  tjLsC: number;
  heatsinkC: number;
  coolantC: number;
  inletC: number;
  loadROhm: number;
  [extra: string]: number | string;
}

export interface SimOptions {
  durationS?: number;
  recordIntervalS?: number;
  engine?: 'auto' | 'odex' | 'zoh';
  supervisor?: SupervisorTask;
  onRecord?: (r: SimRecord) => void;
  /** Polled every few thousand iterations; true stops the run with status `interrupted`. */
  shouldStop?: () => boolean;
  onProgress?: (tS: number, tEndS: number) => void;
  /** Keep records in the result (default true). */
  keepRecords?: boolean;
}

export interface SimResult {
  status: SimStatus;
  tEndS: number;
  cause: string | undefined;
  records: SimRecord[];
  warnings: string[];
  energiesJ: { pin: number; pout: number; hs: number; ls: number; passive: number; gateDriver: number; store: number };
  stats: { samples: number; skippedS: number; linearizations: number; odexIntervals: number; iterations: number };
  /** Final states for checks: electrical [x0, x1] and thermal node temperatures. */
  finalX: number[];
  finalTempsC: number[];
}

const DIVERGE_CURRENT_A = 1e4;

export function simulate(sys: SimSystem, opts: SimOptions = {}): SimResult {
  const sc = sys.scenario;
  const plant = sys.plant;
  const net = sys.net;
  const prof = sys.profiles;
  const tEnd = opts.durationS ?? sc.sim.durationS;
  const recDt = opts.recordIntervalS ?? sc.sim.recordIntervalS;
  const thDt = Math.min(sc.sim.thermalStepS, recDt);
  const mode = opts.engine ?? sc.sim.engine;
  const keep = opts.keepRecords ?? true;
  const sup = opts.supervisor;
  const warnings = new Set<string>();
  const records: SimRecord[] = [];

  // ---- context: everything that changes ----
  let t = 0;
  const knobs: Knobs = { fswHz: prof.fswHz.valueAt(0), deadTimeS: prof.deadTimeS.valueAt(0), vDriveV: prof.vDriveV.valueAt(0) };
  const u: AvgInputs = defaultAvgInputs(plant);
  const readInputs = (tt: number): void => {
    u.vSourceV = prof.vinV.valueAt(tt);
    if (plant.conv.kind === 'buck') {
      if (sys.loadIsCurrent) u.loadIA = prof.loadIA.valueAt(tt);
      else u.loadROhm = prof.loadROhm.valueAt(tt);
    }
    u.fswHz = knobs.fswHz;
    u.deadTimeS = knobs.deadTimeS;
    u.vDriveV = knobs.vDriveV;
  };
  const temps = new Float64Array(net.nNodes).fill(prof.inletC.valueAt(0));
  const jH = net.layout.junction[0];
  const jL = net.layout.junction[1];
  u.tjHsC = temps[jH];
  u.tjLsC = temps[jL];
  readInputs(0);

  // Electrical start: the regulated steady state at the initial knobs and temperatures.
  const x = new Float64Array(2);
  const ep0 = electricalPoint(plant, knobs, u.tjHsC, u.tjLsC);
  if (plant.conv.kind === 'buck') {
    x[0] = ep0.iMeanA;
    x[1] = ep0.vOutV - plant.conv.cout.esrOhm * 0;
  } else {
    x[0] = ep0.iMeanA;
    x[1] = ep0.vBusV;
  }
  u.duty = ep0.duty;

  const piCfg: PiConfig = { ...sys.pi };
  let ts = samplePeriodS(sys, knobs.fswHz);
  let coeffs = piCoefficients(piCfg, ts);
  const pi = createPiState(ep0.duty);
  piReset(pi, ep0.duty);
  const delay = new DelayLine(sys.delaySamples, ep0.duty);
  let filtY = NaN;

  const odex = new OdexStepper(plant);
  const zoh = new ZohStepper(plant);
  const curLeg: LegResult = newLegResult();
  const curOuts: AvgOutputs = newAvgOutputs();
  const dxScratch = new Float64Array(2);
  const refreshOuts = (): void => { averagedDerivatives(plant, x, u, dxScratch, curLeg, curOuts); };
  refreshOuts();

  const thIdx = thermalInputIndex(net);
  const thU = new Float64Array(thIdx.nInputs);
  const thCache = new Map<string, ThermalDiscrete>();
  const thOut = new Float64Array(net.nNodes);

  const accStep = new Float64Array(ENERGY.n);
  const accTh = new Float64Array(ENERGY.n);
  const accRec = new Float64Array(ENERGY.n);
  const accSup = new Float64Array(ENERGY.n);
  const accTot = new Float64Array(ENERGY.n);
  let recY = 0, recDuty = 0, recTime = 0;
  let thTime = 0, supTime = 0;
  let capOutMs = 0, capInMs = 0;

  let tNextSample = 0;
  let tNextTh = thDt;
  let tNextRec = recDt;
  let tNextSup = sup ? 0 : Infinity;
  let status: SimStatus = 'ok';
  let cause: string | undefined;
  let samples = 0, skippedS = 0, odexIntervals = 0, iterations = 0;
  let settled = 0;
  let lastE = 0;
  let useOdex = mode === 'odex';

  const breakProfiles = [prof.loadROhm, prof.loadIA, prof.vinV, prof.inletC, prof.flowKgPerS, prof.heatDemandW, prof.reference]
    .concat(sup ? [] : [prof.fswHz, prof.deadTimeS, prof.vDriveV])
    .filter((p) => !p.constant);
  let cachedBreak = -1;
  let cachedBreakAt = NaN;
  const nextBreak = (tt: number): number => {
    if (tt >= cachedBreakAt || Number.isNaN(cachedBreakAt) || tt < cachedBreak) {
      let b = Infinity;
      for (const p of breakProfiles) b = Math.min(b, p.nextBreakS(tt));
      cachedBreak = tt;
      cachedBreakAt = b;
    }
    return cachedBreakAt;
  };
  const anyRamp = (tt: number): boolean =>
    rampActive(prof.loadROhm, tt) || rampActive(prof.loadIA, tt) || rampActive(prof.vinV, tt) || rampActive(prof.reference, tt) ||
    (!sup && (rampActive(prof.fswHz, tt) || rampActive(prof.deadTimeS, tt) || rampActive(prof.vDriveV, tt)));

  const thermalStep = (dtIn: number): void => {
    let dt = dtIn;
    if (dt <= 0) return;
    const flow = prof.flowKgPerS.valueAt(t);
    // Floating-point drift in the accumulated step would defeat the cache: snap to the nominal step.
    if (Math.abs(dt - thDt) < 1e-9 * thDt) dt = thDt;
    const key = `${flow}|${dt}`;
    let disc = thCache.get(key);
    if (!disc) {
      if (thCache.size > 64) thCache.clear();
      disc = discretizeThermal(net, flow, dt);
      thCache.set(key, disc);
    }
    thU[thIdx.deviceLossW] = accTh[ENERGY.hs] / dt;
    thU[thIdx.deviceLossW + 1] = accTh[ENERGY.ls] / dt;
    thU[thIdx.sinkExtraW] = (plant.passiveToPlateFraction * accTh[ENERGY.passive]) / dt;
    thU[thIdx.inletC] = prof.inletC.valueAt(t);
    thU[thIdx.ambientC] = sc.thermal.ambientC;
    stepThermalDiscrete(disc, temps, thU, thOut);
    temps.set(thOut);
    accTh.fill(0);
    u.tjHsC = temps[jH];
    u.tjLsC = temps[jL];
  };

  const heatNow = (): number => heatToCoolantW(net, temps, prof.inletC.valueAt(t), prof.flowKgPerS.valueAt(t));

  const emitRecord = (): void => {
    const dt = recTime > 0 ? recTime : 1;
    const pin = accRec[ENERGY.pin] / dt;
    const pout = accRec[ENERGY.pout] / dt;
    const hs = accRec[ENERGY.hs] / dt;
    const ls = accRec[ENERGY.ls] / dt;
    const passive = accRec[ENERGY.passive] / dt;
    const gd = accRec[ENERGY.gateDriver] / dt;
    const r: SimRecord = {
      tS: t,
      demandW: prof.heatDemandW.valueAt(t),
      heatToCoolantW: heatNow(),
      pinW: pin,
      poutW: pout,
      totalLossW: hs + ls + passive + gd,
      semiLossW: hs + ls,
      hsLossW: hs,
      lsLossW: ls,
      passiveLossW: passive,
      gateDriverW: gd,
      efficiency: pin > 0 ? pout / pin : 0,
      yMeasured: recY / dt,
      reference: prof.reference.valueAt(t),
      duty: recDuty / dt,
      fswHz: knobs.fswHz,
      deadTimeS: knobs.deadTimeS,
      vDriveV: knobs.vDriveV,
      tjHsC: temps[jH],
      tjLsC: temps[jL],
      heatsinkC: temps[net.layout.heatsink],
      coolantC: temps[net.layout.coolant],
      inletC: prof.inletC.valueAt(t),
      loadROhm: u.loadROhm,
    };
    if (sup?.recordFields) Object.assign(r, sup.recordFields());
    if (keep) records.push(r);
    opts.onRecord?.(r);
    accRec.fill(0);
    recY = recDuty = recTime = 0;
  };

  const advance = (dt: number): boolean => {
    accStep.fill(0);
    if (useOdex) {
      odexIntervals++;
      if (odex.advance(x, u, dt, accStep) === 'failed') return false;
      refreshOuts();
    } else {
      if (!zoh.stillValid(x, u, dt)) {
        zoh.linearize(x, u, dt);
        curLeg.semiW = zoh.pointLeg.semiW;
        Object.assign(curOuts, zoh.pointOuts);
        Object.assign(curLeg.hs, zoh.pointLeg.hs);
        Object.assign(curLeg.ls, zoh.pointLeg.ls);
        if (mode === 'auto' && zoh.nonlinear) {
          useOdex = true;
          return advance(dt);
        }
      }
      zoh.step(x, u.duty);
      addEnergies(accStep, curOuts, curLeg, dt);
    }
    for (let k = 0; k < ENERGY.n; k++) {
      accTh[k] += accStep[k];
      accRec[k] += accStep[k];
      accSup[k] += accStep[k];
      accTot[k] += accStep[k];
    }
    capOutMs += curOuts.capOutRmsA * curOuts.capOutRmsA * dt;
    capInMs += curOuts.capInRmsA * curOuts.capInRmsA * dt;
    recY += curOuts.yMeasured * dt;
    recDuty += u.duty * dt;
    recTime += dt;
    thTime += dt;
    supTime += dt;
    return Number.isFinite(x[0]) && Number.isFinite(x[1]);
  };

  const checkDivergence = (): boolean => {
    if (!Number.isFinite(x[0]) || !Number.isFinite(x[1])) { cause = 'electrical state is not a number'; return true; }
    if (Math.abs(x[0]) > DIVERGE_CURRENT_A) { cause = `current ${x[0].toExponential(2)} A beyond ${DIVERGE_CURRENT_A} A`; return true; }
    const vMax = 3 * Math.max(u.vSourceV, 1);
    if (Math.abs(x[1]) > vMax) { cause = `voltage ${x[1].toFixed(1)} V beyond ${vMax.toFixed(0)} V`; return true; }
    const tjMax = Math.max(u.tjHsC, u.tjLsC);
    if (tjMax > sc.limits.runawayTjC) { cause = `thermal runaway: junction ${tjMax.toFixed(1)} °C above ${sc.limits.runawayTjC} °C`; return true; }
    return false;
  };

  let sinceStopPoll = 0;
  while (t < tEnd - 1e-12) {
    iterations++;
    if (++sinceStopPoll >= 4096) {
      sinceStopPoll = 0;
      opts.onProgress?.(t, tEnd);
      if (opts.shouldStop?.()) { status = 'interrupted'; cause = `stopped at ${t.toFixed(3)} s`; break; }
    }
    // 1. discrete updates due at t
    if (!sup) {
      knobs.fswHz = prof.fswHz.valueAt(t);
      knobs.deadTimeS = prof.deadTimeS.valueAt(t);
      knobs.vDriveV = prof.vDriveV.valueAt(t);
    }
    readInputs(t);
    if (t >= tNextTh - 1e-12) { thermalStep(thTime); thTime = 0; tNextTh = t + thDt; refreshOuts(); }
    if (t >= tNextRec - 1e-12) { emitRecord(); tNextRec += recDt; }
    if (sup && t >= tNextSup - 1e-12) {
      const dt = supTime > 0 ? supTime : 1;
      const view: EngineView = {
        tS: t, dtS: supTime, demandW: prof.heatDemandW.valueAt(t), knobs: { ...knobs }, tjHsC: temps[jH], tjLsC: temps[jL],
        heatsinkC: temps[net.layout.heatsink], coolantC: temps[net.layout.coolant], inletC: prof.inletC.valueAt(t),
        flowKgPerS: prof.flowKgPerS.valueAt(t), heatToCoolantW: heatNow(),
        pinW: supTime > 0 ? accSup[ENERGY.pin] / dt : curOuts.pinW, poutW: supTime > 0 ? accSup[ENERGY.pout] / dt : curOuts.poutW,
        semiW: supTime > 0 ? (accSup[ENERGY.hs] + accSup[ENERGY.ls]) / dt : curOuts.semiW,
        totalLossW: supTime > 0 ? (accSup[ENERGY.hs] + accSup[ENERGY.ls] + accSup[ENERGY.passive] + accSup[ENERGY.gateDriver]) / dt : curOuts.totalLossW,
        capOutRmsA: supTime > 0 ? Math.sqrt(capOutMs / dt) : curOuts.capOutRmsA, capInRmsA: supTime > 0 ? Math.sqrt(capInMs / dt) : curOuts.capInRmsA,
        vSourceV: u.vSourceV, loadROhm: u.loadROhm, loadIA: u.loadIA,
      };
      const k = sup.tick(view);
      knobs.fswHz = k.fswHz;
      knobs.deadTimeS = k.deadTimeS;
      knobs.vDriveV = k.vDriveV;
      readInputs(t);
      accSup.fill(0);
      supTime = 0;
      capOutMs = capInMs = 0;
      tNextSup = t + sup.tickS;
    }
    const newTs = samplePeriodS(sys, knobs.fswHz);
    if (newTs !== ts) {
      ts = newTs;
      // Continuous-basis gains are rescaled with the sample period; per-sample gains are not.
      coeffs = piCoefficients(piCfg, ts);
      if (tNextSample > t + ts) tNextSample = t + ts;
    }
    if (t >= tNextSample - 1e-12) {
      samples++;
      let y = measured(sys, x, u);
      if (sys.sensorFilterHz !== undefined) {
        const a = 1 - Math.exp(-2 * Math.PI * sys.sensorFilterHz * ts);
        filtY = Number.isNaN(filtY) ? y : filtY + a * (y - filtY);
        y = filtY;
      }
      const e = prof.reference.valueAt(t) - y;
      const cmd = piStep(piCfg, coeffs, pi, e);
      u.duty = delay.push(cmd);
      tNextSample = t + ts;
      // Settled: error and state motion negligible for several samples in a row.
      const still = Math.abs(e) < 1e-6 * (1 + Math.abs(prof.reference.valueAt(t))) && Math.abs(e - lastE) < 1e-7 * (1 + Math.abs(y));
      settled = still ? settled + 1 : 0;
      lastE = e;
      if (mode === 'auto' && useOdex && samples % 64 === 0) {
        zoh.linearize(x, u, ts);
        useOdex = zoh.nonlinear;
      }
    }
    // 2. next event
    const tEvent = Math.min(tNextTh, tNextRec, tNextSup, nextBreak(t), tEnd);
    let tStop = Math.min(tNextSample, tEvent);
    if (settled >= 8 && !useOdex && !anyRamp(t) && prof.reference.constant) {
      // 3'. settled: jump to the next non-sample event holding the equilibrium.
      tStop = tEvent;
      skippedS += tStop - t;
      tNextSample = tStop;
      refreshOuts();
      const dt = tStop - t;
      accStep.fill(0);
      addEnergies(accStep, curOuts, curLeg, dt);
      for (let k = 0; k < ENERGY.n; k++) { accTh[k] += accStep[k]; accRec[k] += accStep[k]; accSup[k] += accStep[k]; accTot[k] += accStep[k]; }
      capOutMs += curOuts.capOutRmsA * curOuts.capOutRmsA * dt;
      capInMs += curOuts.capInRmsA * curOuts.capInRmsA * dt;
      recY += curOuts.yMeasured * dt; recDuty += u.duty * dt; recTime += dt; thTime += dt; supTime += dt;
      t = tStop;
      settled = 4; // re-check motion after the next event before jumping again
      continue;
    }
    // 3. integrate
    const dt = tStop - t;
    if (dt > 0) {
      if (!advance(dt)) { status = 'diverged'; cause = cause ?? `integration failed at ${t.toFixed(6)} s`; break; }
      t = tStop;
    } else {
      t = tStop;
    }
    if (checkDivergence()) { status = 'diverged'; break; }
  }
  if (status === 'ok' || status === 'interrupted' || status === 'diverged') {
    if (recTime > 0) emitRecord();
  }
  if (status === 'ok' && sup?.limitation) {
    const lim = sup.limitation();
    if (lim) { status = 'limited'; cause = lim; }
  }
  if (useOdex && mode === 'auto') warnings.add('strongly nonlinear stretches (saturation, DCM or current reversal) were integrated with odex');
  return {
    status,
    tEndS: t,
    cause,
    records,
    warnings: [...warnings],
    energiesJ: {
      pin: accTot[ENERGY.pin], pout: accTot[ENERGY.pout], hs: accTot[ENERGY.hs], ls: accTot[ENERGY.ls],
      passive: accTot[ENERGY.passive], gateDriver: accTot[ENERGY.gateDriver], store: accTot[ENERGY.store],
    },
    stats: { samples, skippedS, linearizations: zoh.linearizations, odexIntervals, iterations },
    finalX: [x[0], x[1]],
    finalTempsC: [...temps],
  };
}

/** The regulated quantity from the states without a leg evaluation: buck output voltage (ESR divider with the load) or half-bridge current. */
function measured(sys: SimSystem, x: Float64Array, u: AvgInputs): number {
  const c = sys.plant.conv;
  if (c.kind !== 'buck') return x[0];
  const esr = c.cout.esrOhm;
  if (Number.isNaN(u.loadROhm)) return x[1] + esr * (x[0] - u.loadIA);
  return (x[1] + esr * x[0]) / (1 + esr / u.loadROhm);
}

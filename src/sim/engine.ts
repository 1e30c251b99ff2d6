/**
 * Hybrid simulation engine. Step contract (see README.md in this folder):
 *  1. At an event time, run the due discrete updates in a fixed order — profiles, thermal step,
 *     record, supervisor tick, inner-loop sample — and hold their outputs.
 *  2. tStop = min(next sample, next thermal step, next record, next supervisor tick, next
 *     profile breakpoint, tEnd).
 *  3. Integrate the averaged electrical states to tStop with the held duty (odex, or the exact
 *     ZOH local-linear step), accumulating energies.
 *  4. Check for divergence; publish records. Settled stretches (error and motion negligible for
 *     several samples, no ramp on a plant input) are held: the electrical state stays at its
 *     equilibrium, samples are skipped and the engine jumps from event to event with losses
 *     linear in the junction temperatures, until an input changes or a junction has moved
 *     HOLD_BAND_K from where the hold began.
 * Outcomes are a status value, never an exception: ok | diverged | interrupted | limited.
 */
import { type AvgInputs, type AvgOutputs, averagedDerivatives, defaultAvgInputs, newAvgOutputs } from '../model/averaged.ts';
import { type LegResult, newLegResult } from '../model/leg.ts';
import { electricalPoint } from '../model/electrical.ts';
import type { Plant } from '../model/plant.ts';
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
import { LiveProfile, type Profile, ProfileReader, rampActive } from './profiles.ts';
import { type RunExtremes, RunWatch } from './watch.ts';

export type SimStatus = 'ok' | 'diverged' | 'interrupted' | 'limited';

export interface Knobs {
  fswHz: number;
  deadTimeS: number;
  vDriveV: number;
}

/**
 * What a supervisor sees at its tick (true plant quantities; sensor models live with the supervisor).
 * The engine refills one view object at every tick: read it during `tick`, do not keep it.
 */
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
  /** The knobs to apply from now on; the engine copies them at once (the object may be reused). */
  tick(view: EngineView): Knobs;
  /** Extra numeric fields for each record (measured loss, binding constraint code, …). */
  recordFields?(): Record<string, number | string>;
  /** When the demand cannot be met: the binding constraint. */
  limitation?(): string | undefined;
  /** Take over from manual knobs without a bump (supervisor switched back on). */
  resync?(knobs: Knobs): void;
}

export interface SimRecord {
  tS: number;
  demandW: number;
  /** Instantaneous ṁ·cp·(T_coolant − T_inlet) at tS. */
  heatToCoolantW: number;
  /** Powers: means over the record interval ending at tS. */
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
  /** Largest |reference − measured| at the control samples of the interval (0 when held). */
  yDevMax: number;
  /** Mean applied duty over the interval. */
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
  loadIA: number;
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

export type CauseCode = 'notANumber' | 'current' | 'voltage' | 'thermalRunaway' | 'integration' | 'interrupted' | 'limited';

export interface SimResult {
  status: SimStatus;
  tEndS: number;
  cause: string | undefined;
  causeCode: CauseCode | undefined;
  records: SimRecord[];
  warnings: string[];
  /** Integrated energies (J); `coolant` is the heat carried off by the coolant stream. */
  energiesJ: { pin: number; pout: number; hs: number; ls: number; passive: number; gateDriver: number; store: number; coolant: number };
  stats: {
    samples: number;
    /** Simulated time spent in held (settled) stretches. */
    skippedS: number;
    holds: number;
    linearizations: number;
    discretizations: number;
    odexIntervals: number;
    iterations: number;
    thermalSteps: number;
    heatToCoolantJ: number;
    /** Hottest junction over the run (either device) and when. */
    peakTjC: number;
    peakTjAtS: number;
    /** Time with a junction above its tjMax − tjMarginK, and above its tjMax. */
    timeAboveTjMarginS: number;
    timeAboveTjMaxS: number;
    /** Largest |reference − measured| at a control sample. */
    maxYDev: number;
    /** Largest deviation inside the settling windows that follow knob moves. */
    maxDevDuringMoves: number;
    /** Per knob move: time until the regulated output stayed within REGULATION_BAND of its reference. */
    moveSettleS: number[];
  };
  /** Per-device extremes and first crossings for cautions. */
  extremes: RunExtremes;
  /** Electrical states [x0, x1] at t = 0 (the starting equilibrium) and at tEndS, for checks. */
  initialX: number[];
  /** Final states for checks: electrical [x0, x1] and thermal node temperatures. */
  finalX: number[];
  finalTempsC: number[];
}

const DIVERGE_CURRENT_A = 1e4;
/** Consecutive still samples before a stretch counts as settled. */
const SETTLE_SAMPLES = 8;
/** A held stretch ends when a junction has moved this far from where its powers were evaluated (the ZOH model's own temperature validity). */
const HOLD_BAND_K = 0.25;
/** Finite-difference step for the held powers' temperature sensitivities. */
const HOLD_DTJ_K = 0.05;
/** Settling band after a knob move, as a fraction of the reference magnitude (our convention). */
export const REGULATION_BAND = 0.005;
/** Held power vector: the ENERGY entries, then the two capacitor mean squares. */
const HP_CAP_OUT = ENERGY.n;
const HP_CAP_IN = ENERGY.n + 1;
const HP_N = ENERGY.n + 2;

// Imported bindings are read through accessors under the TypeScript loader; hot loops use local copies.
const E_PIN = ENERGY.pin;
const E_POUT = ENERGY.pout;
const E_HS = ENERGY.hs;
const E_LS = ENERGY.ls;
const E_PASSIVE = ENERGY.passive;
const E_GATE = ENERGY.gateDriver;
const E_STORE = ENERGY.store;
const E_N = ENERGY.n;

/** The supervisor's view, refilled in place at every tick (no allocation per tick). Fields start as doubles. */
class TickView implements EngineView {
  tS = NaN;
  dtS = NaN;
  demandW = NaN;
  readonly knobs: Knobs = { fswHz: NaN, deadTimeS: NaN, vDriveV: NaN };
  tjHsC = NaN;
  tjLsC = NaN;
  heatsinkC = NaN;
  coolantC = NaN;
  inletC = NaN;
  flowKgPerS = NaN;
  heatToCoolantW = NaN;
  pinW = NaN;
  poutW = NaN;
  semiW = NaN;
  totalLossW = NaN;
  capOutRmsA = NaN;
  capInRmsA = NaN;
  vSourceV = NaN;
  loadROhm = NaN;
  loadIA = NaN;
}

/** Zero a short accumulator (a plain loop beats the TypedArray.fill builtin call at this size). */
function clear(a: Float64Array): void {
  for (let k = 0; k < a.length; k++) a[k] = 0;
}

/** Equal, or both NaN (an unused load field). */
function same(a: number, b: number): boolean {
  return a === b || (Number.isNaN(a) && Number.isNaN(b));
}

function powerVector(o: AvgOutputs, leg: LegResult, out: Float64Array): void {
  out[E_PIN] = o.pinW;
  out[E_POUT] = o.poutW;
  out[E_HS] = leg.hs.totalW;
  out[E_LS] = leg.ls.totalW;
  out[E_PASSIVE] = o.passiveW;
  out[E_GATE] = o.gateDriverW;
  out[E_STORE] = o.pStoreW;
  out[HP_CAP_OUT] = o.capOutRmsA * o.capOutRmsA;
  out[HP_CAP_IN] = o.capInRmsA * o.capInRmsA;
}

/** The plant with the converter's source and load replaced by their values at t = 0 (for the starting equilibrium). */
function plantAtStart(plant: Plant, u: AvgInputs): Plant {
  const c = plant.conv;
  if (c.kind === 'buck') {
    const load = Number.isNaN(u.loadROhm) ? { iA: u.loadIA } : { rOhm: u.loadROhm };
    return { ...plant, conv: { ...c, vinV: u.vSourceV, load } };
  }
  return { ...plant, conv: { ...c, vdcV: u.vSourceV } };
}

/** Inputs a live session may change; each change becomes a step breakpoint at the present time. */
export type LiveInput =
  | 'heatDemandW' | 'loadROhm' | 'loadIA' | 'vinV' | 'inletC' | 'flowKgPerS'
  | 'fswHz' | 'deadTimeS' | 'vDriveV' | 'controlKp' | 'controlKi' | 'supervisorOn';

type LiveProfiles = Record<LiveInput, LiveProfile> & { reference: Profile };

/**
 * A resumable simulation: `advanceUntil(t)` runs whole engine iterations (it never splits one),
 * so stopping, changing an input and going on gives the same trajectory as a scenario whose
 * profile has a step at that time. `simulate()` is the run-to-the-end wrapper.
 */
export class Simulation {
  readonly tEndS: number;
  readonly profiles: LiveProfiles;
  private readonly sys: SimSystem;
  private readonly opts: SimOptions;
  private readonly recDt: number;
  private readonly thDt: number;
  private readonly mode: 'auto' | 'odex' | 'zoh';
  private readonly keep: boolean;
  private readonly sup: SupervisorTask | undefined;
  private readonly warnings = new Set<string>();
  private readonly records: SimRecord[] = [];
  t = 0;
  readonly knobs: Knobs;
  private readonly u: AvgInputs;
  private readonly temps: Float64Array;
  private readonly jH: number;
  private readonly jL: number;
  private readonly x = new Float64Array(2);
  private readonly initialX: number[];
  private readonly piCfg: { -readonly [K in keyof PiConfig]: PiConfig[K] };
  private ts: number;
  private coeffs: { b0: number; b1: number };
  private readonly pi = createPiState(0);
  private readonly delay: DelayLine;
  private filtY = NaN;
  private readonly odex: OdexStepper;
  private readonly zoh: ZohStepper;
  private readonly curLeg: LegResult = newLegResult();
  private readonly curOuts: AvgOutputs = newAvgOutputs();
  private readonly dxScratch = new Float64Array(2);
  private readonly thIdx: ReturnType<typeof thermalInputIndex>;
  private readonly thU: Float64Array;
  private readonly thCache = new Map<string, ThermalDiscrete>();
  private readonly thOut: Float64Array;
  private readonly accStep = new Float64Array(E_N);
  private readonly accTh = new Float64Array(E_N);
  private readonly accRec = new Float64Array(E_N);
  private readonly accSup = new Float64Array(E_N);
  private readonly accTot = new Float64Array(E_N);
  private recY = 0;
  private recDuty = 0;
  private recTime = 0;
  private thTime = 0;
  private supTime = 0;
  private capOutMs = 0;
  private capInMs = 0;
  private tNextSample = 0;
  private tNextTh: number;
  private tNextRec: number;
  /** Thermal steps and records sit on the grids k·thDt and k·recDt (no drift from repeated addition). */
  private kTh = 1;
  private kRec = 1;
  private tNextSup: number;
  status: SimStatus = 'ok';
  cause: string | undefined;
  causeCode: CauseCode | undefined;
  private readonly watch: RunWatch;
  private coolantJ = 0;
  private recCapOutMs = 0;
  private recCapInMs = 0;
  private recYDev = 0;
  private lastCmd = NaN;
  private lastPiX = NaN;
  private holds = 0;
  private thermalSteps = 0;
  private thLast: ThermalDiscrete | undefined;
  /** Profiles whose ramps move the electrical plant (a ramp there forbids holding). */
  private readonly movingPlant: Profile[];
  // Held (settled) stretch: powers at the hold point and their junction-temperature sensitivities.
  private held = false;
  private readonly hp0 = new Float64Array(HP_N);
  private readonly hpH = new Float64Array(HP_N);
  private readonly hpL = new Float64Array(HP_N);
  private readonly hpNow = new Float64Array(HP_N);
  private readonly hLeg = newLegResult();
  private readonly hOuts = newAvgOutputs();
  private readonly uH: AvgInputs;
  private heldTjH = 0;
  private heldTjL = 0;
  private heldY = 0;
  private heldRef = 0;
  private heldPinned = false;
  private readonly heldU = new Float64Array(7);
  // Settling after knob moves.
  private moveAtS = NaN;
  private moveLastOutS = NaN;
  private readonly moveSettleS: number[] = [];
  private maxDevDuringMoves = 0;
  private samples = 0;
  private skippedS = 0;
  private odexIntervals = 0;
  private iterations = 0;
  /** Where the current advanceUntil stops (bare samples run inside an iteration stop there too). */
  private stopAtS = Infinity;
  private settled = 0;
  private lastE = 0;
  private useOdex: boolean;
  private supWasOn: boolean;
  private readonly breakProfiles: Profile[];
  // Per-iteration profile reads, cached between breakpoints (see ProfileReader); dropped at live steps.
  private readonly rSupOn: ProfileReader;
  private readonly rVin: ProfileReader;
  private readonly rLoadR: ProfileReader;
  private readonly rLoadI: ProfileReader;
  private readonly rFsw: ProfileReader;
  private readonly rDead: ProfileReader;
  private readonly rVDrive: ProfileReader;
  private readonly rRef: ProfileReader;
  private readonly rDemand: ProfileReader;
  private readonly rInlet: ProfileReader;
  private readonly rFlow: ProfileReader;
  private readonly readers: ProfileReader[];
  /** The PI gains follow a profile that can change (re-evaluated at live steps). */
  private gainsMove: boolean;
  /** The switching frequency `ts` was computed for (samplePeriodS depends on nothing else). */
  private tsFsw: number;
  // Constants of the system read every iteration.
  private readonly isBuck: boolean;
  private readonly loadIsCurrent: boolean;
  private readonly esrOut: number;
  private readonly runawayTjC: number;
  private readonly view = new TickView();
  private cachedBreak = -1;
  private cachedBreakAt = NaN;
  private finished = false;

  constructor(sys: SimSystem, opts: SimOptions = {}) {
    const sc = sys.scenario;
    const plant = sys.plant;
    const net = sys.net;
    this.sys = sys;
    this.opts = opts;
    this.tEndS = opts.durationS ?? sc.sim.durationS;
    this.recDt = opts.recordIntervalS ?? sc.sim.recordIntervalS;
    this.thDt = Math.min(sc.sim.thermalStepS, this.recDt);
    this.mode = opts.engine ?? sc.sim.engine;
    this.keep = opts.keepRecords ?? true;
    this.sup = opts.supervisor;
    const p = sys.profiles;
    const live = (q: Profile): LiveProfile => new LiveProfile(q);
    this.profiles = {
      heatDemandW: live(p.heatDemandW), loadROhm: live(p.loadROhm), loadIA: live(p.loadIA), vinV: live(p.vinV),
      inletC: live(p.inletC), flowKgPerS: live(p.flowKgPerS), fswHz: live(p.fswHz), deadTimeS: live(p.deadTimeS),
      vDriveV: live(p.vDriveV), controlKp: live(p.controlKp), controlKi: live(p.controlKi), supervisorOn: live(p.supervisorOn),
      reference: p.reference,
    };
    const prof = this.profiles;
    this.breakProfiles = Object.values(prof);
    const rd = (q: Profile): ProfileReader => new ProfileReader(q);
    this.rSupOn = rd(prof.supervisorOn);
    this.rVin = rd(prof.vinV);
    this.rLoadR = rd(prof.loadROhm);
    this.rLoadI = rd(prof.loadIA);
    this.rFsw = rd(prof.fswHz);
    this.rDead = rd(prof.deadTimeS);
    this.rVDrive = rd(prof.vDriveV);
    this.rRef = rd(prof.reference);
    this.rDemand = rd(prof.heatDemandW);
    this.rInlet = rd(prof.inletC);
    this.rFlow = rd(prof.flowKgPerS);
    this.readers = [this.rSupOn, this.rVin, this.rLoadR, this.rLoadI, this.rFsw, this.rDead, this.rVDrive, this.rRef, this.rDemand, this.rInlet, this.rFlow];
    this.gainsMove = !prof.controlKp.constant || !prof.controlKi.constant;
    this.isBuck = plant.conv.kind === 'buck';
    this.loadIsCurrent = sys.loadIsCurrent;
    this.esrOut = plant.conv.kind === 'buck' ? plant.conv.cout.esrOhm : NaN;
    this.runawayTjC = sc.limits.runawayTjC;
    this.movingPlant = [prof.loadROhm, prof.loadIA, prof.vinV, prof.reference, prof.fswHz, prof.deadTimeS, prof.vDriveV, prof.controlKp, prof.controlKi];
    this.knobs = { fswHz: prof.fswHz.valueAt(0), deadTimeS: prof.deadTimeS.valueAt(0), vDriveV: prof.vDriveV.valueAt(0) };
    this.u = defaultAvgInputs(plant);
    this.temps = new Float64Array(net.nNodes).fill(prof.inletC.valueAt(0));
    this.jH = net.layout.junction[0];
    this.jL = net.layout.junction[1];
    this.u.tjHsC = this.temps[this.jH];
    this.u.tjLsC = this.temps[this.jL];
    this.readInputs(0);
    // Electrical start: the regulated steady state at the initial knobs, inputs and temperatures.
    const ep0 = electricalPoint(plantAtStart(plant, this.u), this.knobs, this.u.tjHsC, this.u.tjLsC);
    this.x[0] = ep0.iMeanA;
    this.x[1] = plant.conv.kind === 'buck' ? ep0.vOutV : ep0.vBusV;
    this.u.duty = ep0.duty;
    this.initialX = [this.x[0], this.x[1]];
    this.piCfg = { ...sys.pi, kp: prof.controlKp.valueAt(0), ki: prof.controlKi.valueAt(0) };
    this.ts = samplePeriodS(sys, this.knobs.fswHz);
    this.tsFsw = this.knobs.fswHz;
    this.coeffs = piCoefficients(this.piCfg, this.ts);
    piReset(this.pi, ep0.duty);
    this.delay = new DelayLine(sys.delaySamples, ep0.duty);
    this.odex = new OdexStepper(plant);
    this.zoh = new ZohStepper(plant);
    this.uH = { ...this.u };
    this.watch = new RunWatch(plant, sc.limits.tjMarginK, sc.limits.vthSpreadV);
    this.refreshOuts();
    this.thIdx = thermalInputIndex(net);
    this.thU = new Float64Array(this.thIdx.nInputs);
    this.thOut = new Float64Array(net.nNodes);
    this.tNextTh = this.thDt;
    this.tNextRec = this.recDt;
    this.tNextSup = this.sup ? 0 : Infinity;
    this.useOdex = this.mode === 'odex';
    this.supWasOn = this.supOn(0);
  }

  /** Live command: hold an input at `value` from the present time on. */
  setInput(name: LiveInput, value: number): void {
    if (!Number.isFinite(value)) throw new Error(`${name}: must be a finite number, got ${value}`);
    this.profiles[name].setFrom(this.t, value);
    // Exactly what a profile breakpoint at this time does in a replay, nothing more (the next
    // iteration reads the new value; a hold ends there only if the plant moved), so a session
    // saved as step profiles replays line for line.
    this.cachedBreakAt = NaN;
    for (const r of this.readers) r.invalidate();
    this.gainsMove = !this.profiles.controlKp.constant || !this.profiles.controlKi.constant;
  }

  private supOn(t: number): boolean {
    return this.sup !== undefined && this.rSupOn.at(t) >= 0.5;
  }

  private refreshOuts(): void {
    averagedDerivatives(this.sys.plant, this.x, this.u, this.dxScratch, this.curLeg, this.curOuts);
    this.watch.leg(this.curLeg, this.u.vDriveV, this.u.tjHsC, this.u.tjLsC, this.t);
  }

  private readInputs(tt: number): void {
    const u = this.u;
    u.vSourceV = this.rVin.at(tt);
    if (this.isBuck) {
      if (this.loadIsCurrent) u.loadIA = this.rLoadI.at(tt);
      else u.loadROhm = this.rLoadR.at(tt);
    }
    u.fswHz = this.knobs.fswHz;
    u.deadTimeS = this.knobs.deadTimeS;
    u.vDriveV = this.knobs.vDriveV;
  }

  private nextBreak(tt: number): number {
    if (Number.isNaN(this.cachedBreakAt) || tt >= this.cachedBreakAt || tt < this.cachedBreak) {
      let b = Infinity;
      for (const p of this.breakProfiles) if (!p.constant) b = Math.min(b, p.nextBreakS(tt));
      this.cachedBreak = tt;
      this.cachedBreakAt = b;
    }
    return this.cachedBreakAt;
  }

  private anyRamp(tt: number): boolean {
    for (const p of this.movingPlant) if (rampActive(p, tt)) return true;
    return false;
  }

  private thermalStep(dtIn: number): void {
    let dt = dtIn;
    if (dt <= 0) return;
    this.flushZohEnergies();
    const net = this.sys.net;
    this.thermalSteps++;
    // Inputs held over the step take their mid-interval values: a step breakpoint landing at the
    // end of this interval belongs to the next one.
    const tMid = this.t - 0.5 * dt;
    const flow = this.rFlow.at(tMid);
    // Floating-point drift in the accumulated step would defeat the cache: snap to the nominal step.
    if (Math.abs(dt - this.thDt) < 1e-9 * this.thDt) dt = this.thDt;
    let disc = this.thLast;
    if (!disc || disc.flowKgPerS !== flow || disc.dtS !== dt) {
      const key = `${flow}|${dt}`;
      disc = this.thCache.get(key);
      if (!disc) {
        if (this.thCache.size > 64) this.thCache.clear();
        disc = discretizeThermal(net, flow, dt);
        this.thCache.set(key, disc);
      }
      this.thLast = disc;
    }
    const inlet = this.rInlet.at(tMid);
    const tc0 = this.temps[net.layout.coolant];
    const thU = this.thU;
    const acc = this.accTh;
    thU[this.thIdx.deviceLossW] = acc[E_HS] / dt;
    thU[this.thIdx.deviceLossW + 1] = acc[E_LS] / dt;
    thU[this.thIdx.sinkExtraW] = (this.sys.plant.passiveToPlateFraction * acc[E_PASSIVE]) / dt;
    thU[this.thIdx.inletC] = inlet;
    thU[this.thIdx.ambientC] = this.sys.scenario.thermal.ambientC;
    stepThermalDiscrete(disc, this.temps, thU, this.thOut);
    this.temps.set(this.thOut);
    // Coolant heat over the step by the trapezoid rule on the coolant node.
    this.coolantJ += flow * net.coolantCpJPerKgK * (0.5 * (tc0 + this.temps[net.layout.coolant]) - inlet) * dt;
    clear(acc);
    this.u.tjHsC = this.temps[this.jH];
    this.u.tjLsC = this.temps[this.jL];
    this.watch.thermal(this.u.tjHsC, this.u.tjLsC, dt, this.t);
  }

  private heatNow(): number {
    return heatToCoolantW(this.sys.net, this.temps, this.rInlet.at(this.t), this.rFlow.at(this.t));
  }

  private emitRecord(): void {
    this.flushZohEnergies();
    const dt = this.recTime > 0 ? this.recTime : 1;
    const a = this.accRec;
    const pin = a[E_PIN] / dt;
    const pout = a[E_POUT] / dt;
    const hs = a[E_HS] / dt;
    const ls = a[E_LS] / dt;
    const passive = a[E_PASSIVE] / dt;
    const gd = a[E_GATE] / dt;
    const prof = this.profiles;
    const net = this.sys.net;
    const t = this.t;
    this.watch.capacitorRms(Math.sqrt(this.recCapOutMs / dt), Math.sqrt(this.recCapInMs / dt));
    const r: SimRecord = {
      tS: t,
      demandW: prof.heatDemandW.valueAt(t),
      heatToCoolantW: this.heatNow(),
      pinW: pin,
      poutW: pout,
      totalLossW: hs + ls + passive + gd,
      semiLossW: hs + ls,
      hsLossW: hs,
      lsLossW: ls,
      passiveLossW: passive,
      gateDriverW: gd,
      efficiency: pin > 0 ? pout / pin : 0,
      yMeasured: this.recY / dt,
      reference: prof.reference.valueAt(t),
      yDevMax: this.recYDev,
      duty: this.recDuty / dt,
      fswHz: this.knobs.fswHz,
      deadTimeS: this.knobs.deadTimeS,
      vDriveV: this.knobs.vDriveV,
      tjHsC: this.temps[this.jH],
      tjLsC: this.temps[this.jL],
      heatsinkC: this.temps[net.layout.heatsink],
      coolantC: this.temps[net.layout.coolant],
      inletC: prof.inletC.valueAt(t),
      loadROhm: this.u.loadROhm,
      loadIA: this.u.loadIA,
    };
    if (this.sup?.recordFields) Object.assign(r, this.sup.recordFields());
    if (this.keep) this.records.push(r);
    this.opts.onRecord?.(r);
    clear(a);
    this.recY = this.recDuty = this.recTime = this.recCapOutMs = this.recCapInMs = this.recYDev = 0;
  }

  /** Book an interval's energies (accStep), mean output and capacitor mean squares into every accumulator. */
  private accumulate(dt: number, yMean: number, capOutMs: number, capInMs: number): void {
    this.bookEnergies();
    this.accumulateRest(dt, yMean, capOutMs, capInMs);
  }

  /** Add accStep to every energy accumulator. */
  private bookEnergies(): void {
    const s = this.accStep;
    for (let k = 0; k < E_N; k++) {
      this.accTh[k] += s[k];
      this.accRec[k] += s[k];
      this.accSup[k] += s[k];
      this.accTot[k] += s[k];
    }
  }

  /**
   * Energies of ZOH steps are booked in the stepper (sums linear in the states) and moved into the
   * accumulators here, by whatever reads them (thermal step, record, supervisor tick, finish) — at
   * event times, so where advanceUntil's pieces end never changes the sums.
   */
  private flushZohEnergies(): void {
    if (this.zoh.takeEnergies(this.accStep)) this.bookEnergies();
  }

  /** Mean output and capacitor mean squares of an interval, and its length, into their accumulators. */
  private accumulateRest(dt: number, yMean: number, capOutMs: number, capInMs: number): void {
    this.capOutMs += capOutMs * dt;
    this.capInMs += capInMs * dt;
    this.recCapOutMs += capOutMs * dt;
    this.recCapInMs += capInMs * dt;
    this.recY += yMean * dt;
    this.recDuty += this.u.duty * dt;
    this.recTime += dt;
    this.thTime += dt;
    this.supTime += dt;
  }

  private advance(dt: number): boolean {
    const x = this.x;
    const u = this.u;
    const y0 = this.measuredNow();
    if (this.useOdex) {
      // odex adds into accStep; the ZOH path below overwrites every entry.
      clear(this.accStep);
      this.odexIntervals++;
      if (this.odex.advance(x, u, dt, this.accStep) === 'failed') return false;
      this.refreshOuts();
    } else {
      const zoh = this.zoh;
      if (!zoh.stillValid(x, u)) {
        zoh.linearize(x, u);
        Object.assign(this.curOuts, zoh.pointOuts);
        Object.assign(this.curLeg.hs, zoh.pointLeg.hs);
        Object.assign(this.curLeg.ls, zoh.pointLeg.ls);
        this.curLeg.semiW = zoh.pointLeg.semiW;
        this.watch.leg(zoh.pointLeg, u.vDriveV, u.tjHsC, u.tjLsC, this.t);
        if (this.mode === 'auto' && zoh.nonlinear) {
          this.useOdex = true;
          return this.advance(dt);
        }
      }
      const xa = x[0];
      const xb = x[1];
      zoh.step(x, u.duty, dt);
      // Powers of the local model at the interval's mid-point state: second-order accurate energies
      // (booked in the stepper, see flushZohEnergies).
      zoh.book(0.5 * (xa + x[0]), 0.5 * (xb + x[1]), u.duty, dt);
      if (!(Number.isFinite(x[0]) && Number.isFinite(x[1]))) return false;
      this.accumulateRest(dt, 0.5 * (y0 + this.measuredNow()), zoh.capOutMs, zoh.capInMs);
      return true;
    }
    if (!(Number.isFinite(x[0]) && Number.isFinite(x[1]))) return false;
    // Trapezoid on the regulated quantity: the records follow the state, not the last leg evaluation.
    const o = this.curOuts;
    this.accumulate(dt, 0.5 * (y0 + this.measuredNow()), o.capOutRmsA * o.capOutRmsA, o.capInRmsA * o.capInRmsA);
    return true;
  }

  /** Start a held stretch: powers at the present point and their sensitivities to each junction temperature. */
  private enterHold(): void {
    const plant = this.sys.plant;
    const x = this.x;
    const u = this.u;
    this.held = true;
    this.holds++;
    this.closeMoveWindow();
    this.refreshOuts();
    powerVector(this.curOuts, this.curLeg, this.hp0);
    const uH = Object.assign(this.uH, u);
    uH.tjHsC = u.tjHsC + HOLD_DTJ_K;
    averagedDerivatives(plant, x, uH, this.dxScratch, this.hLeg, this.hOuts);
    powerVector(this.hOuts, this.hLeg, this.hpH);
    uH.tjHsC = u.tjHsC;
    uH.tjLsC = u.tjLsC + HOLD_DTJ_K;
    averagedDerivatives(plant, x, uH, this.dxScratch, this.hLeg, this.hOuts);
    powerVector(this.hOuts, this.hLeg, this.hpL);
    for (let k = 0; k < HP_N; k++) {
      this.hpH[k] = (this.hpH[k] - this.hp0[k]) / HOLD_DTJ_K;
      this.hpL[k] = (this.hpL[k] - this.hp0[k]) / HOLD_DTJ_K;
    }
    this.heldTjH = u.tjHsC;
    this.heldTjL = u.tjLsC;
    this.heldY = this.measuredNow();
    this.heldRef = this.rRef.at(this.t);
    this.heldPinned = this.pi.saturation !== 0;
    const h = this.heldU;
    h[0] = u.vSourceV; h[1] = u.loadROhm; h[2] = u.loadIA; h[3] = u.fswHz; h[4] = u.deadTimeS; h[5] = u.vDriveV; h[6] = u.backEmfV;
  }

  /** The hold point still describes the plant: same inputs and knobs, junctions within HOLD_BAND_K. */
  private holdStillValid(): boolean {
    const u = this.u;
    const h = this.heldU;
    if (Math.abs(u.tjHsC - this.heldTjH) > HOLD_BAND_K || Math.abs(u.tjLsC - this.heldTjL) > HOLD_BAND_K) return false;
    return same(u.vSourceV, h[0]) && same(u.loadROhm, h[1]) && same(u.loadIA, h[2]) && u.fswHz === h[3] &&
      u.deadTimeS === h[4] && u.vDriveV === h[5] && u.backEmfV === h[6] && this.rRef.at(this.t) === this.heldRef;
  }

  /** A held interval: state and duty unchanged, powers linear in the junction temperatures. */
  private advanceHeld(dt: number): void {
    const dh = this.u.tjHsC - this.heldTjH;
    const dl = this.u.tjLsC - this.heldTjL;
    const p = this.hpNow;
    for (let k = 0; k < HP_N; k++) p[k] = this.hp0[k] + this.hpH[k] * dh + this.hpL[k] * dl;
    for (let k = 0; k < E_N; k++) this.accStep[k] = p[k] * dt;
    this.accumulate(dt, this.heldY, Math.max(p[HP_CAP_OUT], 0), Math.max(p[HP_CAP_IN], 0));
    if (this.heldPinned) this.watch.pinnedHeld(dt);
    this.skippedS += dt;
  }

  /** Close the settling window of the last knob move (at a hold, the next move or the end). */
  private closeMoveWindow(): void {
    if (Number.isNaN(this.moveAtS)) return;
    this.moveSettleS.push(Number.isNaN(this.moveLastOutS) ? 0 : this.moveLastOutS - this.moveAtS);
    this.moveAtS = this.moveLastOutS = NaN;
  }

  private diverged(): boolean {
    const x = this.x;
    const u = this.u;
    if (!Number.isFinite(x[0]) || !Number.isFinite(x[1])) { this.cause = 'electrical state is not a number'; this.causeCode = 'notANumber'; return true; }
    if (Math.abs(x[0]) > DIVERGE_CURRENT_A) {
      this.cause = `current ${x[0].toExponential(2)} A beyond ${DIVERGE_CURRENT_A} A`;
      this.causeCode = 'current';
      return true;
    }
    const vMax = 3 * Math.max(u.vSourceV, 1);
    if (Math.abs(x[1]) > vMax) { this.cause = `voltage ${x[1].toFixed(1)} V beyond ${vMax.toFixed(0)} V`; this.causeCode = 'voltage'; return true; }
    const tjMax = Math.max(u.tjHsC, u.tjLsC);
    const lim = this.runawayTjC;
    if (!(tjMax <= lim)) {
      this.cause = `thermal runaway: junction ${tjMax.toFixed(1)} °C above ${lim} °C at ${this.t.toFixed(3)} s`;
      this.causeCode = 'thermalRunaway';
      return true;
    }
    return false;
  }

  /** `measured(sys, x, u)` for the present state, with the system constants in fields (hot path). */
  private measuredNow(): number {
    return measuredFrom(this.isBuck, this.esrOut, this.x, this.u);
  }

  private supervisorTick(): void {
    this.flushZohEnergies();
    const sup = this.sup!;
    const net = this.sys.net;
    const t = this.t;
    const a = this.accSup;
    const st = this.supTime;
    const dt = st > 0 ? st : 1;
    const o = this.curOuts;
    const view = this.view;
    view.tS = t;
    view.dtS = st;
    view.demandW = this.rDemand.at(t);
    view.knobs.fswHz = this.knobs.fswHz;
    view.knobs.deadTimeS = this.knobs.deadTimeS;
    view.knobs.vDriveV = this.knobs.vDriveV;
    view.tjHsC = this.temps[this.jH];
    view.tjLsC = this.temps[this.jL];
    view.heatsinkC = this.temps[net.layout.heatsink];
    view.coolantC = this.temps[net.layout.coolant];
    view.inletC = this.rInlet.at(t);
    view.flowKgPerS = this.rFlow.at(t);
    // heatNow() with the inputs just read (the inlet ramp is not cached between breakpoints).
    view.heatToCoolantW = heatToCoolantW(net, this.temps, view.inletC, view.flowKgPerS);
    view.pinW = st > 0 ? a[E_PIN] / dt : o.pinW;
    view.poutW = st > 0 ? a[E_POUT] / dt : o.poutW;
    view.semiW = st > 0 ? (a[E_HS] + a[E_LS]) / dt : o.semiW;
    view.totalLossW = st > 0 ? (a[E_HS] + a[E_LS] + a[E_PASSIVE] + a[E_GATE]) / dt : o.totalLossW;
    view.capOutRmsA = st > 0 ? Math.sqrt(this.capOutMs / dt) : o.capOutRmsA;
    view.capInRmsA = st > 0 ? Math.sqrt(this.capInMs / dt) : o.capInRmsA;
    view.vSourceV = this.u.vSourceV;
    view.loadROhm = this.u.loadROhm;
    view.loadIA = this.u.loadIA;
    const k = sup.tick(view);
    this.knobs.fswHz = k.fswHz;
    this.knobs.deadTimeS = k.deadTimeS;
    this.knobs.vDriveV = k.vDriveV;
    this.readInputs(t);
    clear(a);
    this.supTime = 0;
    this.capOutMs = this.capInMs = 0;
    this.tNextSup = t + sup.tickS;
  }

  /** A control sample at t: measure, step the PI controller, feed the delay line and the settling test. */
  private controlSample(t: number): void {
    const x = this.x;
    const u = this.u;
    this.samples++;
    let y = this.measuredNow();
    const fHz = this.sys.sensorFilterHz;
    if (fHz !== undefined) {
      const a = 1 - Math.exp(-2 * Math.PI * fHz * this.ts);
      this.filtY = Number.isNaN(this.filtY) ? y : this.filtY + a * (y - this.filtY);
      y = this.filtY;
    }
    const ref = this.rRef.at(t);
    const e = ref - y;
    const cmd = piStep(this.piCfg, this.coeffs, this.pi, e);
    u.duty = this.delay.push(cmd);
    this.tNextSample = t + this.ts;
    const dev = Math.abs(e);
    this.watch.sample(e, this.pi.saturation !== 0, this.ts, t);
    if (dev > this.recYDev) this.recYDev = dev;
    if (!Number.isNaN(this.moveAtS)) {
      if (dev > this.maxDevDuringMoves) this.maxDevDuringMoves = dev;
      if (dev > REGULATION_BAND * Math.abs(ref)) this.moveLastOutS = t;
    }
    // Settled: no motion, and either no error or a controller that no longer moves at all —
    // output and stored state (duty pinned with the integrator clamped, or an open loop) — for
    // several samples in a row. A winding integrator behind a pinned output is not settled.
    const piX = this.pi.x;
    const frozen = cmd === this.lastCmd && Math.abs(piX - this.lastPiX) <= 1e-12 * (1 + Math.abs(piX));
    const still = Math.abs(e - this.lastE) < 1e-7 * (1 + Math.abs(y)) && (dev < 1e-6 * (1 + Math.abs(ref)) || frozen);
    this.settled = still ? this.settled + 1 : 0;
    this.lastE = e;
    this.lastCmd = cmd;
    this.lastPiX = piX;
    if (this.mode === 'auto' && this.useOdex && this.samples % 64 === 0) {
      this.zoh.linearize(x, u);
      this.useOdex = this.zoh.nonlinear;
    }
  }

  /** One engine iteration: due discrete updates at t, then integrate to the next event. */
  private iterate(): boolean {
    const prof = this.profiles;
    const x = this.x;
    const u = this.u;
    const t = this.t;
    this.iterations++;
    // 1. discrete updates due at t, in a fixed order
    const supOn = this.supOn(t);
    const k0 = this.knobs.fswHz, k1 = this.knobs.deadTimeS, k2 = this.knobs.vDriveV;
    if (!supOn) {
      this.knobs.fswHz = this.rFsw.at(t);
      this.knobs.deadTimeS = this.rDead.at(t);
      this.knobs.vDriveV = this.rVDrive.at(t);
    } else if (!this.supWasOn) {
      this.sup!.resync?.(this.knobs);
      this.tNextSup = t;
    }
    this.supWasOn = supOn;
    this.readInputs(t);
    if (t >= this.tNextTh - 1e-12) {
      this.thermalStep(this.thTime);
      this.thTime = 0;
      while (this.tNextTh <= t + 1e-12) this.tNextTh = ++this.kTh * this.thDt;
      if (!this.held) this.refreshOuts();
    }
    if (t >= this.tNextRec - 1e-12) {
      this.emitRecord();
      while (this.tNextRec <= t + 1e-12) this.tNextRec = ++this.kRec * this.recDt;
    }
    if (supOn && t >= this.tNextSup - 1e-12) this.supervisorTick();
    if (this.gainsMove) {
      const kp = prof.controlKp.valueAt(t);
      const ki = prof.controlKi.valueAt(t);
      if (kp !== this.piCfg.kp || ki !== this.piCfg.ki) {
        this.piCfg.kp = kp;
        this.piCfg.ki = ki;
        this.coeffs = piCoefficients(this.piCfg, this.ts);
      }
    }
    if (this.knobs.fswHz !== k0 || this.knobs.deadTimeS !== k1 || this.knobs.vDriveV !== k2) {
      // A knob move opens a settling window (regulation metric).
      this.closeMoveWindow();
      this.moveAtS = t;
    }
    if (this.held && !this.holdStillValid()) {
      // Something moved the plant: resume sampling now; the loop re-settles before the next hold.
      this.held = false;
      this.settled = 0;
      this.tNextSample = t;
      this.refreshOuts();
    }
    // The sample period depends on fsw alone: recompute it only when fsw moved.
    const fsw = this.knobs.fswHz;
    const newTs = fsw === this.tsFsw ? this.ts : samplePeriodS(this.sys, fsw);
    this.tsFsw = fsw;
    if (newTs !== this.ts) {
      this.ts = newTs;
      // Continuous-basis gains are rescaled with the sample period; per-sample gains are not.
      this.coeffs = piCoefficients(this.piCfg, newTs);
      if (this.tNextSample > t + newTs) this.tNextSample = t + newTs;
    }
    if (!this.held && t >= this.tNextSample - 1e-12) this.controlSample(t);
    // 2. next event
    const tEvent = Math.min(this.tNextTh, this.tNextRec, supOn ? this.tNextSup : Infinity, this.nextBreak(t), this.tEndS);
    return this.integrate(tEvent);
  }

  /**
   * No ramp on a plant input, a gain, the knobs or the supervisor switch at tt: until the next
   * breakpoint an iteration re-reads the same inputs.
   */
  private inputsSteady(tt: number): boolean {
    return !this.anyRamp(tt) && !rampActive(this.profiles.supervisorOn, tt);
  }

  /**
   * Steps 2–3 of an iteration at this.t toward tEvent: a hold when settled, else integrate to the next
   * sample or event. While the next iteration would do nothing but a control sample (nothing else
   * due, inputs steady, before the caller's stop time), it is run here — the same calls in the same
   * order as iterate() would make, without re-reading inputs and events.
   */
  private integrate(tEvent: number): boolean {
    const tIter = this.t;
    let steady: boolean | undefined;
    for (;;) {
      const t = this.t;
      if (!this.held && this.settled >= SETTLE_SAMPLES && !this.useOdex && !this.anyRamp(t)) this.enterHold();
      if (this.held) {
        // 3'. held: jump to the next event; no samples in between.
        this.advanceHeld(tEvent - t);
        this.t = tEvent;
        this.tNextSample = tEvent;
        if (this.diverged()) { this.status = 'diverged'; return false; }
        return true;
      }
      const tStop = Math.min(this.tNextSample, tEvent);
      // 3. integrate
      const dt = tStop - t;
      if (dt > 0 && !this.advance(dt)) {
        this.status = 'diverged';
        if (!this.diverged()) {
          this.cause = `integration failed at ${t.toFixed(6)} s`;
          this.causeCode = 'integration';
        }
        return false;
      }
      this.t = tStop;
      if (this.diverged()) { this.status = 'diverged'; return false; }
      if (!(tStop < tEvent - 1e-12 && tStop >= this.tNextSample - 1e-12 && tStop < this.stopAtS - 1e-12 && (steady ??= this.inputsSteady(tIter)))) return true;
      // The next iteration, a bare control sample.
      this.iterations++;
      this.controlSample(tStop);
    }
  }

  /**
   * Run whole iterations until t ≥ tS (or the end, divergence, or a stop request). `yieldNow`, polled
   * every 256 iterations, returns early with the status unchanged (a caller's time slice is spent);
   * the next call continues exactly where this one stopped.
   */
  advanceUntil(tS: number, yieldNow?: () => boolean): SimStatus {
    if (this.finished || this.status !== 'ok') return this.status;
    const target = Math.min(tS, this.tEndS);
    this.stopAtS = target;
    let poll = 0;
    while (this.t < target - 1e-12) {
      if (yieldNow !== undefined && (poll & 255) === 255 && yieldNow()) break;
      if (++poll >= 4096) {
        poll = 0;
        this.opts.onProgress?.(this.t, this.tEndS);
        if (this.opts.shouldStop?.()) {
          this.status = 'interrupted';
          this.cause = `stopped at ${this.t.toFixed(3)} s`;
          this.causeCode = 'interrupted';
          break;
        }
      }
      if (!this.iterate()) break;
    }
    return this.status;
  }

  get done(): boolean {
    return this.finished || this.status !== 'ok' || this.t >= this.tEndS - 1e-12;
  }

  /** Latest plant state for live views (no record needed). */
  snapshot(): { tS: number; x: number[]; tempsC: number[]; duty: number; knobs: Knobs; outs: AvgOutputs } {
    return { tS: this.t, x: [this.x[0], this.x[1]], tempsC: [...this.temps], duty: this.u.duty, knobs: { ...this.knobs }, outs: { ...this.curOuts } };
  }

  /** Close the run: flush the last partial record and settle the status. */
  finish(): SimResult {
    if (!this.finished) {
      this.finished = true;
      this.flushZohEnergies();
      // Close the last intervals so the final temperatures and the last record belong to tEndS.
      const acc = this.accTh;
      let finite = true;
      for (let k = 0; k < E_N; k++) finite &&= Number.isFinite(acc[k]);
      if (this.thTime > 0 && finite) {
        this.thermalStep(this.thTime);
        this.thTime = 0;
      }
      if (this.recTime > 0) this.emitRecord();
      this.closeMoveWindow();
      if (this.status === 'ok' && this.sup?.limitation) {
        const lim = this.sup.limitation();
        if (lim) { this.status = 'limited'; this.cause = lim; this.causeCode = 'limited'; }
      }
      if (this.mode === 'auto' && this.odexIntervals > 0)
        this.warnings.add('strongly nonlinear stretches (saturation, DCM or current reversal) were integrated with odex');
    }
    const a = this.accTot;
    const ex = this.watch.result();
    const hot = ex.tjPeakC[0] >= ex.tjPeakC[1] ? 0 : 1;
    return {
      status: this.status,
      tEndS: this.t,
      cause: this.cause,
      causeCode: this.causeCode,
      records: this.records,
      warnings: [...this.warnings],
      energiesJ: {
        pin: a[E_PIN], pout: a[E_POUT], hs: a[E_HS], ls: a[E_LS],
        passive: a[E_PASSIVE], gateDriver: a[E_GATE], store: a[E_STORE], coolant: this.coolantJ,
      },
      stats: {
        samples: this.samples, skippedS: this.skippedS, holds: this.holds, linearizations: this.zoh.linearizations,
        discretizations: this.zoh.discretizations, odexIntervals: this.odexIntervals, iterations: this.iterations,
        thermalSteps: this.thermalSteps, heatToCoolantJ: this.coolantJ, peakTjC: ex.tjPeakC[hot], peakTjAtS: ex.tjPeakAtS[hot],
        timeAboveTjMarginS: ex.timeAnyInMarginS, timeAboveTjMaxS: ex.timeAnyAboveMaxS, maxYDev: ex.maxAbsErrorY,
        maxDevDuringMoves: this.maxDevDuringMoves, moveSettleS: [...this.moveSettleS],
      },
      extremes: ex,
      initialX: [...this.initialX],
      finalX: [this.x[0], this.x[1]],
      finalTempsC: [...this.temps],
    };
  }
}

export function simulate(sys: SimSystem, opts: SimOptions = {}): SimResult {
  const sim = new Simulation(sys, opts);
  sim.advanceUntil(sim.tEndS);
  return sim.finish();
}

/** The regulated quantity from the states without a leg evaluation: buck output voltage (ESR divider with the load) or half-bridge current. */
export function measured(sys: SimSystem, x: Float64Array, u: AvgInputs): number {
  const c = sys.plant.conv;
  return measuredFrom(c.kind === 'buck', c.kind === 'buck' ? c.cout.esrOhm : 0, x, u);
}

/** `measured` with the topology and the output capacitor's ESR given (the engine keeps them in fields). */
function measuredFrom(isBuck: boolean, esrOhm: number, x: Float64Array, u: AvgInputs): number {
  if (!isBuck) return x[0];
  if (Number.isNaN(u.loadROhm)) return x[1] + esrOhm * (x[0] - u.loadIA);
  return (x[1] + esrOhm * x[0]) / (1 + esrOhm / u.loadROhm);
}

/**
 * Advancing the averaged electrical states over an interval with the duty held (PWM hold).
 * Two integrators behind one interface:
 *  - `odex`: the Gragg–Bulirsch–Stoer extrapolation solver from the odex package, restarted at
 *    every interval (accuracy reference; used where the plant is strongly nonlinear);
 *  - `zoh`: exact zero-order-hold discretization of the plant linearized about the current
 *    point (affine local model x' = A·x + b·d + w), cached and re-linearized when the state,
 *    inputs or temperatures move. Both integrate the same `averagedDerivatives`.
 * This file (with engine.ts) is the only place that imports odex.
 */
import { Outcome, Solver } from 'odex';
import { type AvgInputs, type AvgOutputs, averagedDerivatives, defaultAvgInputs, newAvgOutputs } from '../model/averaged.ts';
import { type LegResult, newLegResult } from '../model/leg.ts';
import type { Plant } from '../model/plant.ts';
import { zohDiscretize } from '../model/thermal/matrixExponential.ts';

/** Integrated quantities carried alongside the states (J, or V·s / s for means). */
export const ENERGY = Object.freeze({ pin: 0, pout: 1, hs: 2, ls: 3, passive: 4, gateDriver: 5, store: 6, n: 7 });

export function addEnergies(acc: Float64Array, o: AvgOutputs, leg: LegResult, dtS: number): void {
  acc[ENERGY.pin] += o.pinW * dtS;
  acc[ENERGY.pout] += o.poutW * dtS;
  acc[ENERGY.hs] += leg.hs.totalW * dtS;
  acc[ENERGY.ls] += leg.ls.totalW * dtS;
  acc[ENERGY.passive] += o.passiveW * dtS;
  acc[ENERGY.gateDriver] += o.gateDriverW * dtS;
  acc[ENERGY.store] += o.pStoreW * dtS;
}

export class OdexStepper {
  private readonly solver: Solver;
  private readonly leg = newLegResult();
  private readonly outs = newAvgOutputs();
  private readonly y = new Array<number>(2 + ENERGY.n).fill(0);
  private readonly dx = new Float64Array(2);
  private u!: AvgInputs;
  private readonly f: (t: number, y: number[]) => number[];
  evaluations = 0;

  constructor(private readonly plant: Plant, relTol = 1e-9, absTol = 1e-9) {
    this.solver = new Solver(2 + ENERGY.n);
    this.solver.relativeTolerance = relTol;
    this.solver.absoluteTolerance = absTol;
    this.solver.maxSteps = 100_000;
    this.solver.denseOutput = false;
    const out = new Array<number>(2 + ENERGY.n).fill(0);
    this.f = (_t, y) => {
      this.evaluations++;
      averagedDerivatives(this.plant, y, this.u, this.dx, this.leg, this.outs);
      out[0] = this.dx[0];
      out[1] = this.dx[1];
      const o = this.outs;
      out[2 + ENERGY.pin] = o.pinW;
      out[2 + ENERGY.pout] = o.poutW;
      out[2 + ENERGY.hs] = this.leg.hs.totalW;
      out[2 + ENERGY.ls] = this.leg.ls.totalW;
      out[2 + ENERGY.passive] = o.passiveW;
      out[2 + ENERGY.gateDriver] = o.gateDriverW;
      out[2 + ENERGY.store] = o.pStoreW;
      return out;
    };
  }

  /** Advance x over dtS with inputs u held; energies integrated exactly into `acc`. */
  advance(x: Float64Array, u: AvgInputs, dtS: number, acc: Float64Array): 'ok' | 'failed' {
    this.u = u;
    const y = this.y;
    y[0] = x[0];
    y[1] = x[1];
    for (let k = 0; k < ENERGY.n; k++) y[2 + k] = 0;
    const r = this.solver.solve(this.f, 0, y, dtS);
    if (r.outcome !== Outcome.Converged) return 'failed';
    x[0] = r.y[0];
    x[1] = r.y[1];
    for (let k = 0; k < ENERGY.n; k++) acc[k] += r.y[2 + k];
    return Number.isFinite(x[0]) && Number.isFinite(x[1]) ? 'ok' : 'failed';
  }
}

/** Power vector of the local model: the ENERGY entries, then the output and input capacitor ripple mean squares. */
export const POWER_N = ENERGY.n + 2;

function powersOf(o: AvgOutputs, leg: LegResult, out: Float64Array, base: number): void {
  out[base + ENERGY.pin] = o.pinW;
  out[base + ENERGY.pout] = o.poutW;
  out[base + ENERGY.hs] = leg.hs.totalW;
  out[base + ENERGY.ls] = leg.ls.totalW;
  out[base + ENERGY.passive] = o.passiveW;
  out[base + ENERGY.gateDriver] = o.gateDriverW;
  out[base + ENERGY.store] = o.pStoreW;
  out[base + ENERGY.n] = o.capOutRmsA * o.capOutRmsA;
  out[base + ENERGY.n + 1] = o.capInRmsA * o.capInRmsA;
}

const CAP_OUT = ENERGY.n;

/** Relative tolerance within which two interval lengths share one discretization (float time grid jitter). */
const DT_MATCH_REL = 1e-9;

/**
 * Local linear model with exact ZOH discretization. Valid near (x0, d0) for the inputs and
 * temperatures it was built with; `stillValid` says when to rebuild. The continuous model
 * (A, b, w) is kept, and discretized lazily per interval length: the full sample period and
 * the last partial interval (an event between samples) are cached side by side, so an event
 * costs one small matrix exponential, not a new linearization.
 */
export class ZohStepper {
  private readonly leg = newLegResult();
  private readonly f0 = new Float64Array(2);
  private readonly fp = new Float64Array(2);
  private readonly x0 = new Float64Array(2);
  private readonly xp = new Float64Array(2);
  private d0 = NaN;
  private valid = false;
  private readonly uu: AvgInputs;
  private readonly uKey = new Float64Array(9);
  /** Continuous local model f ≈ a·x + b·d + w. */
  private readonly a = new Float64Array(4);
  private readonly bw = new Float64Array(4);
  /** Two cached discretizations x⁺ = ad·x + gb·d + gw, for interval lengths slotDt[0], slotDt[1]. */
  private readonly slotDt = new Float64Array([NaN, NaN]);
  private readonly slotAd = [new Float64Array(4), new Float64Array(4)];
  private readonly slotGb = [new Float64Array(2), new Float64Array(2)];
  private readonly slotGw = [new Float64Array(2), new Float64Array(2)];
  private readonly scale = new Float64Array(2);
  /** Powers at the point (POWER_N) and their gradients along x0, x1 and the duty: rows of POWER_N. */
  private readonly pw = new Float64Array(4 * POWER_N);
  private readonly outsP = newAvgOutputs();
  linearizations = 0;
  discretizations = 0;
  /** Outputs and leg at the linearization point (powers used between evaluations). */
  readonly pointOuts: AvgOutputs = newAvgOutputs();
  readonly pointLeg: LegResult = newLegResult();
  /** The leg at the point is strongly nonlinear (saturation, DCM, an edge current near zero). */
  nonlinear = false;

  constructor(private readonly plant: Plant) {
    this.uu = defaultAvgInputs(plant);
  }

  private key(u: AvgInputs): void {
    const k = this.uKey;
    k[0] = u.fswHz; k[1] = u.deadTimeS; k[2] = u.vDriveV; k[3] = u.vSourceV; k[4] = u.loadROhm;
    k[5] = u.loadIA; k[6] = u.backEmfV; k[7] = u.tjHsC; k[8] = u.tjLsC;
  }

  /** The cached model still describes the plant at (x, u): same inputs, temperatures within 0.25 K, state and duty near the point. */
  stillValid(x: Float64Array, u: AvgInputs): boolean {
    if (!this.valid) return false;
    const k = this.uKey;
    if (u.fswHz !== k[0] || u.deadTimeS !== k[1] || u.vDriveV !== k[2] || u.vSourceV !== k[3] || u.backEmfV !== k[6]) return false;
    if (!(u.loadROhm === k[4] || (Number.isNaN(u.loadROhm) && Number.isNaN(k[4]))) || u.loadIA !== k[5]) return false;
    if (Math.abs(u.tjHsC - k[7]) > 0.25 || Math.abs(u.tjLsC - k[8]) > 0.25) return false;
    if (Math.abs(u.duty - this.d0) > 0.002) return false;
    return Math.abs(x[0] - this.x0[0]) <= this.scale[0] && Math.abs(x[1] - this.x0[1]) <= this.scale[1];
  }

  /**
   * Energies of the steps booked since the last `takeEnergies`. The local powers are linear in the
   * states and duty about the point, so booking a step adds its length and its mid-point
   * deviations from the point, each times the length, to four sums; the energies are formed from
   * them when taken, or carried over when the point moves (`linearize`).
   */
  private sumDt = 0;
  private sumD0 = 0;
  private sumD1 = 0;
  private sumDd = 0;
  private readonly carry = new Float64Array(ENERGY.n);
  private pending = false;
  /** Capacitor ripple mean squares (A²) of the last booked step's mid-point, clipped at zero. */
  capOutMs = 0;
  capInMs = 0;

  /** Book a step of length dtS whose mid-point state is (m0, m1), duty held at `duty`. */
  book(m0: number, m1: number, duty: number, dtS: number): void {
    const pw = this.pw;
    const d0 = m0 - this.x0[0];
    const d1 = m1 - this.x0[1];
    const dd = duty - this.d0;
    this.sumDt += dtS;
    this.sumD0 += d0 * dtS;
    this.sumD1 += d1 * dtS;
    this.sumDd += dd * dtS;
    this.pending = true;
    const o = CAP_OUT;
    const i = CAP_OUT + 1;
    const out = pw[o] + pw[POWER_N + o] * d0 + pw[2 * POWER_N + o] * d1 + pw[3 * POWER_N + o] * dd;
    const inp = pw[i] + pw[POWER_N + i] * d0 + pw[2 * POWER_N + i] * d1 + pw[3 * POWER_N + i] * dd;
    this.capOutMs = out > 0 ? out : 0;
    this.capInMs = inp > 0 ? inp : 0;
  }

  /** Energies (J, ENERGY order) booked since the last call are written to `out`; false if none. */
  takeEnergies(out: Float64Array): boolean {
    if (!this.pending) return false;
    this.fold();
    out.set(this.carry);
    this.carry.fill(0);
    this.pending = false;
    return true;
  }

  /** Turn the sums into energies with the present point's powers (before the point moves). */
  private fold(): void {
    const pw = this.pw;
    const c = this.carry;
    const t = this.sumDt;
    const s0 = this.sumD0;
    const s1 = this.sumD1;
    const sd = this.sumDd;
    for (let k = 0; k < ENERGY.n; k++) c[k] += pw[k] * t + pw[POWER_N + k] * s0 + pw[2 * POWER_N + k] * s1 + pw[3 * POWER_N + k] * sd;
    this.sumDt = this.sumD0 = this.sumD1 = this.sumDd = 0;
  }

  /** Build the local model at (x, u): three extra leg evaluations (two states, duty) by forward differences. */
  linearize(x: Float64Array, u: AvgInputs): void {
    if (this.pending) this.fold();
    this.linearizations++;
    const p = this.plant;
    const uu = Object.assign(this.uu, u);
    averagedDerivatives(p, x, uu, this.f0, this.pointLeg, this.pointOuts);
    const lg = this.pointLeg;
    this.nonlinear = lg.dcm || lg.hsSaturated || lg.lsSaturated || lg.shootThrough ||
      Math.min(Math.abs(lg.iPeakA), Math.abs(lg.iValleyA)) < 0.15 * Math.max(lg.ripplePpA, 1e-3);
    const a = this.a;
    const h0 = 1e-4 * Math.max(1, Math.abs(x[0]));
    const h1 = 1e-4 * Math.max(1, Math.abs(x[1]));
    const xp = this.xp;
    for (let j = 0; j < 2; j++) {
      const h = j === 0 ? h0 : h1;
      xp[0] = x[0]; xp[1] = x[1];
      xp[j] += h;
      averagedDerivatives(p, xp, uu, this.fp, this.leg, this.outsP);
      a[j] = (this.fp[0] - this.f0[0]) / h;
      a[2 + j] = (this.fp[1] - this.f0[1]) / h;
      powersOf(this.outsP, this.leg, this.pw, (1 + j) * POWER_N);
    }
    const hd = 1e-6;
    uu.duty = u.duty + hd;
    averagedDerivatives(p, x, uu, this.fp, this.leg, this.outsP);
    powersOf(this.outsP, this.leg, this.pw, 3 * POWER_N);
    uu.duty = u.duty;
    const pw = this.pw;
    powersOf(this.pointOuts, lg, pw, 0);
    for (let k = 0; k < POWER_N; k++) {
      pw[POWER_N + k] = (pw[POWER_N + k] - pw[k]) / h0;
      pw[2 * POWER_N + k] = (pw[2 * POWER_N + k] - pw[k]) / h1;
      pw[3 * POWER_N + k] = (pw[3 * POWER_N + k] - pw[k]) / hd;
    }
    const b0 = (this.fp[0] - this.f0[0]) / hd;
    const b1 = (this.fp[1] - this.f0[1]) / hd;
    // Affine term w so that f ≈ A·x + b·d + w reproduces f0 at (x, d).
    const bw = this.bw;
    bw[0] = b0; bw[1] = this.f0[0] - a[0] * x[0] - a[1] * x[1] - b0 * u.duty;
    bw[2] = b1; bw[3] = this.f0[1] - a[2] * x[0] - a[3] * x[1] - b1 * u.duty;
    this.slotDt[0] = this.slotDt[1] = NaN;
    this.x0.set(x);
    this.d0 = u.duty;
    this.key(u);
    this.valid = true;
    this.scale[0] = Math.max(0.05, 0.02 * Math.abs(x[0]), 0.1 * lg.ripplePpA);
    this.scale[1] = Math.max(0.01, 0.005 * Math.abs(x[1]));
  }

  private slotFor(dtS: number): number {
    for (let s = 0; s < 2; s++) if (Math.abs(dtS - this.slotDt[s]) <= DT_MATCH_REL * dtS) return s;
    // Keep slot 0 for the first length discretized after a linearization (normally the sample period).
    const s = Number.isNaN(this.slotDt[0]) ? 0 : 1;
    this.discretizations++;
    const z = zohDiscretize(this.a, this.bw, 2, 2, dtS);
    this.slotAd[s].set(z.ad);
    this.slotGb[s][0] = z.bd[0]; this.slotGw[s][0] = z.bd[1];
    this.slotGb[s][1] = z.bd[2]; this.slotGw[s][1] = z.bd[3];
    this.slotDt[s] = dtS;
    return s;
  }

  /** One held-duty step of length dtS with the current local model (call `linearize` first). */
  step(x: Float64Array, duty: number, dtS: number): void {
    const s = this.slotFor(dtS);
    const ad = this.slotAd[s];
    const gb = this.slotGb[s];
    const gw = this.slotGw[s];
    const x0 = ad[0] * x[0] + ad[1] * x[1] + gb[0] * duty + gw[0];
    const x1 = ad[2] * x[0] + ad[3] * x[1] + gb[1] * duty + gw[1];
    x[0] = x0;
    x[1] = x1;
  }
}

/**
 * Time response of the linearized closed loop to a step of the reference or of a disturbance
 * input (source voltage, load), with the intersample behaviour: the plant is advanced in `subSteps`
 * exact ZOH steps per sample (duty and disturbance held), the controller runs at the sample
 * instants exactly as in closedLoop.ts. Deviations from the operating point; this is the linear
 * prediction the simulator's response is checked against.
 */
import { zohDiscretize } from '../model/thermal/matrixExponential.ts';
import type { DiscreteLoop } from './loopGain.ts';
import type { DisturbanceName } from './linearize.ts';

export interface StepResponseOptions {
  /** 'reference' or a disturbance the plant was linearized for (LinearizeOptions.disturbances). */
  readonly input: 'reference' | DisturbanceName;
  readonly size: number;
  /** Step time after the first sample instant (t = 0), a multiple of Ts/subSteps (default 0). */
  readonly tStepS?: number;
  readonly durationS: number;
  /** Plant steps per sample (default 20). */
  readonly subSteps?: number;
}

export interface StepResponse {
  /** Time of each point (substep boundaries). */
  readonly tS: Float64Array;
  /** Output deviation at each point (after any step at that instant). */
  readonly y: Float64Array;
  /** Duty deviation applied from each point on. */
  readonly duty: Float64Array;
}

export function closedLoopStepResponse(loop: DiscreteLoop, opts: StepResponseOptions): StepResponse {
  const lin = loop.lin;
  const n = loop.n;
  const M = opts.subSteps ?? 20;
  if (!Number.isInteger(M) || M < 1) throw new RangeError(`subSteps must be a whole number ≥ 1, got ${opts.subSteps}`);
  const h = loop.tsS / M;
  const wi = opts.input === 'reference' ? -1 : lin.disturbances.indexOf(opts.input);
  if (opts.input !== 'reference' && wi < 0)
    throw new RangeError(`step input ${opts.input} was not linearized; pass it in LinearizeOptions.disturbances (have: ${lin.disturbances.join(', ') || 'none'})`);
  const nw = lin.disturbances.length;
  // Columns: duty, then the disturbance (if any).
  const bAug = new Float64Array(n * 2);
  for (let i = 0; i < n; i++) {
    bAug[i * 2] = lin.b[i];
    bAug[i * 2 + 1] = wi >= 0 ? lin.e[i * nw + wi] : 0;
  }
  const z = zohDiscretize(lin.a, bAug, n, 2, h);
  const fw = wi >= 0 ? lin.f[wi] : 0;
  const kStep = Math.round((opts.tStepS ?? 0) / h);
  const nSteps = Math.ceil(opts.durationS / h);
  const tS = new Float64Array(nSteps + 1);
  const y = new Float64Array(nSteps + 1);
  const duty = new Float64Array(nSteps + 1);
  const x = new Float64Array(n);
  const xn = new Float64Array(n);
  const N = loop.delaySamples;
  const queue = new Float64Array(Math.max(N, 1));
  let qi = 0;
  let yf = 0;
  let ePrev = 0;
  let xPi = 0;
  let d = 0;
  let dHeld = 0;
  for (let k = 0; k <= nSteps; k++) {
    const w = k >= kStep ? opts.size : 0;
    const r = wi < 0 ? w : 0;
    const wPlant = wi >= 0 ? w : 0;
    let yk = loop.d * dHeld;
    for (let i = 0; i < n; i++) yk += loop.c[i] * x[i];
    yk += fw * wPlant;
    if (k % M === 0) {
      const yMeas = yk;
      // The filter state starts at the operating point (deviation 0), as it is long after the engine's first sample.
      yf = loop.hasFilter ? yf + loop.filterA * (yMeas - yf) : yMeas;
      const e = r - yf;
      xPi = loop.integrator ? xPi + loop.b0 * e + loop.b1 * ePrev : loop.b0 * e;
      ePrev = e;
      if (N === 0) d = xPi;
      else {
        d = queue[qi];
        queue[qi] = xPi;
        qi = (qi + 1) % N;
      }
      dHeld = d;
    }
    tS[k] = k * h;
    y[k] = yk;
    duty[k] = d;
    if (k === nSteps) break;
    for (let i = 0; i < n; i++) {
      let v = z.bd[i * 2] * d + z.bd[i * 2 + 1] * wPlant;
      for (let j = 0; j < n; j++) v += z.ad[i * n + j] * x[j];
      xn[i] = v;
    }
    x.set(xn);
  }
  return { tS, y, duty };
}

/** Means of a piecewise-linear signal over consecutive windows [k·dt, (k+1)·dt) (trapezoid rule). */
export function windowMeans(tS: Float64Array, y: Float64Array, dtS: number): number[] {
  const out: number[] = [];
  let acc = 0;
  let edge = dtS;
  for (let k = 1; k < tS.length; k++) {
    const dt = tS[k] - tS[k - 1];
    acc += 0.5 * (y[k] + y[k - 1]) * dt;
    if (tS[k] >= edge - 1e-9 * dtS) {
      out.push(acc / dtS);
      acc = 0;
      edge += dtS;
    }
  }
  return out;
}

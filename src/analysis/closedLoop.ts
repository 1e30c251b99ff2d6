/**
 * The exact discrete-time closed loop of the inner controller and its poles.
 *
 * State at sample k (before the update): plant x[k] (n), the duty held over the previous period
 * (only when D ≠ 0), the filter output y_f[k−1] (only with a filter), the PI's integral state
 * σ[k] = Σ_{j<k} e[j] (only with integral action), and the delay line q_i = command[k−i],
 * i = 1…N. One sample of the engine (src/sim/engine.ts), linearized about the operating point
 * with the reference fixed:
 *
 *   y = C·x (+ D·d_held);  y_f = y_f⁻ + a·(y − y_f⁻);  e = −y_f;
 *   u = b0·e + (b0 + b1)·σ;  σ⁺ = σ + e;  d = N > 0 ? q_N : u;  x⁺ = Ad·x + Bd·d;  q shifts in u.
 *
 * u is the engine's velocity-form output x_pi[k] = x_pi[k−1] + b0·e[k] + b1·e[k−1] written with
 * one state (its minimal realization: C(z) = b0 + (b0 + b1)·z⁻¹/(1 − z⁻¹)). Without integral
 * action (b0 + b1 = 0) the velocity form's stored offset is a constant that only shifts the
 * equilibrium, not a mode, so there is no PI state and u = b0·e.
 *
 * The matrix is built by applying that update to unit vectors, so it is the engine's sample
 * step by construction. Stable iff every eigenvalue has modulus < 1.
 */
import { eigenvalues, spectralRadius } from './eigenvalues.ts';
import type { DiscreteLoop } from './loopGain.ts';

export interface ClosedLoopLayout {
  readonly size: number;
  readonly x: number;
  /** −1 when absent. */
  readonly held: number;
  readonly filter: number;
  readonly pi: number;
  /** First delay slot (q_1); N slots follow. */
  readonly delay: number;
}

export function closedLoopLayout(loop: DiscreteLoop): ClosedLoopLayout {
  let k = loop.n;
  const held = loop.d !== 0 ? k++ : -1;
  const filter = loop.hasFilter ? k++ : -1;
  const pi = loop.integrator ? k++ : -1;
  const delay = k;
  k += loop.delaySamples;
  return { size: k, x: 0, held, filter, pi, delay };
}

/** One linearized engine sample with zero reference. */
export function closedLoopStep(loop: DiscreteLoop, lay: ClosedLoopLayout, s: Float64Array, out: Float64Array): void {
  const n = loop.n;
  let y = 0;
  for (let i = 0; i < n; i++) y += loop.c[i] * s[i];
  if (lay.held >= 0) y += loop.d * s[lay.held];
  let yf = y;
  if (lay.filter >= 0) yf = s[lay.filter] + loop.filterA * (y - s[lay.filter]);
  const e = -yf;
  const u = lay.pi >= 0 ? loop.b0 * e + (loop.b0 + loop.b1) * s[lay.pi] : loop.b0 * e;
  const N = loop.delaySamples;
  const duty = N > 0 ? s[lay.delay + N - 1] : u;
  for (let i = 0; i < n; i++) {
    let v = loop.bd[i] * duty;
    for (let j = 0; j < n; j++) v += loop.ad[i * n + j] * s[j];
    out[i] = v;
  }
  if (lay.held >= 0) out[lay.held] = duty;
  if (lay.filter >= 0) out[lay.filter] = yf;
  if (lay.pi >= 0) out[lay.pi] = s[lay.pi] + e;
  for (let i = N - 1; i >= 1; i--) out[lay.delay + i] = s[lay.delay + i - 1];
  if (N > 0) out[lay.delay] = u;
}

/** Row-major closed-loop state matrix. */
export function closedLoopMatrix(loop: DiscreteLoop): { layout: ClosedLoopLayout; m: Float64Array } {
  const lay = closedLoopLayout(loop);
  const k = lay.size;
  const m = new Float64Array(k * k);
  const unit = new Float64Array(k);
  const col = new Float64Array(k);
  for (let j = 0; j < k; j++) {
    unit.fill(0);
    unit[j] = 1;
    closedLoopStep(loop, lay, unit, col);
    for (let i = 0; i < k; i++) m[i * k + j] = col[i];
  }
  return { layout: lay, m };
}

export interface ClosedLoopPoles {
  readonly re: number[];
  readonly im: number[];
  readonly maxAbs: number;
  /** Poles with |λ| ≥ 1. */
  readonly unstableCount: number;
}

export function closedLoopPoles(loop: DiscreteLoop): ClosedLoopPoles {
  const { layout, m } = closedLoopMatrix(loop);
  const ev = eigenvalues(m, layout.size);
  let unstable = 0;
  for (let i = 0; i < ev.re.length; i++) if (Math.hypot(ev.re[i], ev.im[i]) >= 1) unstable++;
  return { re: [...ev.re], im: [...ev.im], maxAbs: spectralRadius(ev), unstableCount: unstable };
}

/** Open-loop plant poles (eigenvalues of Ad) outside or on the unit circle. */
export function openLoopPlantPoles(loop: DiscreteLoop): { outside: number; onCircle: number; maxAbs: number } {
  const ev = eigenvalues(loop.ad, loop.n);
  let outside = 0;
  let onCircle = 0;
  for (let i = 0; i < ev.re.length; i++) {
    const r = Math.hypot(ev.re[i], ev.im[i]);
    if (Math.abs(r - 1) < 1e-12) onCircle++;
    else if (r > 1) outside++;
  }
  return { outside, onCircle, maxAbs: spectralRadius(ev) };
}

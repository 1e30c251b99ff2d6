/**
 * The inner loop as the simulator runs it, in exact discrete time (src/sim/engine.ts): at each
 * sample instant the regulated quantity is measured, optionally filtered, the PI runs, its
 * command enters a delay line of N samples, and the duty leaving the line is held by the PWM
 * until the next sample (a zero-order hold on the averaged plant).
 *
 *   L(z) = C_pi(z) · z^−N · P_zoh(z) · F(z),   z = e^{jωTs}
 *
 *   C_pi(z)  = (b0 + b1·z⁻¹)/(1 − z⁻¹)             (piCoefficients, src/control/pi.ts)
 *   P_zoh(z) = C·(zI − Ad)⁻¹·Bd + D·z⁻¹,  Ad = e^{A·Ts}, Bd = ∫₀^Ts e^{Aτ}dτ·B  (exact ZOH;
 *              D acts through the duty held over the previous period)
 *   F(z)     = a/(1 − (1 − a)·z⁻¹),  a = 1 − e^{−2π·f·Ts}  (the engine's first-order filter)
 *
 * Negative feedback is implied (e = reference − y), so stability margins are read against −1.
 * For comparison the common continuous approximation C_pi(e^{jωTs})·G(jω)·e^{−jω(N+½)Ts}·F is
 * also given (Buso & Mattavelli, Digital Control in Power Electronics, 2006: computation delay
 * plus half a period for the PWM hold).
 */
import type { PiCoefficients } from '../control/pi.ts';
import { zohDiscretize } from '../model/thermal/matrixExponential.ts';
import { complexTransfer } from './complexTransfer.ts';
import type { LinearPlant } from './linearize.ts';

export interface LoopSpec {
  /** Control sample period (the PWM hold interval). */
  readonly tsS: number;
  /** Whole samples between the PI output and the PWM update. */
  readonly delaySamples: number;
  /** PI coefficients exactly as the simulator uses them at this sample period. */
  readonly pi: PiCoefficients;
  /** First-order feedback filter corner, when the scenario has one. */
  readonly sensorFilterHz?: number;
}

export interface DiscreteLoop {
  readonly lin: LinearPlant;
  readonly n: number;
  readonly tsS: number;
  readonly delaySamples: number;
  readonly b0: number;
  readonly b1: number;
  /** Filter coefficient a (1 when there is no filter: F = 1). */
  readonly filterA: number;
  readonly hasFilter: boolean;
  /**
   * The PI integrates (b0 + b1 ≠ 0). Without integral action C(z) = b0 exactly: the velocity form's
   * stored offset is then a constant, not a dynamic mode, and is left out of the closed loop.
   */
  readonly integrator: boolean;
  readonly ad: Float64Array;
  readonly bd: Float64Array;
  readonly c: Float64Array;
  readonly d: number;
  /** Nyquist frequency π/Ts. */
  readonly omegaNyquistRadS: number;
}

export interface Complex {
  re: number;
  im: number;
}

/** The engine's filter coefficient: y_f += a·(y − y_f) per sample. */
export function sensorFilterCoefficient(sensorFilterHz: number, tsS: number): number {
  return 1 - Math.exp(-2 * Math.PI * sensorFilterHz * tsS);
}

const zohCache = new WeakMap<LinearPlant, Map<number, { ad: Float64Array; bd: Float64Array }>>();

/** ZOH discretization of the plant at tsS, cached per linear plant and period (maps reuse it for both bases). */
function zohOf(lin: LinearPlant, tsS: number): { ad: Float64Array; bd: Float64Array } {
  let m = zohCache.get(lin);
  if (!m) zohCache.set(lin, (m = new Map()));
  let z = m.get(tsS);
  if (!z) {
    if (m.size > 64) m.clear();
    z = zohDiscretize(lin.a, lin.b, lin.n, 1, tsS);
    m.set(tsS, z);
  }
  return z;
}

export function discreteLoop(lin: LinearPlant, spec: LoopSpec): DiscreteLoop {
  const { tsS, delaySamples, pi } = spec;
  if (!(tsS > 0) || !Number.isFinite(tsS)) throw new RangeError(`loop: tsS must be a finite number > 0, got ${tsS}`);
  if (!Number.isInteger(delaySamples) || delaySamples < 0) throw new RangeError(`loop: delaySamples must be a whole number ≥ 0, got ${delaySamples}`);
  if (!Number.isFinite(pi.b0) || !Number.isFinite(pi.b1)) throw new RangeError(`loop: PI coefficients must be finite, got b0=${pi.b0}, b1=${pi.b1}`);
  const hasFilter = spec.sensorFilterHz !== undefined;
  if (hasFilter && !(spec.sensorFilterHz! > 0)) throw new RangeError(`loop: sensorFilterHz must be > 0, got ${spec.sensorFilterHz}`);
  const z = zohOf(lin, tsS);
  return Object.freeze({
    lin,
    n: lin.n,
    tsS,
    delaySamples,
    b0: pi.b0,
    b1: pi.b1,
    filterA: hasFilter ? sensorFilterCoefficient(spec.sensorFilterHz!, tsS) : 1,
    hasFilter,
    integrator: Math.abs(pi.b0 + pi.b1) > 1e-12 * Math.max(Math.abs(pi.b0), Math.abs(pi.b1)),
    ad: z.ad,
    bd: z.bd,
    c: lin.c,
    d: lin.d,
    omegaNyquistRadS: Math.PI / tsS,
  });
}

/** P_zoh(e^{jωTs}): the sampled plant from held duty to the measured output. */
export function sampledPlantAt(loop: DiscreteLoop, omegaRadS: number): Complex {
  const th = omegaRadS * loop.tsS;
  const cr = Math.cos(th);
  const si = Math.sin(th);
  const p = loop.n === 2 ? transfer2(loop.ad, loop.bd, loop.c, cr, si) : complexTransfer(loop.n, loop.ad, loop.bd, loop.c, 0, cr, si, 1, 0);
  // D·z⁻¹
  p.re += loop.d * cr;
  p.im -= loop.d * si;
  return p;
}

/** c·(zI − M)⁻¹·b for a 2×2 M by Cramer's rule (the averaged plants' case; hot in maps). */
function transfer2(m: Float64Array, b: Float64Array, c: Float64Array, zr: number, zi: number): Complex {
  const m11r = zr - m[0];
  const m22r = zr - m[3];
  const m12 = -m[1];
  const m21 = -m[2];
  // det = m11·m22 − m12·m21 with m11 = m11r + j·zi, m22 = m22r + j·zi
  const detR = m11r * m22r - zi * zi - m12 * m21;
  const detI = zi * (m11r + m22r);
  // numerators of x1 = (m22·b1 − m12·b2)/det, x2 = (m11·b2 − m21·b1)/det, then c·x
  const n1r = m22r * b[0] - m12 * b[1];
  const n1i = zi * b[0];
  const n2r = m11r * b[1] - m21 * b[0];
  const n2i = zi * b[1];
  const nr = c[0] * n1r + c[1] * n2r;
  const ni = c[0] * n1i + c[1] * n2i;
  const den = detR * detR + detI * detI;
  return { re: (nr * detR + ni * detI) / den, im: (ni * detR - nr * detI) / den };
}

/** C_pi(z)·z^−N·F(z) at z = e^{jωTs}: everything in the loop but the plant. */
export function controllerPathAt(loop: DiscreteLoop, omegaRadS: number): Complex {
  return controllerPath(loop.b0, loop.b1, loop.delaySamples, loop.filterA, omegaRadS * loop.tsS);
}

function controllerPathInto(b0: number, b1: number, delaySamples: number, filterA: number, th: number, out: Complex): Complex {
  const cr = Math.cos(th);
  const si = Math.sin(th);
  // z⁻¹ = cr − j·si
  const nRe = b0 + b1 * cr;
  const nIm = -b1 * si;
  const dRe = 1 - cr;
  const dIm = si;
  const den = dRe * dRe + dIm * dIm;
  let re = (nRe * dRe + nIm * dIm) / den;
  let im = (nIm * dRe - nRe * dIm) / den;
  if (delaySamples > 0) {
    const dr = Math.cos(delaySamples * th);
    const di = -Math.sin(delaySamples * th);
    const t = re * dr - im * di;
    im = re * di + im * dr;
    re = t;
  }
  if (filterA !== 1) {
    // a/(1 − (1 − a)z⁻¹)
    const q = 1 - filterA;
    const fr = 1 - q * cr;
    const fi = q * si;
    const fd = fr * fr + fi * fi;
    const gr = (filterA * fr) / fd;
    const gi = (-filterA * fi) / fd;
    const t = re * gr - im * gi;
    im = re * gi + im * gr;
    re = t;
  }
  out.re = re;
  out.im = im;
  return out;
}

function controllerPath(b0: number, b1: number, delaySamples: number, filterA: number, th: number): Complex {
  return controllerPathInto(b0, b1, delaySamples, filterA, th, { re: 0, im: 0 });
}

/** The exact discrete loop gain L(e^{jωTs}). */
export function loopGainAt(loop: DiscreteLoop, omegaRadS: number): Complex {
  return loopGainInto(loop, omegaRadS, { re: 0, im: 0 });
}

/** Reused by loopGainInto (single-threaded; consumed before the next call). */
const scratch: Complex = { re: 0, im: 0 };

/** loopGainAt writing into `out` (no allocation for two-state plants: the hot path of maps). */
export function loopGainInto(loop: DiscreteLoop, omegaRadS: number, out: Complex): Complex {
  const th = omegaRadS * loop.tsS;
  const cr = Math.cos(th);
  const si = Math.sin(th);
  let pr: number;
  let pi: number;
  if (loop.n === 2) {
    const m = loop.ad;
    const b = loop.bd;
    const c = loop.c;
    const m11r = cr - m[0];
    const m22r = cr - m[3];
    const m12 = -m[1];
    const m21 = -m[2];
    const detR = m11r * m22r - si * si - m12 * m21;
    const detI = si * (m11r + m22r);
    const nr = c[0] * (m22r * b[0] - m12 * b[1]) + c[1] * (m11r * b[1] - m21 * b[0]);
    const ni = c[0] * si * b[0] + c[1] * si * b[1];
    const den = detR * detR + detI * detI;
    pr = (nr * detR + ni * detI) / den;
    pi = (ni * detR - nr * detI) / den;
  } else {
    const p = complexTransfer(loop.n, loop.ad, loop.bd, loop.c, 0, cr, si, 1, 0);
    pr = p.re;
    pi = p.im;
  }
  pr += loop.d * cr;
  pi -= loop.d * si;
  const k = controllerPathInto(loop.b0, loop.b1, loop.delaySamples, loop.filterA, th, scratch);
  const re = k.re;
  const im = k.im;
  out.re = pr * re - pi * im;
  out.im = pr * im + pi * re;
  return out;
}

/** Continuous approximation: C_pi(e^{jωTs})·G(jω)·e^{−jω(N+½)Ts}·F(e^{jωTs}). */
export function approxLoopGainAt(loop: DiscreteLoop, omegaRadS: number): Complex {
  const lin = loop.lin;
  const g = complexTransfer(lin.n, lin.a, lin.b, lin.c, lin.d, 0, omegaRadS, 1, 0);
  const k = controllerPath(loop.b0, loop.b1, 0, loop.filterA, omegaRadS * loop.tsS);
  const ph = -omegaRadS * (loop.delaySamples + 0.5) * loop.tsS;
  const er = Math.cos(ph);
  const ei = Math.sin(ph);
  const kr = k.re * er - k.im * ei;
  const ki = k.re * ei + k.im * er;
  return { re: g.re * kr - g.im * ki, im: g.re * ki + g.im * kr };
}

export interface BodeData {
  readonly freqHz: number[];
  readonly magDb: number[];
  /** Unwrapped, continuous from the lowest frequency. */
  readonly phaseDeg: number[];
}

/** `points` frequencies geometrically spaced from fMinHz to fMaxHz, both included. */
export function logGridHz(fMinHz: number, fMaxHz: number, points: number): number[] {
  if (!(fMinHz > 0 && fMaxHz > fMinHz) || !Number.isInteger(points) || points < 2)
    throw new RangeError(`logGridHz: need 0 < fMin < fMax and points ≥ 2, got ${fMinHz}, ${fMaxHz}, ${points}`);
  const out = new Array<number>(points);
  for (let i = 0; i < points; i++) out[i] = fMinHz * Math.pow(fMaxHz / fMinHz, i / (points - 1));
  out[points - 1] = fMaxHz;
  return out;
}

/** Magnitude (dB) and unwrapped phase (deg) of `fn` on a frequency grid. */
export function bode(fn: (omegaRadS: number) => Complex, freqHz: readonly number[]): BodeData {
  const magDb: number[] = [];
  const phaseDeg: number[] = [];
  let prev = NaN;
  for (const fHz of freqHz) {
    const v = fn(2 * Math.PI * fHz);
    magDb.push(20 * Math.log10(Math.hypot(v.re, v.im)));
    let ph = (Math.atan2(v.im, v.re) * 180) / Math.PI;
    if (!Number.isNaN(prev)) ph = prev + wrapDeg(ph - prev);
    phaseDeg.push(ph);
    prev = ph;
  }
  return { freqHz: [...freqHz], magDb, phaseDeg };
}

/** Angle difference folded into (−180, 180]. */
export function wrapDeg(x: number): number {
  let y = x % 360;
  if (y <= -180) y += 360;
  else if (y > 180) y -= 360;
  return y;
}

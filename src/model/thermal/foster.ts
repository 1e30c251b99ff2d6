/**
 * Junction–case thermal impedance networks: Foster (datasheet fit) and Cauer (physical ladder).
 *
 * A Foster network's internal nodes have no physical meaning, so it cannot be chained onto
 * heatsink stages; the simulator converts it to the equivalent Cauer ladder first.
 */

import { requireFinite, requirePositiveArray } from './checks.ts';
import {
  RATIONAL_ONE,
  RATIONAL_ZERO,
  ratAdd,
  ratDiv,
  ratMul,
  ratSign,
  ratSub,
  rationalFromNumber,
  rationalToNumber,
  type Rational,
} from './exactRational.ts';
import { symmetricEigen } from './symmetricEigen.ts';

/** Parallel RC pairs in series: Zth(t) = Σ Ri(1 − e^(−t/τi)). */
export interface FosterNetwork {
  readonly rKPerW: readonly number[];
  readonly tauS: readonly number[];
}

/** Ladder: C1 at node 1, R1 from node 1 to node 2, …, Rn from node n to the case (far end). */
export interface CauerNetwork {
  readonly rKPerW: readonly number[];
  readonly cJPerK: readonly number[];
}

export function validateFoster(net: FosterNetwork, path = 'foster'): void {
  if (net === null || typeof net !== 'object') throw new Error(`${path}: must be an object {rKPerW, tauS}, got ${String(net)}`);
  const r = requirePositiveArray(net.rKPerW, `${path}.rKPerW`);
  const tau = requirePositiveArray(net.tauS, `${path}.tauS`);
  if (r.length !== tau.length)
    throw new Error(`${path}.tauS: must have the same length as rKPerW (${r.length}), got ${tau.length}`);
}

export function validateCauer(net: CauerNetwork, path = 'cauer'): void {
  if (net === null || typeof net !== 'object') throw new Error(`${path}: must be an object {rKPerW, cJPerK}, got ${String(net)}`);
  const r = requirePositiveArray(net.rKPerW, `${path}.rKPerW`);
  const c = requirePositiveArray(net.cJPerK, `${path}.cJPerK`);
  if (r.length !== c.length)
    throw new Error(`${path}.cJPerK: must have the same length as rKPerW (${r.length}), got ${c.length}`);
}

function requireTime(tS: number): number {
  requireFinite(tS, 'tS');
  if (tS < 0) throw new Error(`tS: must be >= 0, got ${tS}`);
  return tS;
}

/**
 * Foster step response Zth(t) = Σ Ri(1 − e^(−t/τi)) in K/W (Infineon AN2008-03 "Thermal
 * equivalent circuit models", 2008, from memory). expm1 keeps early times accurate.
 */
export function fosterZth(net: FosterNetwork, tS: number): number {
  validateFoster(net);
  requireTime(tS);
  let z = 0;
  for (let i = 0; i < net.rKPerW.length; i++) z += -net.rKPerW[i] * Math.expm1(-tS / net.tauS[i]);
  return z;
}

type Poly = Rational[]; // ascending powers of s
const MINUS_ONE: Rational = { num: -1n, den: 1n };

function polyMul(a: Poly, b: Poly): Poly {
  const out: Poly = Array.from({ length: a.length + b.length - 1 }, () => RATIONAL_ZERO);
  for (let i = 0; i < a.length; i++)
    for (let j = 0; j < b.length; j++) out[i + j] = ratAdd(out[i + j], ratMul(a[i], b[j]));
  return out;
}

/** a − k·s^shift·b */
function polySubScaled(a: Poly, b: Poly, k: Rational, shift: number): Poly {
  const out = a.slice();
  while (out.length < b.length + shift) out.push(RATIONAL_ZERO);
  for (let j = 0; j < b.length; j++) out[j + shift] = ratSub(out[j + shift], ratMul(k, b[j]));
  return out;
}

/** Drop the top coefficient, which the preceding step cancelled exactly. */
function dropCancelledTop(p: Poly): Poly {
  if (ratSign(p[p.length - 1]) !== 0) throw new Error('fosterToCauer: internal error, leading term did not cancel');
  return p.slice(0, -1);
}

function lead(p: Poly): Rational {
  return p[p.length - 1];
}

/**
 * Foster → Cauer by the polynomial method (Cauer, Archiv für Elektrotechnik 17, 1926; applied
 * to thermal networks in Infineon AN2008-03): Z(s) = N(s)/D(s) with D = Π(1 + sτi),
 * N = Σ Ri·Π_{j≠i}(1 + sτj); then the continued fraction
 * Y = 1/Z = s·C1 + 1/(R1 + 1/(s·C2 + … + 1/Rn)).
 * Done in exact rational arithmetic (see exactRational.ts), so the result is the correctly
 * rounded ladder regardless of the spread of τ. Terms with identical τ are one pole and are
 * merged first (their sum would otherwise leave a common factor in N/D and a shorter ladder).
 */
export function fosterToCauer(net: FosterNetwork, path = 'foster'): CauerNetwork {
  validateFoster(net, path);
  const merged = new Map<number, number>();
  net.tauS.forEach((tau, i) => merged.set(tau, (merged.get(tau) ?? 0) + net.rKPerW[i]));
  const terms = [...merged.entries()].map(([tau, r]) => ({ tau: rationalFromNumber(tau), r: rationalFromNumber(r) }));

  const pole = (tau: Rational): Poly => [RATIONAL_ONE, tau];
  let den: Poly = [RATIONAL_ONE];
  for (const t of terms) den = polyMul(den, pole(t.tau));
  let num: Poly = [RATIONAL_ZERO];
  terms.forEach((t, i) => {
    let term: Poly = [t.r];
    terms.forEach((u, j) => {
      if (j !== i) term = polyMul(term, pole(u.tau));
    });
    num = polySubScaled(num, term, MINUS_ONE, 0);
  });

  // Invariant at the top of each step: deg p = deg q + 1, Y_k = p/q.
  let p = den;
  let q = num;
  const rKPerW: number[] = [];
  const cJPerK: number[] = [];
  for (let k = 0; k < terms.length; k++) {
    const c = ratDiv(lead(p), lead(q));
    p = dropCancelledTop(polySubScaled(p, q, c, 1)); // Y − s·C = p'/q
    const r = ratDiv(lead(q), lead(p));
    q = dropCancelledTop(polySubScaled(q, p, r, 0)); // q/p' − R = q'/p'
    if (ratSign(c) <= 0 || ratSign(r) <= 0) throw new Error(`fosterToCauer: ${path} gave a non-positive ladder element at stage ${k + 1}`);
    cJPerK.push(rationalToNumber(c));
    rKPerW.push(rationalToNumber(r));
  }
  return Object.freeze({ rKPerW: Object.freeze(rKPerW), cJPerK: Object.freeze(cJPerK) });
}

/**
 * Cauer → Foster via the eigen-decomposition of the symmetrised ladder. With node
 * capacitances C and conductance matrix G (far end grounded), M = C^(−1/2)·G·C^(−1/2) = QΛQᵀ
 * and the node-1 impedance is e1ᵀ(sC + G)⁻¹e1 = Σk q1k²/(C1(s + λk)), i.e. a Foster network
 * with τk = 1/λk, Rk = q1k²/(C1·λk) (standard modal analysis of an RC network).
 * Returned with τ ascending.
 */
export function cauerToFoster(net: CauerNetwork, path = 'cauer'): FosterNetwork {
  validateCauer(net, path);
  const n = net.rKPerW.length;
  const g = net.rKPerW.map((r) => 1 / r);
  const m = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    m[i * n + i] = (g[i] + (i > 0 ? g[i - 1] : 0)) / net.cJPerK[i];
    if (i + 1 < n) {
      const off = -g[i] / Math.sqrt(net.cJPerK[i] * net.cJPerK[i + 1]);
      m[i * n + i + 1] = off;
      m[(i + 1) * n + i] = off;
    }
  }
  const { values, vectors } = symmetricEigen(m, n);
  const tauS: number[] = [];
  const rKPerW: number[] = [];
  for (let k = n - 1; k >= 0; k--) {
    const q1 = vectors[k]; // row 0, column k
    tauS.push(1 / values[k]);
    rKPerW.push((q1 * q1) / (net.cJPerK[0] * values[k]));
  }
  return Object.freeze({ rKPerW: Object.freeze(rKPerW), tauS: Object.freeze(tauS) });
}

/**
 * Step response Zth(t) in K/W of a Cauer ladder driven by a current source at node 1 with the
 * far end held at 0, evaluated exactly through its modal (Foster) form.
 */
export function cauerZth(net: CauerNetwork, tS: number): number {
  requireTime(tS);
  return fosterZth(cauerToFoster(net), tS);
}

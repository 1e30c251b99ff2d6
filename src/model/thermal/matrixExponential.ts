/**
 * Matrix exponential and exact zero-order-hold discretization of ẋ = A·x + B·u for general
 * (non-symmetric) small dense systems. The thermal network itself uses the modal form in
 * thermalLti.ts, which stays accurate when stages differ in speed by many decades; this one is
 * kept as an independent cross-check and for systems without that symmetric structure.
 */

import { infNorm, matMul, solveLinear } from './denseLinalg.ts';

const PADE_ORDER = 6;
/** With ‖A/2^s‖∞ ≤ 1/2 the [q/q] Padé bound 2^(3−2q)·(q!)²/((2q)!·(2q+1)!) is ≈ 3.4e−16 for q = 6. */
const SCALED_NORM_MAX = 0.5;

/**
 * e^A for a row-major n×n matrix by scaling and squaring with a diagonal [6/6] Padé
 * approximant (Moler & Van Loan, "Nineteen dubious ways to compute the exponential of a
 * matrix, twenty-five years later", SIAM Review 45(1), 2003, methods 2–3; also Golub & Van
 * Loan, Matrix Computations). Overscaling caveat: the squaring count follows the fastest mode.
 */
export function expm(a: Float64Array, n: number): Float64Array {
  if (a.length !== n * n) throw new Error(`expm: a.length must be n*n = ${n * n}, got ${a.length}`);
  for (let i = 0; i < a.length; i++) if (!Number.isFinite(a[i])) throw new Error(`expm: a[${i}] must be finite, got ${a[i]}`);
  const norm = infNorm(a, n);
  const squarings = norm > SCALED_NORM_MAX ? Math.ceil(Math.log2(norm / SCALED_NORM_MAX)) : 0;
  const scale = 2 ** -squarings;
  const x = a.map((v) => v * scale);

  const numer = new Float64Array(n * n);
  const denom = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    numer[i * n + i] = 1;
    denom[i * n + i] = 1;
  }
  let power: Float64Array = Float64Array.from(x);
  let c = 1;
  for (let k = 1; k <= PADE_ORDER; k++) {
    // c_k = c_{k−1}·(q − k + 1)/(k·(2q − k + 1)) for the [q/q] Padé approximant of e^x.
    c *= (PADE_ORDER - k + 1) / (k * (2 * PADE_ORDER - k + 1));
    const sign = k % 2 === 0 ? 1 : -1;
    for (let i = 0; i < n * n; i++) {
      numer[i] += c * power[i];
      denom[i] += sign * c * power[i];
    }
    if (k < PADE_ORDER) power = matMul(power, x, n);
  }
  let e = solveLinear(denom, n, numer, n);
  for (let s = 0; s < squarings; s++) e = matMul(e, e, n);
  return e;
}

export interface ZohMatrices {
  /** e^(A·dt), n×n row-major. */
  readonly ad: Float64Array;
  /** ∫0^dt e^(A·τ)dτ·B, n×m row-major. */
  readonly bd: Float64Array;
}

/**
 * Exact zero-order-hold discretization via the augmented-matrix identity
 * exp([[A, B], [0, 0]]·dt) = [[Ad, Bd], [0, I]] (Van Loan, IEEE TAC 23(3), 1978).
 * Works for singular A (e.g. an insulated system), unlike Bd = A⁻¹(Ad − I)B.
 */
export function zohDiscretize(a: Float64Array, b: Float64Array, n: number, m: number, dtS: number): ZohMatrices {
  if (!Number.isFinite(dtS) || dtS <= 0) throw new Error(`dtS: must be a finite number > 0, got ${dtS}`);
  if (a.length !== n * n) throw new Error(`zohDiscretize: a.length must be ${n * n}, got ${a.length}`);
  if (b.length !== n * m) throw new Error(`zohDiscretize: b.length must be ${n * m}, got ${b.length}`);
  const k = n + m;
  const aug = new Float64Array(k * k);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) aug[i * k + j] = a[i * n + j] * dtS;
    for (let j = 0; j < m; j++) aug[i * k + n + j] = b[i * m + j] * dtS;
  }
  const e = expm(aug, k);
  const ad = new Float64Array(n * n);
  const bd = new Float64Array(n * m);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) ad[i * n + j] = e[i * k + j];
    for (let j = 0; j < m; j++) bd[i * m + j] = e[i * k + n + j];
  }
  return { ad, bd };
}

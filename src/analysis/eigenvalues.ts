/**
 * Eigenvalues of a small real matrix through ml-matrix's EigenvalueDecomposition, guarded.
 *
 * The JAMA-derived QR iteration in ml-matrix has no iteration cap and its deflation test
 * |h(l,l−1)| < ε·(|h(l−1,l−1)| + |h(l,l)|) can stall forever when the diagonal and subdiagonal
 * entries shrink into subnormal numbers (see shared STACK.md). The closed-loop matrices here have
 * exact zero eigenvalues (delay line, stored error), which is that case. So the input is
 * (1) checked finite, (2) balanced by powers of two (Parlett & Reinsch, Numer. Math. 13, 1969),
 * (3) cleared of entries below ε·‖M‖ (below the solver's own backward error), and (4) shifted by
 * σ = 2·‖M‖ so that every eigenvalue of M + σI has modulus ≥ ‖M‖: no diagonal entry can drift
 * toward zero. The eigenvalues are shifted back; absolute error stays O(ε·‖M‖).
 */
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';

export interface Eigenvalues {
  readonly re: Float64Array;
  readonly im: Float64Array;
}

function infNorm(m: Float64Array, n: number): number {
  let best = 0;
  for (let i = 0; i < n; i++) {
    let s = 0;
    for (let j = 0; j < n; j++) s += Math.abs(m[i * n + j]);
    best = Math.max(best, s);
  }
  return best;
}

/** Diagonal similarity by powers of two so row and column norms match (in place). */
function balance(m: Float64Array, n: number): void {
  for (let sweep = 0; sweep < 32; sweep++) {
    let changed = false;
    for (let i = 0; i < n; i++) {
      let c = 0;
      let r = 0;
      for (let j = 0; j < n; j++) {
        if (j === i) continue;
        c += Math.abs(m[j * n + i]);
        r += Math.abs(m[i * n + j]);
      }
      if (c === 0 || r === 0) continue;
      let f = 1;
      const s = c + r;
      while (c < r / 2) { c *= 2; r /= 2; f *= 2; }
      while (c >= r * 2) { c /= 2; r *= 2; f /= 2; }
      if ((c + r) / f < 0.95 * s) {
        changed = true;
        for (let j = 0; j < n; j++) m[i * n + j] /= f;
        for (let j = 0; j < n; j++) m[j * n + i] *= f;
      }
    }
    if (!changed) break;
  }
}

/** Eigenvalues of the row-major n×n matrix `a` (not modified). Throws on non-finite entries. */
export function eigenvalues(a: Float64Array, n: number): Eigenvalues {
  if (a.length !== n * n) throw new RangeError(`eigenvalues: expected ${n * n} entries, got ${a.length}`);
  for (let i = 0; i < a.length; i++) if (!Number.isFinite(a[i])) throw new RangeError(`eigenvalues: entry ${i} must be finite, got ${a[i]}`);
  if (n === 0) return { re: new Float64Array(0), im: new Float64Array(0) };
  const m = Float64Array.from(a);
  balance(m, n);
  const norm = infNorm(m, n);
  if (norm === 0) return { re: new Float64Array(n), im: new Float64Array(n) };
  const floor = Number.EPSILON * norm;
  for (let i = 0; i < m.length; i++) if (Math.abs(m[i]) < floor) m[i] = 0;
  const sigma = 2 * norm;
  const rows: number[][] = [];
  for (let i = 0; i < n; i++) {
    const row = Array.from(m.subarray(i * n, (i + 1) * n));
    row[i] += sigma;
    rows.push(row);
  }
  // assumeSymmetric false: the shifted matrix is generally not symmetric; ml-matrix checks.
  const evd = new EigenvalueDecomposition(new Matrix(rows));
  const re = Float64Array.from(evd.realEigenvalues, (v) => v - sigma);
  const im = Float64Array.from(evd.imaginaryEigenvalues);
  return { re, im };
}

/** Largest modulus (spectral radius). */
export function spectralRadius(ev: Eigenvalues): number {
  let r = 0;
  for (let i = 0; i < ev.re.length; i++) r = Math.max(r, Math.hypot(ev.re[i], ev.im[i]));
  return r;
}

/**
 * Eigen-decomposition of a small dense real symmetric matrix by the cyclic Jacobi method
 * (Jacobi 1846; rotation formulas as in Press et al., Numerical Recipes, 3rd ed., §11.1).
 *
 * Why our own: Jacobi is simple, always converges (quadratically), and with the
 * Demmel–Veselić stopping test |a_pq| ≤ tol·sqrt(|a_pp·a_qq|) it keeps small eigenvalues of
 * graded matrices (RC ladders with widely spread time constants) to high relative accuracy.
 * Entries that fall below that test — including subnormals — are set to exactly zero, so
 * the iteration cannot stall on them (the hazard noted for ml-matrix's tql2).
 */

export interface SymmetricEigen {
  /** Eigenvalues, ascending. */
  readonly values: Float64Array;
  /** Row-major n×n; column k is the unit eigenvector of values[k]. */
  readonly vectors: Float64Array;
}

const MAX_SWEEPS = 100;
const REL_TOL = 1e-17;

/** `a` is row-major n×n and must be symmetric with finite entries; it is not modified. */
export function symmetricEigen(a: ArrayLike<number>, n: number): SymmetricEigen {
  if (!Number.isInteger(n) || n < 1) throw new Error(`symmetricEigen: n must be an integer >= 1, got ${n}`);
  if (a.length !== n * n) throw new Error(`symmetricEigen: a.length must be n*n = ${n * n}, got ${a.length}`);
  let scale = 0;
  for (let i = 0; i < n * n; i++) {
    if (!Number.isFinite(a[i])) throw new Error(`symmetricEigen: a[${i}] must be finite, got ${a[i]}`);
    scale = Math.max(scale, Math.abs(a[i]));
  }
  for (let i = 0; i < n; i++)
    for (let j = i + 1; j < n; j++)
      if (Math.abs(a[i * n + j] - a[j * n + i]) > 1e-12 * scale)
        throw new Error(`symmetricEigen: a must be symmetric, a[${i},${j}]=${a[i * n + j]} vs a[${j},${i}]=${a[j * n + i]}`);

  const m = Float64Array.from(a);
  const v = new Float64Array(n * n);
  for (let i = 0; i < n; i++) v[i * n + i] = 1;
  // Absolute floor so a zero/near-zero diagonal (singular input) still lets entries retire.
  const absFloor = 1e-300 + scale * 1e-30;

  let converged = false;
  for (let sweep = 0; sweep < MAX_SWEEPS && !converged; sweep++) {
    converged = true;
    for (let p = 0; p < n - 1; p++) {
      for (let q = p + 1; q < n; q++) {
        const apq = m[p * n + q];
        if (apq === 0) continue;
        const app = m[p * n + p];
        const aqq = m[q * n + q];
        if (Math.abs(apq) <= REL_TOL * Math.sqrt(Math.abs(app)) * Math.sqrt(Math.abs(aqq)) || Math.abs(apq) < absFloor) {
          m[p * n + q] = 0;
          m[q * n + p] = 0;
          continue;
        }
        converged = false;
        const theta = (aqq - app) / (2 * apq);
        const t =
          Math.abs(theta) > 1e150 ? 1 / (2 * theta) : Math.sign(theta || 1) / (Math.abs(theta) + Math.sqrt(theta * theta + 1));
        const c = 1 / Math.sqrt(t * t + 1);
        const s = t * c;
        m[p * n + p] = app - t * apq;
        m[q * n + q] = aqq + t * apq;
        m[p * n + q] = 0;
        m[q * n + p] = 0;
        for (let r = 0; r < n; r++) {
          if (r !== p && r !== q) {
            const arp = m[r * n + p];
            const arq = m[r * n + q];
            const nrp = c * arp - s * arq;
            const nrq = s * arp + c * arq;
            m[r * n + p] = nrp;
            m[p * n + r] = nrp;
            m[r * n + q] = nrq;
            m[q * n + r] = nrq;
          }
          const vrp = v[r * n + p];
          const vrq = v[r * n + q];
          v[r * n + p] = c * vrp - s * vrq;
          v[r * n + q] = s * vrp + c * vrq;
        }
      }
    }
  }
  if (!converged) throw new Error(`symmetricEigen: no convergence after ${MAX_SWEEPS} sweeps (n=${n})`);

  const order = Array.from({ length: n }, (_, i) => i).sort((i, j) => m[i * n + i] - m[j * n + j]);
  const values = new Float64Array(n);
  const vectors = new Float64Array(n * n);
  order.forEach((src, k) => {
    values[k] = m[src * n + src];
    for (let r = 0; r < n; r++) vectors[r * n + k] = v[r * n + src];
  });
  return { values, vectors };
}

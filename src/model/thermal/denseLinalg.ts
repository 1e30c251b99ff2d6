/**
 * Small dense row-major linear algebra for the thermal network (n ≲ 30). Allocation is fine
 * here: these run when a network or time step is set up, not per simulation step.
 */

/** C = A·B for square n×n row-major matrices. */
export function matMul(a: Float64Array, b: Float64Array, n: number): Float64Array {
  const c = new Float64Array(n * n);
  for (let i = 0; i < n; i++)
    for (let k = 0; k < n; k++) {
      const aik = a[i * n + k];
      if (aik === 0) continue;
      for (let j = 0; j < n; j++) c[i * n + j] += aik * b[k * n + j];
    }
  return c;
}

/** Max absolute row sum (‖·‖∞). */
export function infNorm(a: Float64Array, n: number): number {
  let norm = 0;
  for (let i = 0; i < n; i++) {
    let row = 0;
    for (let j = 0; j < n; j++) row += Math.abs(a[i * n + j]);
    norm = Math.max(norm, row);
  }
  return norm;
}

/**
 * Solve A·X = B (A n×n, B n×m, both row-major) by Gaussian elimination with partial pivoting.
 * Throws when a pivot vanishes relative to the matrix scale (singular system).
 */
export function solveLinear(a: Float64Array, n: number, b: Float64Array, m: number): Float64Array {
  if (a.length !== n * n) throw new Error(`solveLinear: a.length must be ${n * n}, got ${a.length}`);
  if (b.length !== n * m) throw new Error(`solveLinear: b.length must be ${n * m}, got ${b.length}`);
  const lu = Float64Array.from(a);
  const x = Float64Array.from(b);
  const scale = infNorm(lu, n);
  for (let col = 0; col < n; col++) {
    let piv = col;
    for (let r = col + 1; r < n; r++) if (Math.abs(lu[r * n + col]) > Math.abs(lu[piv * n + col])) piv = r;
    const pv = lu[piv * n + col];
    if (!(Math.abs(pv) > 1e-14 * scale)) throw new Error(`solveLinear: matrix is singular (pivot ${pv} at column ${col})`);
    if (piv !== col) {
      for (let j = 0; j < n; j++) [lu[col * n + j], lu[piv * n + j]] = [lu[piv * n + j], lu[col * n + j]];
      for (let j = 0; j < m; j++) [x[col * m + j], x[piv * m + j]] = [x[piv * m + j], x[col * m + j]];
    }
    for (let r = col + 1; r < n; r++) {
      const f = lu[r * n + col] / pv;
      if (f === 0) continue;
      for (let j = col; j < n; j++) lu[r * n + j] -= f * lu[col * n + j];
      for (let j = 0; j < m; j++) x[r * m + j] -= f * x[col * m + j];
    }
  }
  for (let row = n - 1; row >= 0; row--) {
    const d = lu[row * n + row];
    for (let j = 0; j < m; j++) {
      let s = x[row * m + j];
      for (let k = row + 1; k < n; k++) s -= lu[row * n + k] * x[k * m + j];
      x[row * m + j] = s / d;
    }
  }
  return x;
}

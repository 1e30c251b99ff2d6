/**
 * Frequency response of a small state-space model: c·(sI − M)⁻¹·b·k + d at a complex s, by
 * Gaussian elimination with partial pivoting in complex arithmetic. Used for G(jω) of the
 * averaged plant and for P(z) of its ZOH discretization at z = e^{jωTs}. No allocation per call.
 */

// Complex scratch for n ≤ 8 (the averaged plants have two states).
const MAX_N = 8;
const mRe = new Float64Array(MAX_N * MAX_N);
const mIm = new Float64Array(MAX_N * MAX_N);
const vRe = new Float64Array(MAX_N);
const vIm = new Float64Array(MAX_N);

/**
 * c·(sI − M)⁻¹·(bScale·b) + d for s = sRe + j·sIm, M n×n real. Gaussian elimination with
 * partial pivoting in complex arithmetic (n is tiny). `bScale` is a complex factor on b.
 */
export function complexTransfer(n: number, m: Float64Array, b: Float64Array, c: Float64Array, d: number, sRe: number, sIm: number, bScaleRe: number, bScaleIm: number): { re: number; im: number } {
  if (n > MAX_N) throw new RangeError(`complexTransfer: at most ${MAX_N} states, got ${n}`);
  if (n === 0) return { re: d, im: 0 };
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) {
      mRe[i * n + j] = -m[i * n + j];
      mIm[i * n + j] = 0;
    }
    mRe[i * n + i] += sRe;
    mIm[i * n + i] += sIm;
    vRe[i] = b[i] * bScaleRe;
    vIm[i] = b[i] * bScaleIm;
  }
  for (let k = 0; k < n; k++) {
    let p = k;
    let best = mRe[k * n + k] ** 2 + mIm[k * n + k] ** 2;
    for (let i = k + 1; i < n; i++) {
      const v = mRe[i * n + k] ** 2 + mIm[i * n + k] ** 2;
      if (v > best) { best = v; p = i; }
    }
    if (best === 0) return { re: Infinity, im: 0 };
    if (p !== k) {
      for (let j = 0; j < n; j++) {
        let t = mRe[k * n + j]; mRe[k * n + j] = mRe[p * n + j]; mRe[p * n + j] = t;
        t = mIm[k * n + j]; mIm[k * n + j] = mIm[p * n + j]; mIm[p * n + j] = t;
      }
      let t = vRe[k]; vRe[k] = vRe[p]; vRe[p] = t;
      t = vIm[k]; vIm[k] = vIm[p]; vIm[p] = t;
    }
    const pr = mRe[k * n + k];
    const pi = mIm[k * n + k];
    for (let i = k + 1; i < n; i++) {
      // factor = m[i][k] / pivot
      const ar = mRe[i * n + k];
      const ai = mIm[i * n + k];
      const fr = (ar * pr + ai * pi) / best;
      const fi = (ai * pr - ar * pi) / best;
      for (let j = k; j < n; j++) {
        const br = mRe[k * n + j];
        const bi = mIm[k * n + j];
        mRe[i * n + j] -= fr * br - fi * bi;
        mIm[i * n + j] -= fr * bi + fi * br;
      }
      vRe[i] -= fr * vRe[k] - fi * vIm[k];
      vIm[i] -= fr * vIm[k] + fi * vRe[k];
    }
  }
  for (let i = n - 1; i >= 0; i--) {
    let sr = vRe[i];
    let si = vIm[i];
    for (let j = i + 1; j < n; j++) {
      sr -= mRe[i * n + j] * vRe[j] - mIm[i * n + j] * vIm[j];
      si -= mRe[i * n + j] * vIm[j] + mIm[i * n + j] * vRe[j];
    }
    const pr = mRe[i * n + i];
    const pi = mIm[i * n + i];
    const den = pr * pr + pi * pi;
    vRe[i] = (sr * pr + si * pi) / den;
    vIm[i] = (si * pr - sr * pi) / den;
  }
  let re = d;
  let im = 0;
  for (let i = 0; i < n; i++) {
    re += c[i] * vRe[i];
    im += c[i] * vIm[i];
  }
  return { re, im };
}

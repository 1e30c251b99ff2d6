/**
 * Tolerance assertion for reference tables: passes when |actual − expected| ≤ max(abs, rel·|expected|).
 * Give the tolerance its reason in a comment at the call site; `what` names the quantity in the
 * failure message, which shows both values, the difference and the tolerance that was missed.
 */

export interface Tolerance {
  /** Relative tolerance, as a fraction of |expected|. */
  rel?: number;
  /** Absolute tolerance, in the quantity's unit. */
  abs?: number;
  /** Name of the quantity, for the failure message. */
  what?: string;
}

function fmt(x: number): string {
  return Number.isFinite(x) ? x.toPrecision(10) : String(x);
}

export function expectClose(actual: number, expected: number, tol: Tolerance): void {
  const rel = tol.rel ?? 0;
  const abs = tol.abs ?? 0;
  if (!(rel >= 0 && abs >= 0) || (rel === 0 && abs === 0 && tol.rel === undefined && tol.abs === undefined))
    throw new Error(`expectClose: give a non-negative rel and/or abs tolerance, got rel ${tol.rel}, abs ${tol.abs}`);
  const limit = Math.max(abs, rel * Math.abs(expected));
  const diff = Math.abs(actual - expected);
  if (diff <= limit) return;
  const name = tol.what ? `${tol.what}: ` : '';
  const relDiff = expected !== 0 ? ` (rel ${(diff / Math.abs(expected)).toExponential(2)})` : '';
  throw new Error(
    `${name}expected ${fmt(actual)} to be within ${limit.toExponential(2)} of ${fmt(expected)}, ` +
      `off by ${diff.toExponential(2)}${relDiff}; tolerance max(abs ${abs}, rel ${rel}·|expected|)`,
  );
}

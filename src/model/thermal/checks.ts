/**
 * Argument checks shared by the thermal model. Messages name the offending field path and
 * the expectation so a bad case file points straight at its line.
 */

/** Physical magnitude window for R, C, τ, mass, cp. Why: keeps products such as
 * 1/sqrt(Ci·Cj) and A·dt far from under/overflow (subnormals stall eigen iterations). */
export const MIN_QUANTITY = 1e-12;
export const MAX_QUANTITY = 1e12;

export function describe(x: unknown): string {
  if (typeof x === 'number') return String(x);
  if (typeof x === 'string') return JSON.stringify(x);
  if (Array.isArray(x)) return `array(${x.length})`;
  return x === null ? 'null' : typeof x;
}

/** Finite, > 0 and inside [MIN_QUANTITY, MAX_QUANTITY]. */
export function requirePositive(x: unknown, path: string): number {
  if (typeof x !== 'number' || !Number.isFinite(x) || x <= 0)
    throw new Error(`${path}: must be a finite number > 0, got ${describe(x)}`);
  if (x < MIN_QUANTITY || x > MAX_QUANTITY)
    throw new Error(`${path}: must be within [${MIN_QUANTITY}, ${MAX_QUANTITY}] (physical range), got ${x}`);
  return x;
}

/** Like requirePositive but Infinity is allowed (an open thermal path). */
export function requirePositiveOrInfinity(x: unknown, path: string): number {
  if (x === Infinity) return x;
  if (typeof x !== 'number' || Number.isNaN(x) || x <= 0)
    throw new Error(`${path}: must be > 0 (Infinity allowed for no path), got ${describe(x)}`);
  return requirePositive(x, path);
}

/** Finite and ≥ 0 (0 allowed, e.g. a bonded case–sink interface). */
export function requireNonNegative(x: unknown, path: string): number {
  if (typeof x !== 'number' || !Number.isFinite(x) || x < 0)
    throw new Error(`${path}: must be a finite number >= 0, got ${describe(x)}`);
  if (x !== 0 && x > MAX_QUANTITY) throw new Error(`${path}: must be <= ${MAX_QUANTITY}, got ${x}`);
  return x;
}

export function requireFinite(x: unknown, path: string): number {
  if (typeof x !== 'number' || !Number.isFinite(x)) throw new Error(`${path}: must be a finite number, got ${describe(x)}`);
  return x;
}

/** A non-empty array of positive quantities. */
export function requirePositiveArray(x: unknown, path: string): readonly number[] {
  if (!Array.isArray(x) || x.length === 0) throw new Error(`${path}: must be a non-empty array of numbers, got ${describe(x)}`);
  x.forEach((v, i) => requirePositive(v, `${path}[${i}]`));
  return x as readonly number[];
}

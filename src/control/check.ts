/**
 * Argument checks shared by the control and sensor modules.
 *
 * Every failure throws an Error naming the bad value and the expectation, in
 * the form `pi.kp: must be finite, got NaN`. These run at construction time or
 * once per step on a handful of scalars; they never allocate unless they throw.
 */

function fail(name: string, expectation: string, value: unknown): never {
  throw new Error(`${name}: ${expectation}, got ${String(value)}`);
}

export function requireFinite(name: string, value: number): number {
  if (typeof value !== 'number' || !Number.isFinite(value)) fail(name, 'must be finite', value);
  return value;
}

export function requirePositive(name: string, value: number): number {
  if (typeof value !== 'number' || !Number.isFinite(value) || value <= 0) {
    fail(name, 'must be finite and > 0', value);
  }
  return value;
}

export function requireNonNegative(name: string, value: number): number {
  if (typeof value !== 'number' || !Number.isFinite(value) || value < 0) {
    fail(name, 'must be finite and >= 0', value);
  }
  return value;
}

export function requireInteger(name: string, value: number, min: number): number {
  if (typeof value !== 'number' || !Number.isSafeInteger(value) || value < min) {
    fail(name, `must be an integer >= ${min}`, value);
  }
  return value;
}

export function requireOneOf<T extends string>(name: string, value: T, allowed: readonly T[]): T {
  if (!allowed.includes(value)) fail(name, `must be one of ${allowed.map((a) => `'${a}'`).join(', ')}`, value);
  return value;
}

export function requireInRange(
  name: string,
  value: number,
  lowExclusive: number,
  highInclusive: number,
): number {
  if (typeof value !== 'number' || !Number.isFinite(value) || !(value > lowExclusive && value <= highInclusive)) {
    fail(name, `must be in (${lowExclusive}, ${highInclusive}]`, value);
  }
  return value;
}

export { fail as failCheck };

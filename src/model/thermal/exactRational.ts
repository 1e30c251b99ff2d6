/**
 * Exact rational arithmetic on BigInt.
 *
 * Why: the polynomial Foster→Cauer continued fraction subtracts nearly equal leading
 * coefficients at every step; in binary64 that loses all digits beyond ~4 stages with
 * spread time constants. Every finite double is an exact dyadic rational, so doing the
 * expansion exactly and rounding once at the end gives the correctly rounded ladder.
 */

export interface Rational {
  /** Numerator; sign carried here. */
  readonly num: bigint;
  /** Denominator, always > 0; the pair is not necessarily reduced. */
  readonly den: bigint;
}

export const RATIONAL_ZERO: Rational = Object.freeze({ num: 0n, den: 1n });
export const RATIONAL_ONE: Rational = Object.freeze({ num: 1n, den: 1n });

function gcd(a: bigint, b: bigint): bigint {
  let x = a < 0n ? -a : a;
  let y = b < 0n ? -b : b;
  while (y !== 0n) [x, y] = [y, x % y];
  return x;
}

function reduced(num: bigint, den: bigint): Rational {
  const g = gcd(num, den);
  return g > 1n ? { num: num / g, den: den / g } : { num, den };
}

/**
 * Reduction is deferred while the denominator stays small: a BigInt gcd costs far more than
 * multiplying short integers, and the value (hence every sign test and the final rounding,
 * which reduces first) does not depend on the representation.
 */
const REDUCE_ABOVE = 1n << 1024n;

function make(num: bigint, den: bigint): Rational {
  if (den === 0n) throw new Error('exactRational: division by zero');
  if (den < 0n) [num, den] = [-num, -den];
  return den > REDUCE_ABOVE ? reduced(num, den) : { num, den };
}

/** Exact value of a finite double (doubling is exact, so the loop only moves the binary point). */
export function rationalFromNumber(x: number): Rational {
  if (!Number.isFinite(x)) throw new Error(`exactRational: value must be finite, got ${x}`);
  let m = x;
  let shift = 0;
  while (!Number.isInteger(m)) {
    m *= 2;
    shift++;
  }
  return make(BigInt(m), 1n << BigInt(shift));
}

function bitLength(v: bigint): number {
  return v === 0n ? 0 : v.toString(2).length;
}

/**
 * Nearest double: a quotient with ≥ 66 significant bits whose lowest bit is set when the
 * division left a remainder (a sticky bit), so Number()'s round-to-nearest-even sees the
 * exact value's side of every midpoint; then an exact scaling by 2^−shift (normal range).
 * The result depends on the value only, not on whether num/den is reduced.
 */
export function rationalToNumber(r: Rational): number {
  if (r.num === 0n) return 0;
  const neg = r.num < 0n;
  const n = neg ? -r.num : r.num;
  const shift = 66 - (bitLength(n) - bitLength(r.den));
  const top = shift >= 0 ? n << BigInt(shift) : n;
  const bottom = shift >= 0 ? r.den : r.den << BigInt(-shift);
  let q = top / bottom;
  if (q * bottom !== top) q |= 1n;
  // Two half-scalings so that 2^−shift itself never under/overflows for extreme exponents.
  const half = Math.trunc(shift / 2);
  const value = Number(q) * 2 ** -half * 2 ** -(shift - half);
  return neg ? -value : value;
}

export function ratAdd(a: Rational, b: Rational): Rational {
  return make(a.num * b.den + b.num * a.den, a.den * b.den);
}

export function ratSub(a: Rational, b: Rational): Rational {
  return make(a.num * b.den - b.num * a.den, a.den * b.den);
}

export function ratMul(a: Rational, b: Rational): Rational {
  return make(a.num * b.num, a.den * b.den);
}

export function ratDiv(a: Rational, b: Rational): Rational {
  if (b.num === 0n) throw new Error('exactRational: division by zero');
  return make(a.num * b.den, a.den * b.num);
}

export function ratSign(a: Rational): -1 | 0 | 1 {
  return a.num === 0n ? 0 : a.num > 0n ? 1 : -1;
}

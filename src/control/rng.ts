/**
 * Seeded pseudo-random numbers for sensor noise and Monte-Carlo studies.
 *
 * Generator: xoshiro128** 1.1 (Blackman & Vigna, "Scrambled linear
 * pseudorandom number generators", ACM TOMS 47(4), 2021; reference code
 * prng.di.unimi.it/xoshiro128starstar.c). 128-bit state, period 2^128 − 1.
 * The state is expanded from the seed with splitmix32 (a Weyl sequence with
 * step 0x9E3779B9 passed through the MurmurHash3 32-bit finalizer), so nearby
 * seeds give unrelated streams and the state is never all-zero.
 *
 * Everything is integer arithmetic on 32-bit words (Math.imul, shifts), so the
 * sequence is identical across runs, platforms and Node versions.
 */
import { requireInteger } from './check.ts';

/** What the sensor models need from a generator. */
export interface RandomSource {
  /** Uniform on [0, 1), resolution 2^−32. */
  next(): number;
  /** Standard normal N(0, 1). */
  normal(): number;
}

const TWO_POW_32 = 4294967296;
const GOLDEN_32 = 0x9e3779b9;

/** MurmurHash3 fmix32 finalizer (Appleby, smhasher): a bijection on uint32. */
function fmix32(h: number): number {
  h ^= h >>> 16;
  h = Math.imul(h, 0x85ebca6b);
  h ^= h >>> 13;
  h = Math.imul(h, 0xc2b2ae35);
  h ^= h >>> 16;
  return h >>> 0;
}

function lowWord(x: number): number {
  return x >>> 0;
}

function highWord(x: number): number {
  return Math.floor(x / TWO_POW_32) >>> 0;
}

export class Rng implements RandomSource {
  private s0 = 0;
  private s1 = 0;
  private s2 = 0;
  private s3 = 0;
  /** Root key words, fixed at construction; fork() derives from these, not from the running state. */
  private keyLo: number;
  private keyHi: number;
  private hasSpareNormal = false;
  private spareNormal = 0;

  /**
   * @param seed any safe integer (negative allowed); equal seeds give equal sequences.
   */
  constructor(seed: number) {
    requireInteger('rng.seed', seed, Number.MIN_SAFE_INTEGER);
    this.keyLo = lowWord(seed);
    this.keyHi = highWord(seed);
    this.expandKey();
  }

  /**
   * A generator started from an explicit xoshiro128** state (for checking
   * against reference vectors). Words are taken modulo 2^32; not all zero.
   */
  static fromState(s0: number, s1: number, s2: number, s3: number): Rng {
    const words = [s0, s1, s2, s3];
    words.forEach((w, i) => requireInteger(`rng.state[${i}]`, w, 0));
    if (words.every((w) => w >>> 0 === 0)) {
      throw new Error('rng.state: must not be all zero, got [0, 0, 0, 0]');
    }
    const rng = new Rng(0);
    rng.s0 = s0 >>> 0;
    rng.s1 = s1 >>> 0;
    rng.s2 = s2 >>> 0;
    rng.s3 = s3 >>> 0;
    rng.keyLo = (s0 ^ s2) >>> 0;
    rng.keyHi = (s1 ^ s3) >>> 0;
    return rng;
  }

  private expandKey(): void {
    // splitmix32: Weyl counter x += 0x9E3779B9, output fmix32(x).
    let x = (this.keyLo ^ fmix32((this.keyHi ^ 0x6a09e667) >>> 0)) >>> 0;
    x = (x + GOLDEN_32) >>> 0;
    this.s0 = fmix32(x);
    x = (x + GOLDEN_32) >>> 0;
    this.s1 = fmix32(x);
    x = (x + GOLDEN_32) >>> 0;
    this.s2 = fmix32(x);
    x = (x + GOLDEN_32) >>> 0;
    this.s3 = fmix32(x);
    if ((this.s0 | this.s1 | this.s2 | this.s3) === 0) this.s0 = 1;
    this.hasSpareNormal = false;
    this.spareNormal = 0;
  }

  /** Next raw 32-bit output of xoshiro128** as an unsigned integer in [0, 2^32). */
  nextUint32(): number {
    const s1 = this.s1;
    // result = rotl(s1 * 5, 7) * 9
    const m = Math.imul(s1, 5);
    const result = Math.imul((m << 7) | (m >>> 25), 9) >>> 0;
    const t = s1 << 9;
    this.s2 ^= this.s0;
    this.s3 ^= this.s1;
    this.s1 ^= this.s2;
    this.s0 ^= this.s3;
    this.s2 ^= t;
    const s3 = this.s3;
    this.s3 = (s3 << 11) | (s3 >>> 21);
    return result;
  }

  /** Uniform on [0, 1): nextUint32() / 2^32. */
  next(): number {
    return this.nextUint32() / TWO_POW_32;
  }

  /**
   * Standard normal deviate by the Box–Muller transform (Box & Muller, Ann.
   * Math. Stat. 29, 1958): z0 = √(−2 ln u1)·cos(2π u2), z1 = √(−2 ln u1)·sin(2π u2).
   * Each pair of uniforms yields two deviates; the second is cached and
   * returned by the following call. u1 = 1 − next() lies in (0, 1], so ln is finite.
   */
  normal(): number {
    if (this.hasSpareNormal) {
      this.hasSpareNormal = false;
      return this.spareNormal;
    }
    const u1 = 1 - this.next();
    const u2 = this.next();
    const r = Math.sqrt(-2 * Math.log(u1));
    const theta = 2 * Math.PI * u2;
    this.spareNormal = r * Math.sin(theta);
    this.hasSpareNormal = true;
    return r * Math.cos(theta);
  }

  /**
   * An independent child generator keyed by this generator's seed and
   * `seedOffset`. The child depends only on (seed, seedOffset) — not on how
   * many numbers this generator has drawn — and drawing from the child does
   * not advance the parent. Distinct offsets give distinct streams.
   */
  fork(seedOffset: number): Rng {
    requireInteger('rng.fork.seedOffset', seedOffset, Number.MIN_SAFE_INTEGER);
    const offLo = lowWord(seedOffset);
    const offHi = highWord(seedOffset);
    const childLo = fmix32((this.keyLo ^ fmix32((offLo + GOLDEN_32) >>> 0)) >>> 0);
    const childHi = fmix32((this.keyHi ^ fmix32((offHi ^ 0x3c6ef372) >>> 0) ^ 0xbb67ae85) >>> 0);
    const child = new Rng(0);
    child.keyLo = childLo;
    child.keyHi = childHi;
    child.expandKey();
    return child;
  }
}

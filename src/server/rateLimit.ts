/**
 * Token bucket: `ratePerS` tokens a second up to `burst`. The clock is passed in (milliseconds),
 * so tests need no wall clock.
 */
export class TokenBucket {
  private tokens: number;
  private lastMs: number;
  constructor(
    private readonly ratePerS: number,
    private readonly burst: number,
    nowMs: number,
  ) {
    if (!(ratePerS > 0) || !(burst >= 1)) throw new RangeError(`TokenBucket: need rate > 0 and burst ≥ 1, got ${ratePerS}, ${burst}`);
    this.tokens = burst;
    this.lastMs = nowMs;
  }

  /** Take one token; false when the bucket is empty. */
  take(nowMs: number): boolean {
    const dt = Math.max(0, nowMs - this.lastMs) / 1000;
    this.lastMs = nowMs;
    this.tokens = Math.min(this.burst, this.tokens + dt * this.ratePerS);
    if (this.tokens < 1) return false;
    this.tokens -= 1;
    return true;
  }
}

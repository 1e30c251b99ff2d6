import { describe, expect, it } from 'vitest';
import { expectClose } from './expectClose.ts';

describe('expectClose(actual, expected, {rel, abs})', () => {
  it('passes within max(abs, rel·|expected|)', () => {
    expect(() => expectClose(1.0005, 1, { rel: 1e-3 })).not.toThrow();
    expect(() => expectClose(0.0004, 0, { abs: 5e-4 })).not.toThrow();
    expect(() => expectClose(100.4, 100, { rel: 1e-6, abs: 0.5 })).not.toThrow();
  });

  it('fails with both values, the miss and the tolerance in the message', () => {
    expect(() => expectClose(0.377, 0.376, { abs: 5e-4, what: 'P_ON,H' })).toThrow(
      /P_ON,H: expected 0\.377\d* to be within 5\.00e-4 of 0\.376\d*, off by 1\.00e-3 \(rel 2\.66e-3\); tolerance max\(abs 0\.0005, rel 0/,
    );
  });

  it('fails on NaN and refuses a missing tolerance', () => {
    expect(() => expectClose(NaN, 1, { rel: 1 })).toThrow(/expected NaN/);
    expect(() => expectClose(1, 1, {})).toThrow(/give a non-negative rel and\/or abs/);
    expect(() => expectClose(1, 1, { rel: -1 })).toThrow(/give a non-negative/);
  });
});

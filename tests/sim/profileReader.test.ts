import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { LiveProfile, ProfileReader, makeProfile } from '../../src/sim/profiles.ts';

// The engine's cached profile reads must equal valueAt at every time, in any order, at the
// breakpoints themselves, and after live steps (with the invalidation setInput does).

const times = fc.array(fc.integer({ min: 0, max: 40 }).map((k) => k / 4), { minLength: 1, maxLength: 60 });
const steps = fc
  .uniqueArray(fc.integer({ min: 0, max: 40 }), { minLength: 1, maxLength: 6 })
  .chain((ks) => fc.tuple(fc.constant([...ks].sort((a, b) => a - b).map((k) => k / 4)), fc.array(fc.double({ min: -10, max: 10, noNaN: true }), { minLength: ks.length, maxLength: ks.length })))
  .map(([ts, vs]) => ts.map((t, i) => [t, vs[i]] as [number, number]));

describe('ProfileReader', () => {
  it('reads what valueAt gives for constant, step and ramp profiles, at any sequence of times (property)', () => {
    fc.assert(
      fc.property(steps, fc.constantFrom('const', 'step', 'ramp'), times, (pts, kind, ts) => {
        const p = makeProfile(kind === 'const' ? pts[0][1] : kind === 'step' ? { step: pts } : { ramp: pts }, 7);
        const r = new ProfileReader(p);
        for (const t of ts) expect(r.at(t)).toBe(p.valueAt(t));
      }),
    );
  });

  it('follows live steps once invalidated (property)', () => {
    fc.assert(
      fc.property(steps, times, fc.array(fc.tuple(fc.integer({ min: 0, max: 40 }), fc.double({ min: -5, max: 5, noNaN: true })), { maxLength: 4 }), (pts, ts, live) => {
        const p = new LiveProfile(makeProfile({ step: pts }, 3));
        const r = new ProfileReader(p);
        const sorted = [...ts].sort((a, b) => a - b);
        let j = 0;
        for (const t of sorted) {
          while (j < live.length && live[j][0] / 4 <= t) {
            p.setFrom(live[j][0] / 4, live[j][1]);
            r.invalidate();
            j++;
          }
          expect(r.at(t)).toBe(p.valueAt(t));
        }
      }),
    );
  });
});

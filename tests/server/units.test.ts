/** Small pieces of the server: command parsing, the frame buffer, the replay merge, the token bucket, the pacing loop. */
import { describe, expect, it } from 'vitest';
import { FrameBuffer } from '../../src/server/frameBuffer.ts';
import { COMMAND_TYPES, parseCommand } from '../../src/server/protocol.ts';
import { TokenBucket } from '../../src/server/rateLimit.ts';
import { TickScheduler } from '../../src/server/scheduler.ts';
import { mergeProfile, replayScenario } from '../../src/server/replay.ts';
import { hostChecker, originAllowed } from '../../src/server/security.ts';
import { LiveProfile, makeProfile } from '../../src/sim/profiles.ts';

describe('parseCommand(text)', () => {
  const ok = (o: unknown) => parseCommand(JSON.stringify(o));
  it('accepts one well-formed example of every command', () => {
    const examples: Record<string, object> = {
      start: {}, pause: {}, reset: {}, speed: { speed: 'max' }, setDemand: { heatDemandW: 20 }, loadStep: { loadROhm: 0.5 },
      setInlet: { inletC: 15 }, supervisor: { on: false }, manual: { fswHz: 2e5 }, gains: { kp: 0.001 },
      loadScenario: { name: 'buck-aux-48v' }, margins: { map: false },
    };
    for (const t of COMMAND_TYPES) expect(ok({ v: 1, type: t, ...examples[t] }), t).toMatchObject({ ok: true, command: { type: t } });
  });
  it('names the field of a bad value and keeps the id', () => {
    const r = ok({ v: 1, id: 7, type: 'gains', kp: -1 });
    expect(r).toMatchObject({ ok: false, code: 'badCommand', id: 7, problems: [{ path: 'kp' }] });
  });
  it('rejects a case name that is a path', () => {
    for (const name of ['../x', 'a/b', '/etc/passwd', '.hidden', 'C:\\x']) expect(ok({ v: 1, type: 'loadScenario', name }).ok, name).toBe(false);
  });
});

describe('FrameBuffer(columns, maxPoints)', () => {
  it('stays bounded however many records arrive, keeping the latest', () => {
    const fb = new FrameBuffer(['tS', 'x'], 50);
    let largest = 0;
    for (let i = 0; i < 100_000; i++) {
      fb.push({ tS: i, x: i * 2 });
      largest = Math.max(largest, fb.size);
    }
    expect(largest).toBeLessThan(100);
    const { records, dropped, count } = fb.take();
    expect(count).toBe(50);
    expect(records.tS.at(-1)).toBe(99_999);
    expect(dropped).toBe(100_000 - 50);
    expect(fb.size).toBe(0);
  });
  it('passes non-finite values as null', () => {
    const fb = new FrameBuffer(['a', 'b'], 10);
    fb.push({ a: NaN, b: 'x' });
    expect(fb.take().records).toEqual({ a: [null], b: [null] });
  });
});

describe('mergeProfile(base, liveSteps, baseAt0)', () => {
  it('a constant becomes a step list held from 0', () => {
    expect(mergeProfile(15, [[40, 30]], 15)).toEqual({ step: [[0, 15], [40, 30]] });
    expect(mergeProfile(undefined, [[0, 3], [2, 4]], 1)).toEqual({ step: [[0, 3], [2, 4]] });
  });
  it('a step profile keeps its earlier points only', () => {
    expect(mergeProfile({ step: [[5, 12], [120, 22]] }, [[50, 30]], 0)).toEqual({ step: [[5, 12], [50, 30]] });
    expect(mergeProfile({ step: [[5, 12], [50, 22]] }, [[50, 30]], 0)).toEqual({ step: [[5, 12], [50, 30]] });
  });
  it('a ramp keeps its points and takes the live steps as holds (after its earlier holds only)', () => {
    expect(mergeProfile({ ramp: [[0, -5], [100, 5]] }, [[50, 20], [70, 25]], -5)).toEqual({ ramp: [[0, -5], [100, 5]], holds: [[50, 20], [70, 25]] });
    expect(mergeProfile({ ramp: [[0, -5], [100, 5]], holds: [[30, 1], [60, 2]] }, [[50, 20]], -5)).toEqual({ ramp: [[0, -5], [100, 5]], holds: [[30, 1], [50, 20]] });
  });
  it('a ramp with holds evaluates as the ramp overlaid by the live steps', () => {
    const ramp = { ramp: [[0, -5], [100, 5]] as Array<[number, number]> };
    const live = new LiveProfile(makeProfile(ramp, 0));
    live.setFrom(50, 20);
    live.setFrom(70, 25);
    const saved = makeProfile(mergeProfile(ramp, live.steps(), -5), 0);
    for (const t of [0, 12.5, 49.999, 50, 60, 69.99, 70, 99, 100, 150]) {
      expect(saved.valueAt(t)).toBe(live.valueAt(t));
      expect(saved.nextBreakS(t)).toBe(live.nextBreakS(t));
    }
    expect(saved.valueAt(25)).toBe(-2.5);
    expect(saved.valueAt(55)).toBe(20);
  });
});

describe('replayScenario', () => {
  it('edits the source in place, keeps comments, sets the duration', () => {
    const src = '# my case\nname: x\nsim:\n  durationS: 10 # long\nprofiles:\n  heatDemandW: 5\n';
    const out = replayScenario({ sourceText: src, input: { name: 'x', profiles: { heatDemandW: 5 } }, liveSteps: { heatDemandW: [[1.25, 9]] }, baseAt0: { heatDemandW: 5 }, durationS: 3.5 });
    expect(out.text).toMatch(/# my case/);
    expect(out.text).toMatch(/durationS: 3.5 # long/);
    expect(out.text).toMatch(/heatDemandW: \{ step: \[ \[ 0, 5 \], \[ 1.25, 9 \] \] \}/);
  });
  it('refuses a session that has not run', () => {
    expect(() => replayScenario({ sourceText: 'name: x', input: {}, liveSteps: {}, baseAt0: {}, durationS: 0 })).toThrow(/not run/);
  });
});

describe('TokenBucket(rate, burst)', () => {
  it('allows the burst, then the rate', () => {
    const b = new TokenBucket(10, 3, 0);
    expect([b.take(0), b.take(0), b.take(0), b.take(0)]).toEqual([true, true, true, false]);
    expect(b.take(100)).toBe(true);
    expect(b.take(100)).toBe(false);
  });
});

describe('origin and host checks', () => {
  it('same origin only, when an Origin is sent', () => {
    expect(originAllowed({ headers: { host: 'localhost:8080' } })).toBe(true);
    expect(originAllowed({ headers: { host: 'localhost:8080', origin: 'http://localhost:8080' } })).toBe(true);
    expect(originAllowed({ headers: { host: 'localhost:8080', origin: 'http://localhost:9090' } })).toBe(false);
    expect(originAllowed({ headers: { host: 'localhost:8080', origin: 'file://' } })).toBe(false);
  });
  it('a loopback bind answers loopback names only', () => {
    const ok = hostChecker('127.0.0.1');
    expect(['localhost:1', '127.0.0.1:8080', '[::1]:8080', 'LOCALHOST'].map(ok)).toEqual([true, true, true, true]);
    expect(['evil.example:8080', '', undefined, 'a b'].map(ok)).toEqual([false, false, false, false]);
  });
});

describe('TickScheduler round', () => {
  // A fake clock and fake sessions: each slice "uses" what the session needs, up to the slice.
  function fake(needMs: number, clock: { t: number }) {
    const s = {
      running: true,
      needMs,
      slices: [] as Array<{ ms: number; more: boolean }>,
      get behind() {
        return s.needMs > 0;
      },
      computeTick(budgetMs: number, more = false) {
        s.slices.push({ ms: budgetMs, more });
        const used = Math.min(s.needMs, budgetMs);
        s.needMs -= used;
        clock.t += used;
      },
      frameTick() {},
    };
    return s;
  }

  it('gives time the others left unused to a session still behind, within the budget', () => {
    const clock = { t: 0 };
    const sched = new TickScheduler({ frameHz: 25, maxBudgetMs: 40, now: () => clock.t });
    const heavy = fake(50, clock);
    const light = [fake(1, clock), fake(1, clock), fake(1, clock)];
    for (const s of [heavy, ...light]) sched.add(s as never);
    sched.round();
    sched.stop();
    // First pass: the heavy one (first in turn) gets 40 / 4 = 10 ms, the light ones use 1 ms
    // each; then the heavy one gets the 27 ms they left, and the round ends at the budget.
    expect(heavy.slices[0]).toEqual({ ms: 10, more: false });
    expect(heavy.slices[1]).toEqual({ ms: 27, more: true });
    expect(heavy.needMs).toBe(13);
    expect(clock.t).toBe(40);
    for (const s of light) expect(s.slices.every((x) => !x.more)).toBe(true);
  });
});

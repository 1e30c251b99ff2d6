/**
 * Pacing of a live session, with a fake clock (no wall time in the test): simulated time follows
 * speed × wall time; a round without compute time leaves a debt that later rounds make up, up to
 * the catch-up limit (2 s of wall time), past which it is dropped.
 */
import { describe, expect, it } from 'vitest';
import { caseLibrary } from '../../src/server/cases.ts';
import { Session } from '../../src/server/session.ts';

const CASES = caseLibrary(new URL('../../cases', import.meta.url).pathname);
const SPEED = 100;
const PERIOD_MS = 40;

interface Paced {
  session: Session;
  clock: { now: number };
  simT: () => number;
  /** n rounds of one frame period each, with budgetMs of compute per round. */
  rounds: (n: number, budgetMs: number) => void;
}

async function paced(): Promise<Paced> {
  const clock = { now: 0 };
  const session = new Session('pacing', { send: () => undefined, canSendFrame: () => true }, {
    cases: CASES, defaultCase: 'buck-cabin-warmup', frameHz: 25, maxPointsPerFrame: 60, traceMaxRecords: 1e6,
    budgetMs: () => 1e9, now: () => clock.now,
  });
  await session.init();
  await session.handle({ v: 1, type: 'speed', speed: SPEED });
  await session.handle({ v: 1, type: 'start' });
  // The round that starts the pace.
  session.computeTick(1e9);
  const simT = (): number => (session as unknown as { run: { sim: { t: number } } }).run.sim.t;
  const rounds = (n: number, budgetMs: number): void => {
    for (let i = 0; i < n; i++) {
      clock.now += PERIOD_MS;
      session.computeTick(budgetMs);
    }
  };
  return { session, clock, simT, rounds };
}

describe('live pacing', () => {
  it('simulated time advances by speed × wall time per round', async () => {
    const { session, simT, rounds } = await paced();
    const t0 = simT();
    rounds(5, 1e9);
    expect(simT() - t0).toBeCloseTo((SPEED * 5 * PERIOD_MS) / 1000, 6);
    expect(session.behind).toBe(false);
  });

  it('rounds without compute time leave a debt that the next round with time makes up', async () => {
    const { session, simT, rounds } = await paced();
    const t0 = simT();
    rounds(10, 0);
    expect(simT()).toBe(t0);
    expect(session.behind).toBe(true);
    rounds(1, 1e9);
    expect(simT() - t0).toBeCloseTo((SPEED * 11 * PERIOD_MS) / 1000, 6);
    expect(session.behind).toBe(false);
  });

  it('a debt beyond 2 s of wall time is dropped: the session resumes its pace without a backlog', async () => {
    const { session, simT, rounds } = await paced();
    const t0 = simT();
    // 3 s without compute (75 rounds), then one round with time.
    rounds(75, 0);
    rounds(1, 1e9);
    expect(simT() - t0).toBeCloseTo(SPEED * 2 + (SPEED * PERIOD_MS) / 1000, 6);
    expect(session.behind).toBe(false);
  });

  it('a stalled process counts at most 2 s of wall time', async () => {
    const { session, clock, simT } = await paced();
    const t0 = simT();
    // One round a minute after the last.
    clock.now += 60_000;
    session.computeTick(1e9);
    expect(simT() - t0).toBeCloseTo(SPEED * 2, 6);
  });
});

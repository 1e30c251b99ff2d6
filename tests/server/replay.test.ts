/**
 * A live session replays exactly: the replay scenario it downloads, run to its end the way
 * `lossdial run` runs it, gives the session's records bit for bit. The session is driven with a
 * fake clock (no wall time in the test): each tick advances simulated time by speed × 40 ms.
 */
import { describe, expect, it } from 'vitest';
import { parseScenario } from '../../src/scenario/parse.ts';
import { caseLibrary } from '../../src/server/cases.ts';
import { replayRun } from '../../src/server/liveRun.ts';
import type { ServerMessage } from '../../src/server/protocol.ts';
import { Session } from '../../src/server/session.ts';
import type { SimRecord } from '../../src/sim/engine.ts';

const CASES = caseLibrary(new URL('../../cases', import.meta.url).pathname);

async function drive(caseName: string, script: Array<Record<string, unknown> | number>): Promise<{ session: Session; messages: ServerMessage[] }> {
  const messages: ServerMessage[] = [];
  let now = 0;
  const session = new Session('test', { send: (m) => messages.push(m), canSendFrame: () => true }, {
    cases: CASES, defaultCase: caseName, frameHz: 25, maxPointsPerFrame: 60, traceMaxRecords: 1e6,
    budgetMs: () => 1e9, now: () => now,
  });
  await session.init();
  // No scheduler here: the test ticks by hand.
  await session.handle({ v: 1, type: 'speed', speed: 50 });
  await session.handle({ v: 1, type: 'start' });
  for (const step of script) {
    if (typeof step === 'number') {
      for (let i = 0; i < step; i++) {
        now += 40;
        session.tick();
      }
    } else {
      await session.handle({ v: 1, ...step } as never);
    }
  }
  await session.handle({ v: 1, type: 'pause' });
  return { session, messages };
}

function compare(session: Session): { sessionRecords: readonly SimRecord[]; replayRecords: SimRecord[]; differing: string[] } {
  const rep = session.replay();
  const res = replayRun(parseScenario(rep.text));
  const a = session.traceRecords();
  const differing: string[] = [];
  a.forEach((r, i) => {
    const b = res.records[i];
    for (const k of Object.keys(r)) if (!Object.is(r[k], b?.[k])) differing.push(`record ${i} (t = ${r.tS} s) ${k}: ${r[k]} vs ${b?.[k]}`);
  });
  return { sessionRecords: a, replayRecords: res.records, differing };
}

describe('session replay', () => {
  it('demand and load moves replay bit for bit (the replay run has at most one more, partial, record)', async () => {
    const { session, messages } = await drive('buck-cabin-warmup', [
      20, { type: 'setDemand', heatDemandW: 35 }, 20, { type: 'loadStep', loadROhm: 0.6 }, 15, { type: 'setDemand', heatDemandW: 8 }, 15,
    ]);
    expect(messages.filter((m) => m.type === 'error')).toEqual([]);
    const { sessionRecords, replayRecords, differing } = compare(session);
    expect(sessionRecords.length).toBeGreaterThan(50);
    expect(replayRecords.length - sessionRecords.length).toBeLessThanOrEqual(1);
    expect(differing.slice(0, 5)).toEqual([]);
    const text = session.replay().text;
    expect(text).toMatch(/heatDemandW: \{ step: \[ \[ 5, 12 \], \[ [\d.]+, 35 \], \[ [\d.]+, 8 \] \] \}/);
    expect(text).toMatch(/loadROhm: \{ step: \[ \[ 0, 0.48 \], \[ [\d.]+, 0.6 \] \] \}/);
    session.dispose();
  });

  // Changes that leave the plant where it was (gains, a hand-over at the same knobs) must not
  // resume sampling in the session unless the replay's breakpoint does too.
  it('gain changes and supervisor hand-overs replay bit for bit', async () => {
    const { session } = await drive('buck-cabin-warmup', [
      20, { type: 'gains', kp: 0.003, ki: 80 }, 15, { type: 'supervisor', on: false }, 10,
      { type: 'manual', fswHz: 250e3, vDriveV: 8 }, 10, { type: 'supervisor', on: true }, 15,
    ]);
    const { differing } = compare(session);
    session.dispose();
    expect(differing.slice(0, 5)).toEqual([]);
  });

  it('a live change on a ramp profile (the coolant inlet) replays bit for bit as the ramp with holds', async () => {
    const { session } = await drive('buck-cabin-warmup', [20, { type: 'setInlet', inletC: 20 }, 10, { type: 'setInlet', inletC: 12 }, 10]);
    const rep = session.replay();
    expect(parseScenario(rep.text).input).toMatchObject({ profiles: { inletC: { ramp: [[0, -5], [1200, 5]] } } });
    const { sessionRecords, differing } = compare(session);
    expect(sessionRecords.length).toBeGreaterThan(20);
    expect(differing.slice(0, 5)).toEqual([]);
    session.dispose();
  });
});

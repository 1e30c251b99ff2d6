/**
 * Engine outcomes and contract: determinism, divergence with partial results, interruption,
 * resumable runs, breakpoints landed on exactly, and settled stretches held without changing
 * the answer.
 */
import { describe, expect, it } from 'vitest';
import { toCsv } from '../../src/io/csv.ts';
import { electricalPoint } from '../../src/model/electrical.ts';
import { Simulation, simulate } from '../../src/sim/engine.ts';
import { traceColumns, traceRows } from '../../src/sim/runOutput.ts';
import { buildSystem } from '../../src/sim/system.ts';
import { expectClose } from '../helpers/expectClose.ts';
import { buckScenario, run } from './helpers.ts';

const STEPS = {
  'sim.durationS': 0.02,
  'sim.recordIntervalS': 2e-4,
  'profiles.loadROhm': { step: [[0.003, 0.8], [0.011, 0.4]] },
  'profiles.fswHz': { step: [[0.007, 180e3]] },
  'profiles.inletC': { ramp: [[0, 10], [0.02, 30]] },
};

describe('determinism', () => {
  it('the same scenario gives a byte-identical trace', () => {
    const sc = buckScenario(STEPS);
    const csv = (): string => {
      const sys = buildSystem(sc);
      const res = simulate(sys);
      return toCsv(traceRows(sys, res.records), traceColumns(sys, res.records).map((c) => c[0]));
    };
    const a = csv();
    expect(a.split('\n').length).toBe(102); // header, 100 rows, final newline
    expect(csv()).toBe(a);
  });
});

describe('divergence', () => {
  it('thermal runaway stops the run with status diverged, its time and cause, and keeps the records so far', () => {
    // 50 K/W junction–case on both devices: the junctions head for > 100 K above the inlet, and
    // Rds,on(Tj) makes the loss climb with them; runawayTjC 120 °C is crossed near 1 s.
    const path = { junctionCase: { kind: 'cauer', rKPerW: [50], cJPerK: [0.01] }, caseSinkKPerW: 0.3 };
    const { res } = run(buckScenario({
      'thermal.devices.highSide': path,
      'thermal.devices.lowSide': path,
      'limits.runawayTjC': 120,
      'sim.durationS': 5,
      'sim.recordIntervalS': 0.1,
      'sim.thermalStepS': 0.01,
    }));
    expect(res.status).toBe('diverged');
    expect(res.causeCode).toBe('thermalRunaway');
    expect(res.cause).toMatch(/thermal runaway: junction 12\d\.\d °C above 120 °C at \d\.\d{3} s/);
    expect(res.tEndS).toBeGreaterThan(0.3);
    expect(res.tEndS).toBeLessThan(5);
    // Partial results: every record interval up to the divergence, the last one ending there.
    expect(res.records.length).toBe(Math.ceil(res.tEndS / 0.1 - 1e-9));
    const last = res.records[res.records.length - 1];
    expect(last.tS).toBe(res.tEndS);
    expect(Math.max(last.tjHsC, last.tjLsC)).toBeGreaterThan(120);
    expect(res.records[res.records.length - 2].tjHsC).toBeLessThan(120);
  });
});

describe('interruption and resumption', () => {
  it('shouldStop ends the run with status interrupted and the records so far', () => {
    let polls = 0;
    // A thermal step every 10 µs: one engine iteration per 10 µs even while held, so the stop
    // poll (every 4096 iterations) comes round at ~41 ms and ~82 ms of a 0.2 s run.
    const sc = buckScenario({ 'sim.durationS': 0.2, 'sim.recordIntervalS': 1e-3, 'sim.thermalStepS': 1e-5 });
    const { res } = run(sc, { shouldStop: () => ++polls >= 2 });
    expect(res.status).toBe('interrupted');
    expect(res.causeCode).toBe('interrupted');
    expect(res.tEndS).toBeGreaterThan(0.05);
    expect(res.tEndS).toBeLessThan(0.1);
    expect(res.records.length).toBeGreaterThan(0);
    expect(res.records[res.records.length - 1].tS).toBe(res.tEndS);
  });

  it('advancing in arbitrary chunks gives exactly the one-go run (chunks never split an iteration)', () => {
    const sc = buckScenario(STEPS);
    const whole = simulate(buildSystem(sc));
    const sim = new Simulation(buildSystem(sc));
    for (const t of [0.00123, 0.0031, 0.0031, 0.0099, 0.015]) sim.advanceUntil(t);
    sim.advanceUntil(sim.tEndS);
    const chunked = sim.finish();
    expect(chunked.records).toEqual(whole.records);
    expect(chunked.energiesJ).toEqual(whole.energiesJ);
  });

  it('bare control samples run inside an iteration give exactly the iteration-by-iteration run', () => {
    // Pieces of a third of the 10 µs sample period stop the run after every sample, so each
    // sample goes through a full iteration; in one go, samples between events run inside one.
    const sc = buckScenario(STEPS);
    const whole = new Simulation(buildSystem(sc));
    whole.advanceUntil(whole.tEndS);
    const one = whole.finish();
    const sim = new Simulation(buildSystem(sc));
    const piece = 1e-5 / 3;
    for (let k = 1; k * piece < sim.tEndS; k++) sim.advanceUntil(k * piece);
    sim.advanceUntil(sim.tEndS);
    const step = sim.finish();
    expect(one.stats.samples).toBeGreaterThan(500);
    expect(step.records).toEqual(one.records);
    expect(step.energiesJ).toEqual(one.energiesJ);
    expect(step.stats).toEqual(one.stats);
  });

  it('yielding whenever asked gives exactly the one-go run, the status staying ok', () => {
    // A thermal step every 10 µs: enough iterations for the yield poll (every 256) to come round.
    const sc = buckScenario({ ...STEPS, 'sim.thermalStepS': 1e-5 });
    const whole = simulate(buildSystem(sc));
    const sim = new Simulation(buildSystem(sc));
    let calls = 0;
    let polls = 0;
    while (!sim.done) {
      calls++;
      expect(sim.advanceUntil(sim.tEndS, () => ++polls > 0)).toBe('ok');
    }
    const yielded = sim.finish();
    expect(calls).toBeGreaterThan(5);
    expect(calls).toBe(polls + 1);
    expect(yielded.records).toEqual(whole.records);
    expect(yielded.energiesJ).toEqual(whole.energiesJ);
  });
});

describe('live inputs', () => {
  it('a live session replays line for line as a scenario with the same steps (holds included)', () => {
    const base = { 'sim.durationS': 0.5, 'sim.recordIntervalS': 0.005, 'sim.thermalStepS': 0.001 };
    const live = new Simulation(buildSystem(buckScenario(base)));
    const commands = [
      [0.0523, 'heatDemandW', 30],
      [0.1011, 'loadROhm', 0.8],
      [0.2017, 'fswHz', 200e3],
      [0.3, 'inletC', 30],
      [0.41, 'controlKp', 0.003],
    ] as const;
    const patch: Record<string, unknown> = {};
    for (const [tS, name, value] of commands) {
      live.advanceUntil(tS);
      patch[`profiles.${name}`] = { step: [[live.t, value]] };
      live.setInput(name, value);
    }
    live.advanceUntil(live.tEndS);
    const session = live.finish();
    const replay = simulate(buildSystem(buckScenario({ ...base, ...patch })));
    expect(session.stats.holds).toBeGreaterThan(3); // commands arrive while the engine holds
    expect(replay.records).toEqual(session.records);
  });
});

describe('settled stretches', () => {
  it('held stretches keep the losses on the steady state of the present temperatures through a warm-up', () => {
    // A 3-minute warm-up on an inlet ramp with an fsw step: once the loop settles the engine holds
    // the electrical state and evaluates the leg only when a junction has moved 0.25 K, with the
    // losses linear in Tj in between. Check every record against the operating point at its
    // temperatures. The record's mean spans 0.1 s in which Tj moves ≤ 0.03 K, and the loss moves
    // ~0.5 %/K (Rds,on tempco): ≤ 1e-4 between mean and end point; stated 2e-4.
    const sc = buckScenario({
      'sim.durationS': 180,
      'sim.recordIntervalS': 0.1,
      'sim.thermalStepS': 0.01,
      'profiles.inletC': { ramp: [[0, -10], [180, 40]] },
      'profiles.fswHz': { step: [[60, 300e3]] },
    });
    const { sys, res } = run(sc);
    expect(res.status).toBe('ok');
    expect(res.stats.skippedS).toBeGreaterThan(0.99 * 180);
    expect(res.stats.holds).toBeGreaterThan(10);
    const e = res.energiesJ;
    expectClose(e.pin, e.pout + e.hs + e.ls + e.passive + e.gateDriver + e.store, { rel: 1e-9, what: 'electrical energy balance (J)' });
    // Every 5 s, leaving out the record that closes the interval with the fsw step at 60 s.
    for (const r of res.records.filter((x, i) => i % 50 === 49 && Math.abs(x.tS - 60) > 0.05)) {
      const ep = electricalPoint(sys.plant, { ...sys.plant.knobs, fswHz: r.fswHz }, r.tjHsC, r.tjLsC);
      expectClose(r.hsLossW, ep.leg.hs.totalW, { rel: 2e-4, what: `high-side loss at ${r.tS.toFixed(1)} s` });
      expectClose(r.totalLossW, ep.totalLossW, { rel: 2e-4, what: `total loss at ${r.tS.toFixed(1)} s` });
      expectClose(r.yMeasured, 12, { abs: 2e-3, what: `output at ${r.tS.toFixed(1)} s` });
    }
  });
});

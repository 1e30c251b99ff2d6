/**
 * Small-signal predictions against the time-domain engine (src/sim/engine.ts), which integrates
 * the same averaged model with the sampled PI, delay line and PWM hold. Excitations are small so
 * the linearization holds; the engine starts at the coolant inlet temperature, so the margins are
 * taken at that junction temperature.
 */
import { describe, expect, it } from 'vitest';
import { closedLoopStepResponse, windowMeans } from '../../src/analysis/linearResponse.ts';
import { evaluateLoop, linearPoint, marginContext } from '../../src/analysis/marginContext.ts';
import { marginsAt } from '../../src/analysis/margins.ts';
import { withOverrides } from '../../src/scenario/parse.ts';
import type { SimRecord } from '../../src/sim/engine.ts';
import { simulate } from '../../src/sim/engine.ts';
import { buildSystem } from '../../src/sim/system.ts';
import { expectClose } from '../helpers/expectClose.ts';
import { caseScenario, halfBridgeLoop } from './fixtures.ts';

/** Local maxima of y above its mean after tFromS: (time, height above the mean). */
function peaks(recs: readonly SimRecord[], tFromS: number): Array<{ tS: number; a: number }> {
  const r = recs.filter((x) => x.tS > tFromS);
  const y = r.map((x) => x.yMeasured);
  const mean = y.reduce((a, b) => a + b, 0) / y.length;
  const out: Array<{ tS: number; a: number }> = [];
  for (let i = 1; i < y.length - 1; i++) if (y[i] > y[i - 1] && y[i] >= y[i + 1] && y[i] > mean) out.push({ tS: r[i].tS, a: y[i] - mean });
  return out;
}

/** Peak-to-peak of y over (a, b]. */
function pp(recs: readonly SimRecord[], a: number, b: number): number {
  const v = recs.filter((x) => x.tS > a && x.tS <= b).map((x) => x.yMeasured);
  return Math.max(...v) - Math.min(...v);
}

describe('time-domain cross-check: gain margin', () => {
  // DESIGN.md §3.5: scaling the loop gain by the predicted gain margin makes the closed loop oscillate.
  const demo = caseScenario('buck-aux-48v');
  const tjC = demo.thermal.coolant.inletC;
  const m = marginsAt(demo, { tjHsC: tjC, tjLsC: tjC }).bases.continuous;
  const k = 10 ** (m.gmDb / 20);
  const run = (scale: number) =>
    simulate(
      buildSystem(
        withOverrides(demo, {
          'control.kp': demo.control!.kp * scale,
          'control.ki': demo.control!.ki * scale,
          // A 0.1 % load step at 2 ms excites the loop; small, so the linearization holds.
          'profiles.loadROhm': { step: [[0.002, 0.4805]] },
          'sim.durationS': 0.012,
          'sim.recordIntervalS': 1e-5,
        }),
      ),
    );

  it('at kp, ki × GM the oscillation is sustained (±10 % over ~30 periods) at the phase-crossover frequency (±10 %)', () => {
    const r = run(k);
    expect(r.status).toBe('ok');
    // From 1.5 ms after the step (the other modes have decayed) to the end: ~30 periods at 3.57 kHz.
    const p = peaks(r.records, 0.0035);
    expect(p.length).toBeGreaterThan(25);
    const first = (p[0].a + p[1].a + p[2].a) / 3;
    const last = (p[p.length - 1].a + p[p.length - 2].a + p[p.length - 3].a) / 3;
    expectClose(last / first, 1, { abs: 0.1, what: 'amplitude ratio over the run' });
    const fOsc = (p.length - 1) / (p[p.length - 1].tS - p[0].tS);
    expectClose(fOsc, m.phaseCrossoverHz, { rel: 0.1, what: 'oscillation frequency vs phase crossover' });
  });

  it('10 % below the critical gain the oscillation decays, 10 % above it grows', () => {
    const decays = peaks(run(0.9 * k).records, 0.0035);
    const grows = peaks(run(1.1 * k).records, 0.0035);
    expect(decays[decays.length - 1].a / decays[0].a).toBeLessThan(0.5);
    expect(grows[grows.length - 1].a / grows[0].a).toBeGreaterThan(2);
  });
});

describe('time-domain cross-check: step responses against the linear closed loop', () => {
  it('half-bridge current loop: reference step overshoot matches the linear prediction', () => {
    const hb = halfBridgeLoop();
    const ctx = marginContext(hb);
    const lp = linearPoint(ctx, { tjHsC: 25, tjLsC: 25 });
    const ev = evaluateLoop(ctx, lp, 'continuous');
    const size = 0.1; // 4 → 4.1 A
    const lin = closedLoopStepResponse(ev.loop, { input: 'reference', size, durationS: 0.004 });
    const linMeans = windowMeans(lin.tS, lin.y, 1e-5);
    const sim = simulate(buildSystem(withOverrides(hb, { 'profiles.iRefA': { step: [[0, 4], [0.002, 4 + size]] }, 'sim.durationS': 0.006 })));
    expect(sim.status).toBe('ok');
    const before = sim.records.filter((x) => x.tS > 0.0018 && x.tS <= 0.002 + 1e-9).map((x) => x.yMeasured);
    const y0 = before.reduce((a, b) => a + b, 0) / before.length;
    // Record k after the step is the mean over [tStep + k·Ts, tStep + (k+1)·Ts): the linear window k.
    const simDev = sim.records.filter((x) => x.tS > 0.002 + 1e-9).map((x) => x.yMeasured - y0);
    const linPeak = Math.max(...linMeans);
    const simPeak = Math.max(...simDev);
    expect(linPeak / size - 1).toBeGreaterThan(0.05); // a visible overshoot (≈ 9 %)
    // Observed: 9.110 % vs 9.113 %. Allowed: linearization error of a 2.5 % step and the thermal
    // drift of the run, 2 % of the overshoot.
    expectClose(simPeak / size - 1, linPeak / size - 1, { rel: 0.02, what: 'overshoot (fraction)' });
    const n = Math.min(linMeans.length, simDev.length, 300);
    for (let i = 0; i < n; i++) expectClose(simDev[i], linMeans[i], { abs: 0.01 * size, what: `deviation in window ${i}` });
  });

  it('buck voltage loop: the output dip after a small load step matches the linear prediction', () => {
    const demo = caseScenario('buck-aux-48v');
    const tjC = demo.thermal.coolant.inletC;
    const ctx = marginContext(demo);
    const lp = linearPoint(ctx, { tjHsC: tjC, tjLsC: tjC }, ['loadROhm']);
    const ev = evaluateLoop(ctx, lp, 'continuous');
    const dR = -0.001; // 0.48 → 0.479 Ω: 0.2 % more load current
    const lin = closedLoopStepResponse(ev.loop, { input: 'loadROhm', size: dR, durationS: 0.008 });
    const linMeans = windowMeans(lin.tS, lin.y, 1e-5);
    const sim = simulate(buildSystem(withOverrides(demo, { 'profiles.loadROhm': { step: [[0.002, 0.48 + dR]] }, 'sim.durationS': 0.01, 'sim.recordIntervalS': 1e-5 })));
    const before = sim.records.filter((x) => x.tS > 0.0018 && x.tS <= 0.002 + 1e-9).map((x) => x.yMeasured);
    const y0 = before.reduce((a, b) => a + b, 0) / before.length;
    const simDev = sim.records.filter((x) => x.tS > 0.002 + 1e-9).map((x) => x.yMeasured - y0);
    const linDip = Math.min(...linMeans);
    const simDip = Math.min(...simDev);
    expect(linDip).toBeLessThan(-1e-3);
    // Observed agreement 0.03 % (dip) and 0.4 % (overshoot); allowed: second-order terms of a 0.2 %
    // step plus the junctions warming by ~0.5 K during the run, 0.5 % and 2 %.
    expectClose(simDip, linDip, { rel: 0.005, what: 'peak output deviation (V)' });
    // And the recovery overshoot after the dip (integral action pulls the output back past zero).
    expectClose(Math.max(...simDev), Math.max(...linMeans), { rel: 0.02, what: 'recovery overshoot (V)' });
  });
});

describe('per-sample gains: margin lost with fsw, seen in the engine', () => {
  const ps = caseScenario('buck-persample-unstable');
  const tjC = ps.thermal.coolant.inletC;
  const stepTo = (fswHz: number) => simulate(buildSystem(withOverrides(ps, { 'profiles.fswHz': { step: [[0.002, fswHz]] }, 'sim.durationS': 0.009, 'sim.recordIntervalS': 1e-5 })));

  it('230 kHz (PM > 0): the engine decays at the rate of the slowest closed-loop pole; 260 kHz (PM < 0): it grows at the predicted rate', () => {
    for (const [fswHz, stable] of [[230e3, true], [260e3, false]] as const) {
      const b = marginsAt(ps, { fswHz, tjHsC: tjC, tjLsC: tjC }).bases.perSample;
      expect(b.stable).toBe(stable);
      expect(b.pmDeg > 0).toBe(stable);
      const sigmaLin = Math.log(b.maxPoleAbs) * fswHz; // per second; Ts = 1/fsw
      const r = stepTo(fswHz);
      // Envelope from the peak-to-peak in two 1 ms windows 3 ms apart, after the step transient.
      const sigmaSim = Math.log(pp(r.records, 0.007, 0.008) / pp(r.records, 0.004, 0.005)) / 0.003;
      // The envelope of a lightly damped pair read from 1 ms windows: within 5 % of the rate.
      expectClose(sigmaSim, sigmaLin, { rel: 0.05, what: `envelope rate at ${fswHz} Hz (1/s)` });
    }
  });
});

/**
 * Thermal network through the engine against analytic references. Losses are made independent
 * of temperature (all temperature coefficients 0), so each device injects a constant power from
 * t = 0 (the run starts at the electrical steady state) and the network sees a true step.
 * The engine's thermal update is the exact zero-order-hold discretization, exact for a loss held
 * constant over each step, so these references hold to rounding, whatever the step length.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { expectClose } from '../helpers/expectClose.ts';
import { NO_TEMPCO, bothDevices, buckScenario, run } from './helpers.ts';

/** A device thermal path: junction–case ladder plus a negligible case–sink interface (1 nK/W). */
const cauerPath = (rKPerW: number[], cJPerK: number[]) => ({ junctionCase: { kind: 'cauer', rKPerW, cJPerK }, caseSinkKPerW: 1e-9 });
const fosterPath = (rKPerW: number[], tauS: number[]) => ({ junctionCase: { kind: 'foster', rKPerW, tauS }, caseSinkKPerW: 1e-9 });

/** The demo buck with constant losses and the heatsink held at the inlet temperature (1 GJ/K). */
function heldSinkScenario(devicePath: object, extra: Record<string, unknown> = {}) {
  return buckScenario({
    ...bothDevices('ld-si100-3m', NO_TEMPCO),
    'thermal.devices.highSide': devicePath,
    'thermal.devices.lowSide': devicePath,
    'thermal.heatsink.cthJPerK': 1e9,
    ...extra,
  });
}

describe('junction stage: single-stage Cauer RC step through the engine', () => {
  // Textbook first-order RC step response, ΔT(t) = P·R·(1 − e^(−t/τ)), τ = R·C (e.g. Incropera,
  // Fundamentals of Heat and Mass Transfer, lumped capacitance; any circuits text for the RC step).
  // The case–sink interface (1e-9 K/W) adds to R and to τ at the 1e-9 level.
  it('junction rise over the held sink follows P·R·(1 − e^(−t/τ)) over five time constants', () => {
    const rKPerW = 0.5;
    const cJPerK = 2; // τ = 1 s
    const { res } = run(heldSinkScenario(cauerPath([rKPerW], [cJPerK]), { 'sim.durationS': 5, 'sim.recordIntervalS': 0.1, 'sim.thermalStepS': 0.01 }));
    expect(res.status).toBe('ok');
    expect(res.records).toHaveLength(50);
    const tau = rKPerW * cJPerK;
    for (const r of res.records) {
      const expected = r.hsLossW * rKPerW * -Math.expm1(-r.tS / tau);
      // Exact ZOH for a constant loss: agreement to rounding (1e-9 relative of the final rise,
      // far below the 1e-6 used), at every record from 0.1 s to 5 s.
      expectClose(r.tjHsC - r.heatsinkC, expected, { rel: 1e-6, abs: 1e-9, what: `high-side rise at ${r.tS.toFixed(1)} s` });
      expectClose(r.tjLsC - r.heatsinkC, r.lsLossW * rKPerW * -Math.expm1(-r.tS / tau), { rel: 1e-6, abs: 1e-9, what: `low-side rise at ${r.tS.toFixed(1)} s` });
    }
    // The loss really was constant (the premise of the reference).
    const losses = res.records.map((r) => r.hsLossW);
    expectClose(Math.min(...losses), Math.max(...losses), { rel: 1e-12, what: 'high-side loss spread' });
  });
});

describe('heatsink stage: RC step of the cold plate into the coolant stream', () => {
  // One lumped heatsink C behind R_sink-coolant in series with the stream resistance 1/(ṁ·cp)
  // (the well-mixed coolant node made negligible: 1 µg of fluid). Heat delivered to the coolant,
  // ṁ·cp·(T_coolant − T_inlet), then rises as P·(1 − e^(−t/τ)) with τ = C·(R + 1/(ṁ·cp))
  // (lumped-capacitance step response; heat-exchanger stream conductance ṁ·cp, Incropera ch. 11).
  it('heat to coolant follows P·(1 − e^(−t/τ)) and its integral P·(t − τ·(1 − e^(−t/τ)))', () => {
    const cSink = 400;
    const rSc = 0.05;
    const flow = 0.1;
    const cp = 3400;
    const sc = buckScenario({
      ...bothDevices('ld-si100-3m', NO_TEMPCO),
      'thermal.devices.highSide': cauerPath([1e-3], [1e-6]),
      'thermal.devices.lowSide': cauerPath([1e-3], [1e-6]),
      'thermal.heatsink': { cthJPerK: cSink, rSinkCoolantKPerW: rSc, rSinkAmbientKPerW: 1e12 },
      'thermal.coolant': { inletC: 10, flowKgPerS: flow, cpJPerKgK: cp, massKg: 1e-9 },
      'thermal.passiveToPlateFraction': 0,
      'sim.durationS': 60,
      'sim.recordIntervalS': 1,
      'sim.thermalStepS': 0.01,
    });
    const { res } = run(sc);
    expect(res.status).toBe('ok');
    const tau = cSink * (rSc + 1 / (flow * cp)); // 21.18 s
    const p = res.records[0].semiLossW; // all heat at the plate comes from the two devices
    for (const r of res.records) {
      // The coolant node (τ ≈ 9 ns) and junction stages (τ ≈ 1 ns) shift the curve by ~1e-8 s,
      // i.e. < 1e-8 of its value at 1 s; 1e-6 relative covers that and rounding.
      expectClose(r.heatToCoolantW, p * -Math.expm1(-r.tS / tau), { rel: 1e-6, abs: 1e-9, what: `heat to coolant at ${r.tS} s` });
    }
    const tEnd = res.tEndS;
    // Trapezoid over 0.01 s steps of a curve with τ = 21 s: error ~ (dt/τ)²/12 ≈ 2e-8 relative.
    expectClose(res.energiesJ.coolant, p * (tEnd + tau * Math.expm1(-tEnd / tau)), { rel: 1e-6, what: 'heat delivered to the coolant (J)' });
  });
});

describe('Foster junction–case network through the engine', () => {
  // ../shared/REFERENCES.md, Thermal: Foster R [0.2, 0.3] K/W, τ [1 ms, 100 ms] →
  // Zth(1/10/100 ms) = 0.12941/0.22854/0.38964 K/W (derived from Zth(t) = Σ Ri(1 − e^(−t/τi)),
  // Infineon AN2008-03 "Thermal equivalent circuit models"; re-derived: 0.129409, 0.228540, 0.389636).
  // The engine converts the Foster network to its Cauer equivalent before chaining it onto the
  // (held) heatsink, so the junction rise must equal P·Zth(t).
  it.each([
    [0.001, 0.129409],
    [0.01, 0.22854],
    [0.1, 0.389636],
  ])('junction rise at %s s equals P·Zth(t) with Zth = %s K/W', (tS, zth) => {
    const { res } = run(heldSinkScenario(fosterPath([0.2, 0.3], [0.001, 0.1]), { 'sim.durationS': 0.1, 'sim.recordIntervalS': 0.001, 'sim.thermalStepS': 1e-4 }));
    const r = res.records.find((x) => Math.abs(x.tS - tS) < 1e-9);
    expect(r, `a record at ${tS} s`).toBeDefined();
    // The reference values carry 5–6 significant digits: compare to 2e-5 relative. The engine
    // itself (exact ZOH, exact-rational Foster→Cauer) matches the unrounded formula far closer,
    // checked just below.
    expectClose((r!.tjHsC - r!.heatsinkC) / r!.hsLossW, zth, { rel: 2e-5, what: `Zth(${tS} s)` });
    const exact = 0.2 * -Math.expm1(-tS / 0.001) + 0.3 * -Math.expm1(-tS / 0.1);
    expectClose((r!.tjLsC - r!.heatsinkC) / r!.lsLossW, exact, { rel: 1e-8, what: `low-side Zth(${tS} s), unrounded formula` });
  });
});

describe('heat-up with a constant operating point', () => {
  // Property: from a uniform cold start, a thermal network (a positive linear system driven by
  // non-negative losses that only grow with temperature here) warms monotonically, so the heat
  // delivered to the coolant never decreases; and more loss gives more heat at every record.
  it('heat to coolant is non-decreasing in time, and larger for the higher-loss setting', () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 30, max: 100 }).map((k) => k / 100), // load resistance 0.3…1 Ω
        fc.integer({ min: 5, max: 40 }).map((k) => k * 10e3), // fsw 50…400 kHz
        (loadROhm, fswHz) => {
          const patch = { 'buck.load': { rOhm: loadROhm }, 'sim.durationS': 20, 'sim.recordIntervalS': 0.5, 'sim.thermalStepS': 0.01 };
          const lo = run(buckScenario({ ...patch, 'pwm.fswHz': fswHz })).res;
          const hi = run(buckScenario({ ...patch, 'pwm.fswHz': fswHz * 1.5 })).res;
          for (const res of [lo, hi]) {
            expect(res.status).toBe('ok');
            for (let i = 1; i < res.records.length; i++) expect(res.records[i].heatToCoolantW).toBeGreaterThanOrEqual(res.records[i - 1].heatToCoolantW - 1e-12);
          }
          // Switching loss grows with fsw (REFERENCES.md, facts of the trade); so does the heat.
          for (let i = 0; i < lo.records.length; i++) {
            expect(hi.records[i].totalLossW).toBeGreaterThan(lo.records[i].totalLossW);
            expect(hi.records[i].heatToCoolantW).toBeGreaterThan(lo.records[i].heatToCoolantW);
          }
        },
      ),
      { numRuns: 4, seed: 20261201 },
    );
  });
});

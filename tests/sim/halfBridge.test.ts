/**
 * The half-bridge leg case (cases/leg-standstill-400v.yaml) through the engine: the dead-time
 * error's sign and size, sinusoidal current tracking, and the steady state against the
 * operating point.
 */
import { describe, expect, it } from 'vitest';
import { channelDropV, diodeDropV } from '../../src/model/device.ts';
import { electricalPoint } from '../../src/model/electrical.ts';
import { expectClose } from '../helpers/expectClose.ts';
import { legScenario, run } from './helpers.ts';

/** Junctions held at the 25 °C inlet: negligible thermal resistances, 1 GJ/K plate. */
const FROZEN_THERMAL = {
  'thermal.devices.highSide': { junctionCase: { kind: 'cauer', rKPerW: [1e-6], cJPerK: [1e-6] }, caseSinkKPerW: 1e-6 },
  'thermal.devices.lowSide': { junctionCase: { kind: 'cauer', rKPerW: [1e-6], cJPerK: [1e-6] }, caseSinkKPerW: 1e-6 },
  'thermal.heatsink.cthJPerK': 1e9,
  'sim.durationS': 0.03,
};

function settled(iA: number, deadTimeS: number) {
  const { sys, res } = run(legScenario({ ...FROZEN_THERMAL, 'halfBridge.reference': { kind: 'dc', iA }, 'pwm.deadTimeS': deadTimeS }));
  expect(res.status).toBe('ok');
  const last = res.records[res.records.length - 1];
  const ep = electricalPoint(sys.plant, sys.plant.knobs, last.tjHsC, last.tjLsC);
  return { sys, last, ep };
}

describe('dead-time error of the half-bridge (Jeong & Park, IEEE TIE 38(2), 1991)', () => {
  // Jeong & Park: the dead time shifts the average pole voltage by ΔV ≈ −sign(i)·Vdc·t_d·fsw,
  // so the current loop's steady duty moves by +sign(i)·t_d·fsw to hold the same current. We
  // compare two dead times (300 and 150 ns, the same current and temperatures), so everything
  // but the dead time cancels; t_d is the effective gap after driver delays, from the leg model
  // (rising edge for i > 0, falling edge for i < 0), Δt_d ≈ 150 ns → |ΔD| ≈ 150 ns·20 kHz = 0.003.
  // Their first-order form leaves out that during each gap the node sits a body-diode drop Vf
  // beyond the rail instead of the conducting channel's drop: two edges per period add
  // 2·(Vf − V_channel)/Vdc ≈ 2·(3.6 − 0.9)/400 ≈ 1.3 % (derived). We check the sign exactly, the
  // Jeong & Park magnitude within 2 %, and the refined magnitude within 0.1 %.
  it.each([20, -20])('current %s A: duty shift has the sign of the current and the size gap·fsw', (iA) => {
    const a = settled(iA, 300e-9);
    const b = settled(iA, 150e-9);
    expectClose(a.last.yMeasured, iA, { abs: 1e-4, what: 'regulated current (A)' });
    const fsw = 20e3;
    const gap = (r: typeof a): number => (iA > 0 ? r.ep.leg.gapRiseS : r.ep.leg.gapFallS);
    const dGapS = gap(a) - gap(b);
    expectClose(dGapS, 150e-9, { rel: 0.01, what: 'effective gap difference (s)' });
    const dDuty = a.last.duty - b.last.duty;
    expect(Math.sign(dDuty)).toBe(Math.sign(iA));
    const jeongPark = Math.sign(iA) * dGapS * fsw;
    expectClose(dDuty, jeongPark, { rel: 0.02, what: 'duty shift vs Jeong & Park sign(i)·Δt_d·fsw' });
    const dev = a.sys.plant.leg.hs;
    const mag = Math.abs(iA);
    const vDiode = diodeDropV(dev, mag, a.last.tjHsC);
    const vChannel = channelDropV(dev, mag, a.sys.plant.knobs.vDriveV, a.last.tjHsC, 400);
    const refined = jeongPark * (1 + (2 * (vDiode - vChannel)) / a.ep.vBusV);
    expectClose(dDuty, refined, { rel: 1e-3, what: 'duty shift vs the refined form (diode vs channel drop in the gaps)' });
  });
});

describe('current loop', () => {
  it('tracks a 20 A, 50 Hz sinusoidal reference within 6 % of the amplitude after the first cycle', () => {
    // PI with ≈ 1 kHz crossover and its zero near 110 Hz (case file): loop gain ≈ 20–50 at 50 Hz,
    // so |1/(1+L)| is a few percent; the one-sample delay and the PWM hold add lag. Observed
    // 4.1 % (0.83 A) at the control samples; stated 6 %. The zero crossings exercise the ripple
    // smoothing near i = 0 (the auto engine hands those stretches to odex).
    const { res } = run(legScenario({ 'halfBridge.reference': { kind: 'sine', amplitudeA: 20, freqHz: 50 }, 'sim.durationS': 0.045, 'sim.recordIntervalS': 5e-4 }));
    expect(res.status).toBe('ok');
    const late = res.records.filter((r) => r.tS > 0.02);
    expect(Math.max(...late.map((r) => r.yDevMax))).toBeLessThan(0.06 * 20);
    expect(Math.max(...late.map((r) => r.yMeasured))).toBeGreaterThan(19);
    expect(Math.min(...late.map((r) => r.yMeasured))).toBeLessThan(-19);
  });

  it('DC steady state equals the operating point (duty and losses) at the same temperatures', () => {
    const { last, ep } = settled(20, 300e-9);
    // The DC-link fixed point in the operating point stops at 1e-9 relative; observed 1e-8 (duty)
    // and 2e-7 (losses) relative.
    expectClose(last.duty, ep.duty, { abs: 1e-7, what: 'duty' });
    expectClose(last.hsLossW, ep.leg.hs.totalW, { rel: 1e-6, what: 'high-side loss' });
    expectClose(last.lsLossW, ep.leg.ls.totalW, { rel: 1e-6, what: 'low-side loss' });
    expectClose(last.pinW, ep.pinW, { rel: 1e-6, what: 'input power' });
  });
});

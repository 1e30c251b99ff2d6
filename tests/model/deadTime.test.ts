/**
 * Dead-time voltage error and shoot-through of a half-bridge leg (src/model/leg.ts).
 *
 * Jeong & Park, "The Analysis and Compensation of Dead-Time Effects in PWM Inverters", IEEE TIE
 * 38(2), 1991: the average leg voltage loses ΔV ≈ −sign(i)·Vdc·t_d·fsw, where t_d is the
 * effective dead time (set dead time + turn-on delay − turn-off delay). REFERENCES.md example:
 * 400 V, 1 µs, 10 kHz → 4.0 V (derived). Our leg reports the effective gaps it used
 * (gapRiseS/gapFallS: dead time + incoming turn-on delay − outgoing turn-off delay), so the
 * check is made against those and the remaining terms are bounded explicitly.
 */
import { describe, expect, it } from 'vitest';
import { channelDropV, diodeDropV, newSwitchTiming, saturationCurrentA, switchTiming } from '../../src/model/device.ts';
import type { LegInput, LegResult } from '../../src/model/leg.ts';
import { expectClose } from '../helpers/expectClose.ts';
import { leg, legParams, part, plainGate } from './fixtures.ts';

const VDC = 400;
const FSW = 10e3;
const sic = part('ld-sic650-45m');
const gate = { ...plainGate, vDriveV: 18 };
const sicLeg = legParams(sic, sic, { gate, commutationLoopH: 20e-9 });

/** Half-bridge leg at D = 0.5; 0.5 H keeps the ripple at ~0.02 A, so both edges see sign(i). */
function jp(iA: number, deadTimeS: number, lH = 0.5): LegResult {
  const x: LegInput = { vBusV: VDC, iMeanA: iA, vFarV: VDC / 2, lH, duty: 0.5, fswHz: FSW, deadTimeS, vDriveV: 18, tjHsC: 25, tjLsC: 25 };
  return leg(sicLeg, x);
}

const errorV = (r: LegResult): number => r.vNodeMeanV - 0.5 * VDC;

describe('dead-time voltage error (Jeong & Park, IEEE TIE 38(2), 1991)', () => {
  for (const i of [10, -10]) {
    it(`loses sign(i)·Vdc·gap·fsw of average voltage at i = ${i} A, gap = 1 µs + driver delays`, () => {
      const r = jp(i, 1e-6);
      const s = Math.sign(i);
      // The gap that sets the error is the one before the hard edge: rise for i > 0, fall for i < 0.
      const gap = s > 0 ? r.gapRiseS : r.gapFallS;
      // Effective gap: 1 µs + t_d,on (1.9 ns) − t_d,off (12 ns) ≈ 0.990 µs, so −3.96 V rather than
      // the nominal −4.0 V of zero-delay switches (J&P's Ton − Toff term).
      expectClose(gap, 1e-6 - 10.06e-9, { abs: 0.1e-9, what: 'effective gap' });
      // What J&P neglect, bounded one by one: the conduction drop (the node sits v_ch below the
      // ideal level whichever device conducts), the body-diode drop during both gaps, and the
      // half-area of the voltage transition at the soft edge (max(Coss·V/|i|, t_vr)).
      const vch = channelDropV(sic, Math.abs(i), 18, 25, VDC);
      const vf = diodeDropV(sic, Math.abs(i), 25);
      const tvr = switchTiming(sic, gate, 18, VDC, Math.abs(i), 25, newSwitchTiming()).tRiseVoltageS;
      const tSwing = Math.max((2 * sic.cossF * VDC) / Math.abs(i), tvr);
      const budgetV = 2 * vf * gap * FSW + 0.5 * VDC * tSwing * FSW;
      expect(budgetV).toBeLessThan(0.03 * 4); // the neglected terms are < 3 % of the effect
      expectClose(errorV(r) + s * vch, -s * VDC * gap * FSW, { abs: budgetV, what: 'ΔV + conduction drop' });
      expectClose(-s * VDC * gap * FSW, -s * 4.0, { rel: 0.011, what: 'vs nominal 4.0 V' });
    });
  }

  it('grows with the dead time at −sign(i)·(Vdc + 2·Vf − 2·v_ch)·fsw per second of gap', () => {
    // Differencing two dead times removes the conduction drop and the transitions; the body
    // diode adds its drop (the node goes Vf beyond the rail during the gap): J&P's slope Vdc·fsw
    // plus 1.7 %. Derived from the node's volt-seconds; rel 1e-5 covers Vf and v_ch evaluated at
    // the mean rather than the edge currents (ripple 0.02 A).
    for (const i of [10, -10]) {
      const a = jp(i, 1e-6);
      const b = jp(i, 0.5e-6);
      const vch = channelDropV(sic, 10, 18, 25, VDC);
      const vf = diodeDropV(sic, 10, 25);
      const dHard = i > 0 ? a.gapRiseS - b.gapRiseS : a.gapFallS - b.gapFallS;
      const dSoft = i > 0 ? a.gapFallS - b.gapFallS : a.gapRiseS - b.gapRiseS;
      const expected = -Math.sign(i) * FSW * (dHard * (VDC - vch + vf) + dSoft * (vf - vch));
      expectClose(errorV(a) - errorV(b), expected, { rel: 1e-5, what: `slope at ${i} A` });
      expectClose((errorV(a) - errorV(b)) / (-Math.sign(i) * VDC * 0.5e-6 * FSW), 1 + (2 * (vf - vch)) / VDC, { rel: 1e-5, what: 'vs J&P slope' });
    }
  });

  it('is odd in the current', () => {
    // Same part on both sides: the error mirrors exactly up to the ripple's rounding (rel 1e-6).
    expectClose(errorV(jp(-10, 1e-6)), -errorV(jp(10, 1e-6)), { rel: 1e-6, what: 'ΔV(−i)' });
  });

  it('vanishes at zero mean current when the ripple makes both edges soft (ripple smoothing)', () => {
    // 2.5 mH: ΔiL ≈ 3.9 A; peak > 0 > valley, the node swings on its own at both edges and
    // clamps on the diode of the device about to turn on, so no volt-seconds are lost.
    const r = jp(0, 1e-6, 2.5e-3);
    expect(r.iPeakA).toBeGreaterThan(1);
    expect(r.iValleyA).toBeLessThan(-1);
    expect(r.hs.turnOnW + r.ls.turnOnW).toBe(0);
    expect(Math.abs(errorV(r))).toBeLessThan(1e-9);
  });
});

describe('shoot-through (negative effective dead time)', () => {
  // Si part with a negligible Ciss so the driver delays vanish: the effective gap is
  // deadTime − skew = −5 ns at both edges; Lσ = 5 nH, 48 V (REFERENCES.md derived example).
  const si = { ...part('ld-si100-3m'), cissF: 1e-15 };
  const stLeg = legParams(si, si, { skewS: 5e-9, commutationLoopH: 5e-9 });
  const input = (vDriveV: number): LegInput => ({
    vBusV: 48, iMeanA: 1, vFarV: 12, lH: 1e-3, duty: 0.25, fswHz: 100e3, deadTimeS: 0, vDriveV, tjHsC: 25, tjLsC: 25,
  });
  const energyPerEventJ = (r: LegResult): number => (r.hs.shootThroughW + r.ls.shootThroughW) / 2 / 100e3;

  it('is limited by the loop inductance: i_pk = V·Δt/Lσ = 48 A, E = V²·Δt²/(2·Lσ) = 5.76 µJ per edge', () => {
    // Derived example; the femto-scale delays move Δt by ~6e-7 relative: rel 1e-5.
    const r = leg(stLeg, input(10));
    expect(r.shootThrough).toBe(true);
    expectClose(r.overlapS, 5e-9, { rel: 1e-5, what: 'overlap' });
    expectClose(r.shootPeakA, 48, { rel: 1e-5, what: 'i_pk' });
    expectClose(energyPerEventJ(r), 5.76e-6, { rel: 1e-5, what: 'E per event' });
    expectClose(energyPerEventJ(r), (48 ** 2 * r.overlapS ** 2) / (2 * 5e-9), { rel: 1e-5, what: 'E formula' });
  });

  it('is limited by channel saturation at low gate drive: ½·Lσ·Isat² + V·Isat·(Δt − Lσ·Isat/V)', () => {
    // 3.65 V drive: Isat = k/2·Vov² = 47.5·0.65² = 20.069 A < 48 A. The current ramps to Isat in
    // Lσ·Isat/V = 2.09 ns, then the bus stands across the saturated channels for the rest of the
    // overlap (derived 3.8096 µJ; a triangle ½·V·Isat·Δt would say 2.41 µJ).
    const r = leg(stLeg, input(3.65));
    const isat = saturationCurrentA(si, 3.65, 25);
    expect(isat).toBeLessThan(48);
    expectClose(r.shootPeakA, isat, { rel: 1e-12, what: 'i_pk' });
    const dt = r.overlapS;
    expectClose(energyPerEventJ(r), 0.5 * 5e-9 * isat ** 2 + 48 * isat * (dt - (5e-9 * isat) / 48), { rel: 1e-5, what: 'E' });
    expectClose(energyPerEventJ(r), 3.8096e-6, { rel: 1e-4, what: 'E derived' });
  });

  it('does not occur with a positive effective gap', () => {
    const r = leg(legParams(si, si, { commutationLoopH: 5e-9 }), { ...input(10), deadTimeS: 20e-9 });
    expect(r.shootThrough).toBe(false);
    expect(r.hs.shootThroughW + r.ls.shootThroughW).toBe(0);
  });
});

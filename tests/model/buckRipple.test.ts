/**
 * Buck converter in CCM with near-ideal switches reproduces the textbook ripple and RMS formulas
 * (Erickson & Maksimović, Fundamentals of Power Electronics, 2nd ed., Springer 2001, ch. 2 and 5;
 * Hart, Power Electronics, McGraw-Hill 2011, ch. 6). REFERENCES.md "Buck converter, CCM".
 *
 * Example (derived in REFERENCES.md from those formulas; re-derived here, all reproduce):
 * 48 V → 18 V, 10 Ω, 40 kHz, 100 µH, 100 µF: D 0.375, ΔiL 2.8125 A, ΔVo 87.89 mV,
 * I_L,rms 1.97463 A, I_Cout,rms 0.81190 A, L_min(CCM) 78.125 µH.
 *
 * Tolerance of the model comparisons: with the near-ideal switch the only residual
 * non-idealities are the channel (1/(k·Vov) = 1.25·10⁻⁷ Ω → < 4·10⁻⁷ V at 3.2 A) and the 1 mV
 * diode during the two ~1 ns gaps per 25 µs period (< 10⁻⁷ V mean). Both shift the node average
 * by < 3·10⁻⁸ of 18 V, so rel 1e-6 leaves a 30× margin. Printed values are checked against the
 * precision they are printed with.
 */
import { describe, expect, it } from 'vitest';
import { type ElectricalPoint, electricalPoint } from '../../src/model/electrical.ts';
import { buildPlant } from '../../src/model/plant.ts';
import { type Scenario, withOverrides } from '../../src/scenario/parse.ts';
import { expectClose } from '../helpers/expectClose.ts';
import { demoScenario } from './fixtures.ts';

const nearIdealPart = {
  part: 'ld-si100-3m',
  kAPerV2: 1e6,
  rSeries25Ohm: 0,
  rdsTempCoeffPerK: 0,
  cissF: 1e-15,
  qgdCoulomb: 1e-18,
  qgCoulomb: 1e-15,
  rGateIntOhm: 0,
  cossF: 1e-18,
  diodeVf25V: 1e-3,
  diodeROhm: 0,
  qrr25Coulomb: 0,
};

function textbookBuck(lH = 100e-6): Scenario {
  return withOverrides(demoScenario(), {
    'pwm.fswHz': 40e3,
    'pwm.deadTimeS': 1e-9,
    'devices.highSide': nearIdealPart,
    'devices.lowSide': nearIdealPart,
    'buck.vinV': 48,
    'buck.voutRefV': 18,
    'buck.inductor': { lH, dcr20Ohm: 0, tempC: 20 },
    'buck.outputCap': { cF: 100e-6, esrOhm: 0, rippleRatingA: 10 },
    'buck.inputCap': { cF: 100e-6, esrOhm: 0, rippleRatingA: 10 },
    'buck.load': { rOhm: 10 },
  });
}

function pointOf(s: Scenario): ElectricalPoint {
  const plant = buildPlant(s);
  return electricalPoint(plant, plant.knobs, 25, 25);
}

const D = 18 / 48;
const IO = 1.8;
const RIPPLE = ((48 - 18) * D) / (100e-6 * 40e3);

describe('buck CCM ripple and RMS currents with near-ideal switches', () => {
  const ep = pointOf(textbookBuck());

  it('regulates 18 V with the high side conducting D = Vo/Vin of the period', () => {
    // Erickson & Maksimović ch. 2: volt-second balance, D = Vo/Vin (derived: 0.375). Our duty
    // is the command, whose turn-on is delayed by the effective dead time (leg.ts timing
    // convention): the high side conducts D·T − gap, so D − gap·fsw is the textbook D.
    expect(ep.regulated).toBe(true);
    expectClose(ep.vOutV, 18, { rel: 1e-12, what: 'Vo' });
    expectClose(ep.leg.gapRiseS, 1e-9, { rel: 1e-3, what: 'gap ≈ set dead time (femto-scale driver delays)' });
    expectClose(ep.duty - ep.leg.gapRiseS * 40e3, 0.375, { rel: 1e-6, what: 'conducting fraction' });
  });

  it('has ΔiL = (Vin − Vo)·D/(L·fsw) = 2.8125 A', () => {
    // Erickson & Maksimović ch. 2; Hart 2011 §6.3. Derived 2.8125 A (exact in binary).
    expect(RIPPLE).toBe(2.8125);
    expectClose(ep.leg.ripplePpA, 2.8125, { rel: 1e-6, what: 'ΔiL' });
    expectClose(ep.leg.iPeakA, IO + RIPPLE / 2, { rel: 1e-6, what: 'peak' });
    expectClose(ep.leg.iValleyA, IO - RIPPLE / 2, { rel: 1e-5, what: 'valley' });
  });

  it('has ΔVo ≈ ΔiL/(8·C·fsw) = 87.89 mV with zero ESR', () => {
    // Hart 2011 §6.4 (capacitor charge of the triangular ripple). Derived 0.087890625 V;
    // printed 87.89 mV (abs 5e-6 V = half a unit in the last printed digit).
    expectClose(ep.vOutRipplePpV, 0.087890625, { rel: 1e-6, what: 'ΔVo' });
    expectClose(ep.vOutRipplePpV, 0.08789, { abs: 5e-6, what: 'ΔVo printed' });
  });

  it('has I_L,rms = sqrt(Io² + ΔiL²/12) = 1.97463 A and I_Cout,rms = ΔiL/(2√3) = 0.81190 A', () => {
    // Erickson & Maksimović ch. 5 (RMS of DC plus triangle). Printed to 6 significant digits:
    // abs 5e-6 A; the model itself to rel 1e-6 of the exact formula.
    expectClose(Math.sqrt(ep.leg.iMsA2), Math.sqrt(IO ** 2 + RIPPLE ** 2 / 12), { rel: 1e-6, what: 'I_L,rms' });
    expectClose(Math.sqrt(ep.leg.iMsA2), 1.97463, { abs: 5e-6, what: 'I_L,rms printed' });
    expectClose(ep.capOut.rmsA, RIPPLE / (2 * Math.sqrt(3)), { rel: 1e-6, what: 'I_Cout,rms' });
    expectClose(ep.capOut.rmsA, 0.8119, { abs: 5e-6, what: 'I_Cout,rms printed' });
  });

  it('has I_Cin,rms = sqrt(D(1−D)·Io² + D·ΔiL²/12), which tends to Io·sqrt(D(1−D)) as the ripple vanishes', () => {
    // Hart 2011 §6.7 / Erickson & Maksimović ch. 5: the input capacitor carries the pulsed
    // high-side current minus its mean. REFERENCES.md gives the ripple-free form Io·sqrt(D(1−D))
    // = 0.87142 A; here ΔiL/Io = 1.56, so the ripple term lifts it to 1.00328 A (derived).
    expectClose(ep.capIn.rmsA, Math.sqrt(D * (1 - D) * IO ** 2 + (D * RIPPLE ** 2) / 12), { rel: 1e-6, what: 'I_Cin,rms' });
    expectClose(ep.capIn.rmsA, 1.003278, { abs: 1e-6, what: 'I_Cin,rms derived' });
    // 100 H: ΔiL ≈ 2.8 mA, its term is ~2e-6 of the total, so rel 1e-5.
    const smooth = pointOf(textbookBuck(100));
    expectClose(smooth.capIn.rmsA, IO * Math.sqrt(D * (1 - D)), { rel: 1e-5, what: 'I_Cin,rms ripple-free' });
  });

  it('leaves CCM at L_min = (1 − D)·R/(2·fsw) = 78.125 µH: the valley current crosses zero there', () => {
    // Erickson & Maksimović ch. 5 (CCM boundary ΔiL = 2·Io). ±1 % in L moves the valley by
    // ±18 mA, far beyond the model's ~1e-6 A residual.
    const lMin = ((1 - D) * 10) / (2 * 40e3);
    expectClose(lMin, 78.125e-6, { rel: 1e-12, what: 'L_min' });
    expect(pointOf(textbookBuck(1.01 * lMin)).leg.iValleyA).toBeGreaterThan(0.01);
    const below = pointOf(textbookBuck(0.99 * lMin));
    // A synchronous buck keeps conducting: the current reverses rather than going discontinuous.
    expect(below.leg.iValleyA).toBeLessThan(-0.01);
    expect(below.leg.dcm).toBe(false);
  });
});

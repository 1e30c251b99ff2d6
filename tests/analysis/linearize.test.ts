import { describe, expect, it } from 'vitest';
import { LinearizationError, linearizeAtPoint, linearizeAveraged, plantResponseAt, statesAt, inputsAt } from '../../src/analysis/linearize.ts';
import { linearPoint, marginContext } from '../../src/analysis/marginContext.ts';
import { electricalPoint } from '../../src/model/electrical.ts';
import { buildPlant } from '../../src/model/plant.ts';
import { withOverrides } from '../../src/scenario/parse.ts';
import { expectClose } from '../helpers/expectClose.ts';
import { caseScenario, halfBridgeLoop, textbookBuck } from './fixtures.ts';

/** G0, f0, Q and the ESR zero of a two-state linear plant, read from (A, B, C, D). */
function secondOrder(l: { a: Float64Array; b: Float64Array; c: Float64Array; d: number }) {
  const [a11, a12, a21, a22] = l.a;
  const det = a11 * a22 - a12 * a21;
  const tr = a11 + a22;
  const g0 = l.d - (l.c[0] * (a22 * l.b[0] - a12 * l.b[1]) + l.c[1] * (-a21 * l.b[0] + a11 * l.b[1])) / det;
  return { g0, f0Hz: Math.sqrt(det) / (2 * Math.PI), q: Math.sqrt(det) / -tr };
}

describe('linearize: buck control-to-output Gvd', () => {
  // Source: REFERENCES.md "Small-signal control" — Gvd(s) = Vin·R/(R+RL)·(1 + s·Rc·C)/(1 + a1·s + a2·s²),
  // a1 = L/(R+RL) + C·(Rc + R·RL/(R+RL)), a2 = L·C·(R+Rc)/(R+RL) (Erickson & Maksimović, Fundamentals of
  // Power Electronics, 2nd ed., ch. 8; derived values re-derived here: G0 11.8812, f0 5045.4 Hz, Q 2.7692).
  const vin = 12, lH = 10e-6, cF = 100e-6, r = 1, rl = 0.01, rc = 0.005;
  const a1 = lH / (r + rl) + cF * (rc + (r * rl) / (r + rl));
  const a2 = (lH * cF * (r + rc)) / (r + rl);
  const ref = { g0: (vin * r) / (r + rl), f0Hz: 1 / (2 * Math.PI * Math.sqrt(a2)), q: Math.sqrt(a2) / a1, fzHz: 1 / (2 * Math.PI * rc * cF) };

  it('the published formula gives the REFERENCES.md values (re-derivation)', () => {
    // Printed to 5–6 significant digits: tolerance half a unit of the last printed digit.
    expectClose(ref.g0, 11.8812, { abs: 5e-5, what: 'G0' });
    expectClose(ref.f0Hz, 5045.4, { abs: 0.05, what: 'f0' });
    expectClose(ref.q, 2.7692, { abs: 5e-5, what: 'Q' });
  });

  it('linearizing our averaged model with near-ideal devices reproduces G0, f0, Q and the ESR zero', () => {
    const s = textbookBuck();
    const plant = buildPlant(s);
    const ep = electricalPoint(plant, plant.knobs, 25, 25);
    const lin = linearizeAtPoint(plant, ep, 25, 25);
    const got = secondOrder(lin);
    // Residual differences: the near-ideal channel still has 1/(k·Vov) = 1.25e−7 Ω and the diode
    // 1 mV for femtosecond gaps, both ~1e−7 of the terms that set G0, f0 and Q; tolerance 1e−5.
    expectClose(got.g0, ref.g0, { rel: 1e-5, what: 'G0 (duty → vOut)' });
    expectClose(got.f0Hz, ref.f0Hz, { rel: 1e-5, what: 'f0' });
    expectClose(got.q, ref.q, { rel: 1e-5, what: 'Q' });
    // Full frequency response against the formula, including the ESR zero at 318 kHz.
    for (const fHz of [100, 1e3, ref.f0Hz, 20e3, ref.fzHz, 1e6]) {
      const w = 2 * Math.PI * fHz;
      const g = plantResponseAt(lin, w);
      const num = { re: ref.g0, im: ref.g0 * w * rc * cF };
      const den = { re: 1 - a2 * w * w, im: a1 * w };
      const dd = den.re * den.re + den.im * den.im;
      const want = { re: (num.re * den.re + num.im * den.im) / dd, im: (num.im * den.re - num.re * den.im) / dd };
      expectClose(Math.hypot(g.re, g.im), Math.hypot(want.re, want.im), { rel: 1e-5, what: `|Gvd| at ${fHz} Hz` });
      expectClose(Math.atan2(g.im, g.re), Math.atan2(want.im, want.re), { abs: 1e-5, what: `∠Gvd at ${fHz} Hz (rad)` });
    }
    expect(lin.stepDiscrepancy).toBeLessThan(1e-6);
    expect(lin.warnings).toEqual([]);
  });

  it('the demo buck with real devices has more damping than DCR alone (conduction drops add to RL)', () => {
    const ctx = marginContext(caseScenario('buck-aux-48v'));
    const lp = linearPoint(ctx);
    const c = ctx.point.plant.conv;
    if (c.kind !== 'buck') throw new Error('demo is a buck');
    // −A11·L is the total series resistance the inductor current sees.
    const rSeries = -lp.lin.a[0] * c.lH;
    expect(rSeries).toBeGreaterThan(c.dcr20Ohm);
    expect(rSeries).toBeLessThan(0.05);
    // C row: vOut = (vC + ESR·iL)/(1 + ESR/R).
    const esr = c.cout.esrOhm;
    const rLoad = 'rOhm' in c.load ? c.load.rOhm : NaN;
    expectClose(lp.lin.c[0], esr / (1 + esr / rLoad), { rel: 1e-6, what: '∂vOut/∂iL' });
    expectClose(lp.lin.c[1], 1 / (1 + esr / rLoad), { rel: 1e-6, what: '∂vOut/∂vC' });
  });
});

describe('linearize: half-bridge current loop', () => {
  it('the load branch gives di/dt ≈ −(R + r_on)/L·i + Vlink/L·d, with the link as a second, coupled state', () => {
    const s = halfBridgeLoop();
    const plant = buildPlant(s);
    const ep = electricalPoint(plant, plant.knobs, 25, 25);
    const lin = linearizeAtPoint(plant, ep, 25, 25);
    expect(lin.stateNames).toEqual(['i', 'vLink']);
    // ∂(di/dt)/∂d = V_link/L to within the dead-time and drop terms (< 1 %).
    expectClose(lin.b[0], ep.vBusV / 500e-6, { rel: 0.01, what: 'B[i]' });
    expectClose(-lin.a[0] * 500e-6, 2, { rel: 0.02, what: 'series resistance seen by i' });
    expectClose(lin.c[0], 1, { rel: 1e-9, what: 'y = i' });
  });

  it('leaves out a DC link fed by an ideal source (rSourceOhm 0): it cannot move', () => {
    const s = withOverrides(halfBridgeLoop(), { 'halfBridge.rSourceOhm': 0 });
    const plant = buildPlant(s);
    const ep = electricalPoint(plant, plant.knobs, 25, 25);
    const lin = linearizeAtPoint(plant, ep, 25, 25);
    expect(lin.n).toBe(1);
    expect(lin.stateNames).toEqual(['i']);
    expect(lin.warnings.join(' ')).toMatch(/vLink is held constant/);
  });
});

describe('linearize: refusals and checks', () => {
  const s = caseScenario('buck-aux-48v');
  const plant = buildPlant(s);
  const ep = electricalPoint(plant, plant.knobs, 40, 40);

  it('refuses a point that is not an equilibrium, naming the residual', () => {
    const x = statesAt(plant, ep);
    x[0] += 2; // 2 A off the steady inductor current
    expect(() => linearizeAveraged(plant, x, inputsAt(plant, ep, 40, 40))).toThrow(LinearizationError);
    expect(() => linearizeAveraged(plant, x, inputsAt(plant, ep, 40, 40))).toThrow(/not an equilibrium \(\|dx\/dt\| is .* of the plant's rates/);
  });

  it('refuses a point where the duty is pinned (no regulation, no small-signal loop)', () => {
    const starved = buildPlant(withOverrides(s, { 'pwm.dutyMax': 0.2 }));
    const epS = electricalPoint(starved, starved.knobs, 40, 40);
    expect(epS.regulated).toBe(false);
    expect(() => linearizeAtPoint(starved, epS, 40, 40)).toThrow(/not regulated .*duty pinned at 0.200/);
  });

  it('reports the discrepancy between its two step sizes (smooth here: below 1e-6)', () => {
    const lin = linearizeAtPoint(plant, ep, 40, 40, { disturbances: ['loadROhm', 'vSourceV'] });
    expect(lin.stepsRel).toEqual([1e-6, 1e-4]);
    expect(lin.stepDiscrepancy).toBeGreaterThan(0);
    expect(lin.stepDiscrepancy).toBeLessThan(1e-6);
    expect(lin.equilibriumResidual).toBeLessThan(1e-9);
    // Disturbance columns: a higher load resistance charges the capacitor (less load current).
    expect(lin.e[1 * 2 + 0]).toBeGreaterThan(0);
    // ∂(diL/dt)/∂vin = D/L.
    expectClose(lin.e[0 * 2 + 1], ep.duty / 12e-6, { rel: 0.01, what: '∂(diL/dt)/∂vin' });
  });

  it('rejects a disturbance the plant does not have', () => {
    const hb = buildPlant(halfBridgeLoop());
    const epH = electricalPoint(hb, hb.knobs, 25, 25);
    expect(() => linearizeAtPoint(hb, epH, 25, 25, { disturbances: ['loadROhm'] })).toThrow(/loadROhm is not used by this plant/);
  });
});

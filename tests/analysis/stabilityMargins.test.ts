import { describe, expect, it } from 'vitest';
import type { Complex } from '../../src/analysis/loopGain.ts';
import { stabilityMargins } from '../../src/analysis/stabilityMargins.ts';
import { expm } from '../../src/model/thermal/matrixExponential.ts';
import { expectClose } from '../helpers/expectClose.ts';

const cmul = (a: Complex, b: Complex): Complex => ({ re: a.re * b.re - a.im * b.im, im: a.re * b.im + a.im * b.re });
const cdiv = (a: Complex, b: Complex): Complex => {
  const d = b.re * b.re + b.im * b.im;
  return { re: (a.re * b.re + a.im * b.im) / d, im: (a.im * b.re - a.re * b.im) / d };
};
const TWO_PI = 2 * Math.PI;
const wide = { omegaMinRadS: TWO_PI * 0.1, omegaMaxRadS: TWO_PI * 1e8 };

describe('stabilityMargins: Erickson & Maksimović ch. 9 buck design example', () => {
  // Source: Erickson & Maksimović, Fundamentals of Power Electronics, 2nd ed., Kluwer 2001, §9.5.4
  // (design example): Vg 28 V, V 15 V, R 3 Ω, L 50 µH, C 500 µF, VM 4 V, H 5/15, target fc 5 kHz,
  // PM 52°. The compensator is the book's PID (lead zero/pole for 52° at fc, inverted zero at fc/10);
  // f0, Q0, Tu0, fz, fp, Gc0 are the book's formulas, re-derived here; the resulting crossover
  // ≈ 5.18 kHz and PM ≈ 47.7° are derived (REFERENCES.md), not printed in the book.
  const Vg = 28, R = 3, L = 50e-6, C = 500e-6, VM = 4, H = 5 / 15;
  const w0 = 1 / Math.sqrt(L * C);
  const Q0 = R * Math.sqrt(C / L);
  const Tu0 = (H * Vg) / VM;
  const fc = 5e3;
  const th = (52 * Math.PI) / 180;
  const fz = fc * Math.sqrt((1 - Math.sin(th)) / (1 + Math.sin(th)));
  const fp = fc * Math.sqrt((1 + Math.sin(th)) / (1 - Math.sin(th)));
  const Gc0 = ((TWO_PI * fc) / w0) ** 2 / Tu0 * Math.sqrt(fz / fp);
  const fL = fc / 10;
  /** T(s) = Gc(s)·Gvd(s)·H/VM with Gc = Gc0·(1 + ωL/s)(1 + s/ωz)/(1 + s/ωp). */
  const loop = (w: number): Complex => {
    const plant = cdiv({ re: Tu0, im: 0 }, { re: 1 - (w / w0) ** 2, im: w / (Q0 * w0) });
    let gc: Complex = { re: Gc0, im: 0 };
    gc = cmul(gc, { re: 1, im: -(TWO_PI * fL) / w });
    gc = cmul(gc, { re: 1, im: w / (TWO_PI * fz) });
    gc = cdiv(gc, { re: 1, im: w / (TWO_PI * fp) });
    return cmul(plant, gc);
  };

  it('the book formulas give the design numbers (rounding of the printed values)', () => {
    expectClose(w0 / TWO_PI, 1006.6, { abs: 0.05, what: 'f0 (Hz)' });
    expectClose(Q0, 9.487, { abs: 5e-4, what: 'Q0' });
    expectClose(Tu0, 2.333, { abs: 5e-4, what: 'Tu0' });
    expectClose(fz, 1722, { abs: 0.5, what: 'fz (Hz)' });
    expectClose(fp, 14.52e3, { abs: 5, what: 'fp (Hz)' });
    expectClose(Gc0, 3.641, { abs: 5e-4, what: 'Gc0' });
  });

  it('our margin finder gives PM ≈ 47.7° at ≈ 5.18 kHz, no phase crossover (GM infinite)', () => {
    const m = stabilityMargins(loop, wide);
    // Reference values are printed to 3 significant digits: half a unit of the last digit.
    expectClose(m.crossoverHz, 5.18e3, { abs: 5, what: 'crossover (Hz)' });
    expectClose(m.pmDeg, 47.7, { abs: 0.05, what: 'PM (deg)' });
    expect(m.gmDb).toBe(Infinity);
    expect(m.phaseCrossoverHz).toBeNaN();
    expect(m.gainCrossingsHz).toHaveLength(1);
  });
});

describe('stabilityMargins: second-order loop, PM–ζ–overshoot', () => {
  // Source: REFERENCES.md "Small-signal control": L(s) = ωn²/(s(s + 2ζωn)) closes to the standard
  // second-order system; PM = atan(2ζ/sqrt(sqrt(1 + 4ζ⁴) − 2ζ²)), overshoot exp(−πζ/sqrt(1 − ζ²))
  // (values derived from the formulas; the relations are textbook material, e.g. Ogata, Modern
  // Control Engineering, from memory — section numbers not checked).
  const rows = [
    { zeta: 0.5, pmDeg: 51.83, overshoot: 0.163 },
    { zeta: 0.7, pmDeg: 65.16, overshoot: 0.046 },
  ];
  const wn = TWO_PI * 1e3;
  for (const r of rows) {
    it(`ζ ${r.zeta}: PM ${r.pmDeg}°, overshoot ${(100 * r.overshoot).toFixed(2)} %`, () => {
      const pmFormula = (Math.atan((2 * r.zeta) / Math.sqrt(Math.sqrt(1 + 4 * r.zeta ** 4) - 2 * r.zeta ** 2)) * 180) / Math.PI;
      expectClose(pmFormula, r.pmDeg, { abs: 0.005, what: 'PM formula vs printed value' });
      const m = stabilityMargins((w) => cdiv({ re: wn * wn, im: 0 }, cmul({ re: 0, im: w }, { re: 2 * r.zeta * wn, im: w })), wide);
      // The finder solves the crossing to ~1e−12 in log ω: agreement with the closed form to 1e−6°.
      expectClose(m.pmDeg, pmFormula, { abs: 1e-6, what: 'PM from the margin finder' });
      expect(m.gmDb).toBe(Infinity);
      // Overshoot of the closed loop ωn²/(s² + 2ζωn·s + ωn²) from an exact (matrix-exponential) step
      // response sampled every 1/2000 of the natural period; the peak is found to ~1e−6.
      const dt = 1 / (2000 * (wn / TWO_PI));
      // Augmented [x1, x2, u]: ẋ1 = x2, ẋ2 = −ωn²x1 − 2ζωn·x2 + ωn²·u, u̇ = 0.
      const aug = Float64Array.from([0, 1, 0, -wn * wn, -2 * r.zeta * wn, wn * wn, 0, 0, 0].map((v) => v * dt));
      const e = expm(aug, 3);
      let x = [0, 0, 1];
      let peak = 0;
      for (let k = 0; k < 4000; k++) {
        x = [0, 1, 2].map((i) => e[i * 3] * x[0] + e[i * 3 + 1] * x[1] + e[i * 3 + 2] * x[2]);
        peak = Math.max(peak, x[0]);
      }
      const formula = Math.exp((-Math.PI * r.zeta) / Math.sqrt(1 - r.zeta ** 2));
      expectClose(formula, r.overshoot, { abs: 5e-4, what: 'overshoot formula vs printed value' });
      expectClose(peak - 1, formula, { abs: 1e-6, what: 'simulated overshoot' });
    });
  }
});

describe('stabilityMargins: values, not exceptions', () => {
  it('"no crossover" is a value: PM Infinity with crossover NaN when |L| < 1 everywhere', () => {
    const m = stabilityMargins(() => ({ re: 0.5, im: 0 }), wide);
    expect(m.pmDeg).toBe(Infinity);
    expect(m.crossoverHz).toBeNaN();
    expect(m.gmDb).toBe(Infinity);
    expect(m.phaseCrossoverHz).toBeNaN();
    expect(m.delayMarginS).toBe(Infinity);
  });

  it('a pure delay behind an integrator: PM = 90° − ωc·τ and GM at ωτ = π/2 (closed forms)', () => {
    // L(s) = K·e^{−sτ}/s: |L| = 1 at ωc = K; ∠L = −90° − ωτ reaches −180° at ω = π/(2τ), |L| = 2Kτ/π.
    const K = 1000;
    const tau = 1e-4;
    const m = stabilityMargins((w) => cmul({ re: Math.cos(-w * tau), im: Math.sin(-w * tau) }, { re: 0, im: -K / w }), { omegaMinRadS: 1, omegaMaxRadS: 1e5 });
    expectClose(m.crossoverHz, K / TWO_PI, { rel: 1e-9, what: 'crossover' });
    expectClose(m.pmDeg, 90 - (K * tau * 180) / Math.PI, { abs: 1e-7, what: 'PM' });
    expectClose(m.phaseCrossoverHz, Math.PI / (2 * tau) / TWO_PI, { rel: 1e-9, what: 'phase crossover' });
    expectClose(m.gmDb, -20 * Math.log10((2 * K * tau) / Math.PI), { abs: 1e-7, what: 'GM' });
    expectClose(m.delayMarginS, ((90 - (K * tau * 180) / Math.PI) * Math.PI) / 180 / K, { rel: 1e-9, what: 'delay margin' });
    // Further phase crossings at −540°, −900°, … each with smaller |L|: the first one binds.
    expect(m.phaseCrossingsHz.length).toBeGreaterThan(1);
  });

  it('unwraps the phase across a sharp resonance (Q = 200) and sees every crossing', () => {
    // Integrator times a high-Q resonance whose peak pokes above 0 dB: three gain crossings.
    const w0 = TWO_PI * 1e3;
    const q = 200;
    const fn = (w: number): Complex => cdiv({ re: 0.02 * w0, im: 0 }, cmul({ re: 0, im: w }, { re: 1 - (w / w0) ** 2, im: w / (q * w0) }));
    const m = stabilityMargins(fn, { omegaMinRadS: 1, omegaMaxRadS: 1e6, pointsPerDecade: 5 });
    expect(m.gainCrossingsHz).toHaveLength(3);
    // The binding PM is at a crossing beyond the resonance where the phase is below −180°.
    expect(m.pmDeg).toBeLessThan(0);
    expectClose(m.phaseCrossoverHz, 1e3, { rel: 1e-3, what: 'phase crossover at the resonance' });
  });
});

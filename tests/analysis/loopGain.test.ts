import { describe, expect, it } from 'vitest';
import { fc, test } from '@fast-check/vitest';
import { closedLoopMatrix, closedLoopPoles, closedLoopStep } from '../../src/analysis/closedLoop.ts';
import { eigenvalues } from '../../src/analysis/eigenvalues.ts';
import { plantResponseAt } from '../../src/analysis/linearize.ts';
import { analyzeLoop } from '../../src/analysis/loopAnalysis.ts';
import { approxLoopGainAt, controllerPathAt, discreteLoop, loopGainAt, sampledPlantAt, sensorFilterCoefficient } from '../../src/analysis/loopGain.ts';
import { linearPoint, marginContext } from '../../src/analysis/marginContext.ts';
import { createPiState, piCoefficients, piStep } from '../../src/control/pi.ts';
import { expectClose } from '../helpers/expectClose.ts';
import { caseScenario } from './fixtures.ts';

const ctx = marginContext(caseScenario('buck-aux-48v'));
const lin = linearPoint(ctx).lin;
const TS = 1e-5;
const deg = (v: { re: number; im: number }): number => (Math.atan2(v.im, v.re) * 180) / Math.PI;
const wrap = (x: number): number => ((((x + 180) % 360) + 360) % 360) - 180;

describe('loop gain: the sampled plant and the digital delay', () => {
  it('the discrete loop lags the continuous plant by 1.5·Ts (one-sample delay + ZOH): 27° at 5 kHz with 100 kHz sampling', () => {
    // Source: Buso & Mattavelli, Digital Control in Power Electronics (Morgan & Claypool 2006): computation
    // delay Ts plus the PWM hold's Ts/2 → 360°·1.5·fc/fs = 27° at fc 5 kHz, fs 100 kHz (REFERENCES.md).
    const loop = discreteLoop(lin, { tsS: TS, delaySamples: 1, pi: { b0: 1, b1: 0 } });
    const w = 2 * Math.PI * 5e3;
    const lag = wrap(deg(sampledPlantAt(loop, w)) - deg(plantResponseAt(lin, w))) - 360 * 5e3 * TS;
    // The ZOH equivalence is exact only without aliasing; the demo plant (f0 3.3 kHz, −40 dB/decade)
    // aliases back ~0.004° here: tolerance 0.05°.
    expectClose(lag, -27, { abs: 0.05, what: 'extra phase lag (deg)' });
  });

  it('the continuous approximation plant(jω)·e^{−jω(N+½)Ts} tracks the exact loop well below Nyquist', () => {
    const pi = piCoefficients({ basis: 'continuous', kp: 0.002, ki: 60, antiWindup: 'clamp', uMin: 0, uMax: 1 }, TS);
    const loop = discreteLoop(lin, { tsS: TS, delaySamples: 1, pi });
    for (const fHz of [100, 1e3, 5e3]) {
      const w = 2 * Math.PI * fHz;
      const ex = loopGainAt(loop, w);
      const ap = approxLoopGainAt(loop, w);
      // Aliasing and the hold's sinc magnitude: within 1 % and 0.2° below fs/20.
      expectClose(Math.hypot(ap.re, ap.im), Math.hypot(ex.re, ex.im), { rel: 0.01, what: `|L| at ${fHz} Hz` });
      expectClose(wrap(deg(ap) - deg(ex)), 0, { abs: 0.2, what: `∠L difference at ${fHz} Hz` });
    }
  });

  it('the controller path is exactly (b0 + b1·z⁻¹)/(1 − z⁻¹)·z⁻ᴺ·a/(1 − (1 − a)z⁻¹) with the simulator\'s coefficients', () => {
    const cfg = { basis: 'perSample' as const, kp: 0.002, ki: 0.001, antiWindup: 'clamp' as const, uMin: 0, uMax: 1 };
    const pi = piCoefficients(cfg, TS);
    const a = sensorFilterCoefficient(20e3, TS);
    // The engine: a = 1 − exp(−2π·f·Ts).
    expectClose(a, 1 - Math.exp(-2 * Math.PI * 20e3 * TS), { rel: 1e-15, what: 'filter coefficient' });
    const loop = discreteLoop(lin, { tsS: TS, delaySamples: 2, pi, sensorFilterHz: 20e3 });
    for (const fHz of [10, 3e3, 49e3]) {
      const th = 2 * Math.PI * fHz * TS;
      const zi = { re: Math.cos(th), im: -Math.sin(th) };
      const num = { re: pi.b0 + pi.b1 * zi.re, im: pi.b1 * zi.im };
      const den = { re: 1 - zi.re, im: -zi.im };
      const fDen = { re: 1 - (1 - a) * zi.re, im: -(1 - a) * zi.im };
      const z2 = { re: Math.cos(2 * th), im: -Math.sin(2 * th) };
      const mul = (p: { re: number; im: number }, q: { re: number; im: number }) => ({ re: p.re * q.re - p.im * q.im, im: p.re * q.im + p.im * q.re });
      const div = (p: { re: number; im: number }, q: { re: number; im: number }) => { const d = q.re * q.re + q.im * q.im; return { re: (p.re * q.re + p.im * q.im) / d, im: (p.im * q.re - p.re * q.im) / d }; };
      const want = mul(mul(div(num, den), z2), div({ re: a, im: 0 }, fDen));
      const got = controllerPathAt(loop, 2 * Math.PI * fHz);
      expectClose(got.re, want.re, { abs: 1e-12 * Math.hypot(want.re, want.im), what: `Re at ${fHz} Hz` });
      expectClose(got.im, want.im, { abs: 1e-12 * Math.hypot(want.re, want.im), what: `Im at ${fHz} Hz` });
    }
  });
});

describe('closed loop: matrix, poles, Nyquist and margins agree', () => {
  it('the closed-loop matrix has the plant, the filter, one PI state and N delay slots', () => {
    const pi = piCoefficients({ basis: 'continuous', kp: 0.002, ki: 60, antiWindup: 'clamp', uMin: 0, uMax: 1 }, TS);
    const { layout, m } = closedLoopMatrix(discreteLoop(lin, { tsS: TS, delaySamples: 3, pi, sensorFilterHz: 30e3 }));
    expect(layout).toEqual({ size: 2 + 1 + 1 + 3, x: 0, held: -1, filter: 2, pi: 3, delay: 4 });
    // The delay line shifts: q2⁺ = q1, q3⁺ = q2; the plant is driven by the oldest slot q3.
    expect(m[5 * 7 + 4]).toBe(1);
    expect(m[6 * 7 + 5]).toBe(1);
    expect(m[0 * 7 + 6]).not.toBe(0);
    // The PI state integrates the error: σ⁺ = σ − y_f.
    expect(m[3 * 7 + 3]).toBe(1);
    // Without integral action there is no PI state.
    const p = closedLoopMatrix(discreteLoop(lin, { tsS: TS, delaySamples: 1, pi: { b0: 0.002, b1: -0.002 } }));
    expect(p.layout.pi).toBe(-1);
    expect(p.layout.size).toBe(3);
  });

  it('one step of the closed-loop map equals the engine\'s velocity-form PI step (piStep) with the same history', () => {
    const cfg = { basis: 'continuous' as const, kp: 0.002, ki: 60, antiWindup: 'clamp' as const, uMin: -1e9, uMax: 1e9 };
    const pi = piCoefficients(cfg, TS);
    const loop = discreteLoop(lin, { tsS: TS, delaySamples: 0, pi });
    const { layout } = closedLoopMatrix(loop);
    // Drive both with the same error history: a plant state whose output gives e = −C·x.
    const st = createPiState(0);
    const s = new Float64Array(layout.size);
    const out = new Float64Array(layout.size);
    let sigma = 0;
    for (let k = 0; k < 20; k++) {
      s.fill(0);
      s[1] = Math.sin(k) / lin.c[1]; // y = C·x = sin k (vC only)
      s[0] = 0;
      s[layout.pi] = sigma;
      closedLoopStep(loop, layout, s, out);
      const u = piStep(cfg, pi, st, -Math.sin(k));
      // With no delay the duty applied is u: recover it from the plant row (x⁺ = Ad·x + Bd·u).
      const duty = (out[0] - loop.ad[0] * s[0] - loop.ad[1] * s[1]) / loop.bd[0];
      expectClose(duty, u, { abs: 1e-12, what: `u at step ${k}` });
      sigma = out[layout.pi];
    }
  });

  it('with the demo gains every pole is inside the unit circle and the slowest is the PI zero region', () => {
    const pi = piCoefficients({ basis: 'continuous', kp: 0.002, ki: 60, antiWindup: 'clamp', uMin: 0, uMax: 1 }, TS);
    const p = closedLoopPoles(discreteLoop(lin, { tsS: TS, delaySamples: 1, pi }));
    expect(p.maxAbs).toBeLessThan(1);
    expect(p.unstableCount).toBe(0);
  });

  // Bounded integers scaled down (no subnormals reach the eigenvalue solver; STACK.md): kp up to
  // 0.03 duty/V, ki up to 600 /s, 0–2 samples of delay, with or without a feedback filter. The
  // demo's stability boundary (GM 11.9 dB ≈ ×3.9 on kp 0.002, ki 60) lies inside this box.
  const gains = fc.record({
    kp: fc.integer({ min: 0, max: 300 }),
    ki: fc.integer({ min: 0, max: 600 }),
    delay: fc.integer({ min: 0, max: 2 }),
    filterKHz: fc.option(fc.integer({ min: 5, max: 45 }), { nil: undefined }),
  });
  const analyze = (g: { kp: number; ki: number; delay: number; filterKHz?: number }) => {
    if (g.kp === 0 && g.ki === 0) return undefined;
    const pi = piCoefficients({ basis: 'continuous', kp: g.kp * 1e-4, ki: g.ki, antiWindup: 'clamp', uMin: 0, uMax: 1 }, TS);
    return analyzeLoop(discreteLoop(lin, { tsS: TS, delaySamples: g.delay, pi, sensorFilterHz: g.filterKHz === undefined ? undefined : g.filterKHz * 1e3 }));
  };

  it('the generator covers both stable and unstable loops', () => {
    const verdicts = fc.sample(gains, { numRuns: 200, seed: 7 }).map(analyze).filter((a) => a !== undefined).map((a) => a!.stable);
    expect(verdicts.filter((v) => v).length).toBeGreaterThan(20);
    expect(verdicts.filter((v) => !v).length).toBeGreaterThan(20);
  });

  test.prop([gains], { numRuns: 200, seed: 11 })('poles, Nyquist count and margins give the same verdict', (g) => {
    const a = analyze(g);
    if (!a) return;
    // Nyquist: Z = P − W must equal the number of closed-loop eigenvalues outside the unit circle.
    expect(a.nyquistUnstable).toBe(a.poles.unstableCount);
    // For these loops (stable plant, one resonance, delay) PM > 0 and GM > 0 dB ⇔ all |λ| < 1.
    expect(a.stable).toBe(a.margins.pmDeg > 0 && a.margins.gmDb > 0);
    expect(a.marginsAgree).toBe(true);
  });

  it('scaling the loop by the gain margin puts the critical poles on the unit circle at the phase-crossover frequency', () => {
    const pi0 = piCoefficients({ basis: 'continuous', kp: 0.002, ki: 60, antiWindup: 'clamp', uMin: 0, uMax: 1 }, TS);
    const a0 = analyzeLoop(discreteLoop(lin, { tsS: TS, delaySamples: 1, pi: pi0 }));
    const k = 10 ** (a0.margins.gmDb / 20);
    const loop = discreteLoop(lin, { tsS: TS, delaySamples: 1, pi: { b0: pi0.b0 * k, b1: pi0.b1 * k } });
    const p = closedLoopPoles(loop);
    // Root-finder precision (~1e−12 in log ω) and eigenvalue accuracy (~1e−14): |λ| = 1 to 1e−9.
    expectClose(p.maxAbs, 1, { abs: 1e-9, what: 'max |λ| at the critical gain' });
    const iMax = p.re.reduce((best, _, i) => (Math.hypot(p.re[i], p.im[i]) > Math.hypot(p.re[best], p.im[best]) ? i : best), 0);
    const fOsc = Math.abs(Math.atan2(p.im[iMax], p.re[iMax])) / (2 * Math.PI * TS);
    expectClose(fOsc, a0.margins.phaseCrossoverHz, { rel: 1e-6, what: 'pole angle ↔ phase crossover' });
  });
});

describe('eigenvalues: guarded ml-matrix decomposition', () => {
  it('returns at once on subnormal and nilpotent inputs (the solver would otherwise spin)', () => {
    const tiny = 5e-324;
    const m = Float64Array.from([0, 1, 0, 0, 0, 1, tiny, 0, 0]);
    const ev = eigenvalues(m, 3);
    for (let i = 0; i < 3; i++) expect(Math.hypot(ev.re[i], ev.im[i])).toBeLessThan(1e-12);
    const nil = eigenvalues(Float64Array.from([0, 1, 0, 0]), 2);
    expect([...nil.re].map(Math.abs)).toEqual([0, 0]);
  });

  it('matches a companion matrix with known roots 0.5, −0.25 ± 0.75j', () => {
    // (z − 0.5)(z² + 0.5z + 0.625) = z³ + 0·z² + 0.375z − 0.3125
    const ev = eigenvalues(Float64Array.from([0, -0.375, 0.3125, 1, 0, 0, 0, 1, 0]), 3);
    const roots = [...ev.re].map((re, i) => ({ re, im: ev.im[i] })).sort((a, b) => a.im - b.im);
    expectClose(roots[0].re, -0.25, { abs: 1e-12 });
    expectClose(roots[0].im, -0.75, { abs: 1e-12 });
    expectClose(roots[1].re, 0.5, { abs: 1e-12 });
    expectClose(roots[2].im, 0.75, { abs: 1e-12 });
  });

  it('rejects non-finite entries with the index', () => {
    expect(() => eigenvalues(Float64Array.from([1, Number.NaN, 0, 1]), 2)).toThrow(/entry 1 must be finite, got NaN/);
  });
});

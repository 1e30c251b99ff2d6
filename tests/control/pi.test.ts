import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import {
  createPiState,
  DelayLine,
  piCoefficients,
  piEquivalentKi,
  PiController,
  piReset,
  piStep,
  type PiConfig,
} from '../../src/control/pi.ts';

const TS_S = 1e-4; // 10 kHz inner loop

const continuousCfg: PiConfig = {
  basis: 'continuous',
  kp: 0.05,
  ki: 200,
  antiWindup: 'clamp',
  uMin: 0,
  uMax: 0.9,
};

describe('piCoefficients', () => {
  it('continuous basis matches the Tustin PI formula b0 = Kp + Ki·Ts/2, b1 = −Kp + Ki·Ts/2 (Buso & Mattavelli)', () => {
    const c = piCoefficients({ ...continuousCfg, kp: 0.02, ki: 150 }, 1 / 50e3);
    expect(c.b0).toBeCloseTo(0.02 + (150 * 2e-5) / 2, 15);
    expect(c.b1).toBeCloseTo(-0.02 + (150 * 2e-5) / 2, 15);
  });

  it('continuous basis equals C(s) = Kp + Ki/s under the bilinear map s = (2/Ts)(z−1)/(z+1)', () => {
    // Independent check of the Tustin substitution at arbitrary real z (an identity in z).
    const kp = 0.07;
    const ki = 340;
    const { b0, b1 } = piCoefficients({ ...continuousCfg, kp, ki }, TS_S);
    for (const z of [1.3, 2.5, -0.4, 7]) {
      const s = (2 / TS_S) * ((z - 1) / (z + 1));
      const cs = kp + ki / s;
      const cz = (b0 + b1 / z) / (1 - 1 / z);
      expect(cz).toBeCloseTo(cs, 10);
    }
  });

  it('continuous basis: doubling the sample rate halves the integral coefficient per sample and keeps Kp', () => {
    const slow = piCoefficients(continuousCfg, TS_S);
    const fast = piCoefficients(continuousCfg, TS_S / 2);
    expect(fast.b0 + fast.b1).toBeCloseTo((slow.b0 + slow.b1) / 2, 15);
    expect((fast.b0 - fast.b1) / 2).toBeCloseTo(continuousCfg.kp, 15);
    expect((slow.b0 - slow.b1) / 2).toBeCloseTo(continuousCfg.kp, 15);
    expect(piEquivalentKi(slow, TS_S)).toBeCloseTo(continuousCfg.ki, 9);
    expect(piEquivalentKi(fast, TS_S / 2)).toBeCloseTo(continuousCfg.ki, 9);
  });

  it('perSample basis: coefficients do not change with the sample period, so the effective Ki doubles at twice the rate', () => {
    const cfg: PiConfig = { ...continuousCfg, basis: 'perSample', kp: 0.05, ki: 0.02 };
    const slow = piCoefficients(cfg, TS_S);
    const fast = piCoefficients(cfg, TS_S / 2);
    expect(fast).toEqual(slow);
    expect(slow).toEqual({ b0: 0.05 + 0.02, b1: -0.05 });
    expect(piEquivalentKi(fast, TS_S / 2)).toBeCloseTo(2 * piEquivalentKi(slow, TS_S), 9);
  });

  it('rejects misuse with the bad value and the expectation', () => {
    expect(() => piCoefficients({ ...continuousCfg, kp: Number.NaN }, TS_S)).toThrow(
      'pi.kp: must be finite, got NaN',
    );
    expect(() => piCoefficients({ ...continuousCfg, uMax: 0 }, TS_S)).toThrow('pi.uMax: must be > pi.uMin (0), got 0');
    expect(() => piCoefficients({ ...continuousCfg, antiWindup: 'backCalc' }, TS_S)).toThrow(
      'pi.backCalcGain: must be given',
    );
    expect(() => piCoefficients({ ...continuousCfg, antiWindup: 'backCalc', backCalcGain: 1.5 }, TS_S)).toThrow(
      'pi.backCalcGain: must be in (0, 1], got 1.5',
    );
    expect(() => piCoefficients(continuousCfg, 0)).toThrow('pi.tsS: must be finite and > 0, got 0');
    expect(() =>
      piCoefficients({ ...continuousCfg, basis: 'zoh' as PiConfig['basis'] }, TS_S),
    ).toThrow("pi.basis: must be one of 'continuous', 'perSample', got zoh");
  });
});

describe('piStep', () => {
  it('integrates a constant error linearly: u[k] = u0 + Kp·e + Ki·Ts·e·(k − 1/2) (Tustin)', () => {
    const cfg: PiConfig = { ...continuousCfg, uMin: -100, uMax: 100 };
    const coeffs = piCoefficients(cfg, TS_S);
    const state = createPiState(0.3);
    const e = 0.5;
    for (let k = 1; k <= 200; k++) {
      const u = piStep(cfg, coeffs, state, e);
      expect(u).toBeCloseTo(0.3 + cfg.kp * e + cfg.ki * TS_S * e * (k - 0.5), 12);
    }
  });

  it('perSample basis integrates a constant error by kiPerSample·e per sample', () => {
    const cfg: PiConfig = { ...continuousCfg, basis: 'perSample', ki: 0.01, uMin: -100, uMax: 100 };
    const coeffs = piCoefficients(cfg, TS_S);
    const state = createPiState(0);
    const e = -2;
    for (let k = 1; k <= 100; k++) {
      expect(piStep(cfg, coeffs, state, e)).toBeCloseTo(cfg.kp * e + cfg.ki * e * k, 12);
    }
  });

  it('when unsaturated, follows u[k] = u[k−1] + b0·e[k] + b1·e[k−1] exactly, as the stability analysis assumes', () => {
    fc.assert(
      fc.property(
        fc.constantFrom<PiConfig['basis']>('continuous', 'perSample'),
        fc.constantFrom<PiConfig['antiWindup']>('clamp', 'backCalc'),
        fc.double({ min: -10, max: 10, noNaN: true }),
        fc.double({ min: -1000, max: 1000, noNaN: true }),
        fc.array(fc.double({ min: -100, max: 100, noNaN: true }), { minLength: 1, maxLength: 60 }),
        (basis, antiWindup, kp, ki, errors) => {
          const cfg: PiConfig = {
            basis,
            kp,
            ki: basis === 'perSample' ? ki * TS_S : ki,
            antiWindup,
            backCalcGain: 0.5,
            uMin: -1e12,
            uMax: 1e12,
          };
          const { b0, b1 } = piCoefficients(cfg, TS_S);
          const state = createPiState(0);
          let uPrev = 0;
          let ePrev = 0;
          for (const e of errors) {
            const u = piStep(cfg, { b0, b1 }, state, e);
            expect(u).toBe(uPrev + (b0 * e + b1 * ePrev));
            uPrev = u;
            ePrev = e;
          }
        },
      ),
    );
  });

  /** Samples after `start` until the output first drops below uMax. */
  function samplesToLeaveUpperLimit(outputs: number[], start: number, uMax: number): number {
    for (let k = start; k < outputs.length; k++) if (outputs[k] < uMax) return k - start + 1;
    return Number.POSITIVE_INFINITY;
  }

  /** Error profile: +1 for 500 samples (drives into uMax), then −0.1 (asks to come down). */
  const SATURATE_SAMPLES = 500;
  const errorAt = (k: number) => (k < SATURATE_SAMPLES ? 1 : -0.1);
  const TOTAL_SAMPLES = 8000;

  /** Baseline without anti-windup: same difference equation, output clipped, state left to wind up. */
  function runWithoutAntiWindup(cfg: PiConfig): number[] {
    const { b0, b1 } = piCoefficients(cfg, TS_S);
    let x = 0;
    let ePrev = 0;
    const out: number[] = [];
    for (let k = 0; k < TOTAL_SAMPLES; k++) {
      const e = errorAt(k);
      x += b0 * e + b1 * ePrev;
      ePrev = e;
      out.push(Math.min(cfg.uMax, Math.max(cfg.uMin, x)));
    }
    return out;
  }

  function run(cfg: PiConfig): { outputs: number[]; states: number[] } {
    const coeffs = piCoefficients(cfg, TS_S);
    const state = createPiState(0);
    const outputs: number[] = [];
    const states: number[] = [];
    for (let k = 0; k < TOTAL_SAMPLES; k++) {
      outputs.push(piStep(cfg, coeffs, state, errorAt(k)));
      states.push(state.x);
    }
    return { outputs, states };
  }

  it('clamping keeps the output within [uMin, uMax] and leaves saturation without windup', () => {
    const baseline = runWithoutAntiWindup(continuousCfg);
    const { outputs, states } = run(continuousCfg);
    for (const u of outputs) {
      expect(u).toBeGreaterThanOrEqual(continuousCfg.uMin);
      expect(u).toBeLessThanOrEqual(continuousCfg.uMax);
    }
    expect(outputs[SATURATE_SAMPLES - 1]).toBe(continuousCfg.uMax);
    expect(baseline[SATURATE_SAMPLES - 1]).toBe(continuousCfg.uMax);
    // The stored state is held at the limit instead of growing by Ki·Ts·e per sample.
    expect(states[SATURATE_SAMPLES - 1]).toBeCloseTo(continuousCfg.uMax, 14);

    const clampLeave = samplesToLeaveUpperLimit(outputs, SATURATE_SAMPLES, continuousCfg.uMax);
    const baselineLeave = samplesToLeaveUpperLimit(baseline, SATURATE_SAMPLES, continuousCfg.uMax);
    // Baseline: the wound-up state (≈ Ki·Ts·500 ≈ 10) must be integrated away at Ki·Ts·0.1 per sample.
    expect(baselineLeave).toBeGreaterThan(4000);
    expect(clampLeave).toBeLessThanOrEqual(2);
  });

  it('clamping lets a persistent error drive the output exactly to the limit (no stall one increment short)', () => {
    // Ki·Ts·e = 0.02 per sample does not divide uMax − Kp·e = 0.85: the last increment is taken only in part.
    const coeffs = piCoefficients(continuousCfg, TS_S);
    const state = createPiState(0);
    let u = 0;
    for (let k = 0; k < 100; k++) u = piStep(continuousCfg, coeffs, state, 1);
    expect(u).toBe(continuousCfg.uMax);
    expect(state.saturation).toBe(1);
  });

  it('clamping holds the integral at the lower limit the same way', () => {
    const cfg: PiConfig = { ...continuousCfg, uMin: -0.5, uMax: 0.5 };
    const coeffs = piCoefficients(cfg, TS_S);
    const state = createPiState(0);
    for (let k = 0; k < 1000; k++) expect(piStep(cfg, coeffs, state, -1)).toBeGreaterThanOrEqual(-0.5);
    expect(state.saturation).toBe(-1);
    expect(state.x).toBeCloseTo(-0.5, 14);
    expect(piStep(cfg, coeffs, state, 0.1)).toBeGreaterThan(-0.5);
  });

  it('back-calculation pulls the stored state to the limit plus the tracking offset (b0+b1)·e·(1−kb)/kb', () => {
    const kb = 0.2;
    const cfg: PiConfig = { ...continuousCfg, antiWindup: 'backCalc', backCalcGain: kb };
    const { b0, b1 } = piCoefficients(cfg, TS_S);
    const { states } = run(cfg);
    const fixedPoint = cfg.uMax + (b0 + b1) * 1 * ((1 - kb) / kb);
    expect(states[SATURATE_SAMPLES - 1]).toBeCloseTo(fixedPoint, 12);
    // Geometric convergence: the distance to the fixed point shrinks by (1 − kb) every saturated sample.
    const d = (k: number) => Math.abs(states[k] - fixedPoint);
    for (let k = 60; k < 120; k++) {
      if (d(k) > 1e-12) expect(d(k + 1)).toBeLessThanOrEqual(d(k) * (1 - kb) + 1e-15);
    }
  });

  it('back-calculation with kb = 1 stores exactly the saturated output and recovers far sooner than no anti-windup', () => {
    const cfg: PiConfig = { ...continuousCfg, antiWindup: 'backCalc', backCalcGain: 1 };
    const { outputs, states } = run(cfg);
    expect(states[SATURATE_SAMPLES - 1]).toBeCloseTo(cfg.uMax, 14);
    const leave = samplesToLeaveUpperLimit(outputs, SATURATE_SAMPLES, cfg.uMax);
    const baselineLeave = samplesToLeaveUpperLimit(runWithoutAntiWindup(cfg), SATURATE_SAMPLES, cfg.uMax);
    expect(leave).toBeLessThanOrEqual(2);
    const slow = run({ ...cfg, backCalcGain: 0.2 });
    expect(samplesToLeaveUpperLimit(slow.outputs, SATURATE_SAMPLES, cfg.uMax)).toBeLessThan(baselineLeave / 10);
  });

  it('keeps the output within [uMin, uMax] for arbitrary bounded error sequences (property)', () => {
    fc.assert(
      fc.property(
        fc.constantFrom<PiConfig['basis']>('continuous', 'perSample'),
        fc.constantFrom<PiConfig['antiWindup']>('clamp', 'backCalc'),
        fc.double({ min: 0, max: 20, noNaN: true }),
        fc.double({ min: 0, max: 5000, noNaN: true }),
        fc.double({ min: 0.01, max: 1, noNaN: true }),
        fc.double({ min: -5, max: 5, noNaN: true }),
        fc.double({ min: 1e-3, max: 10, noNaN: true }),
        fc.array(
          fc.tuple(fc.double({ min: -1e3, max: 1e3, noNaN: true }), fc.double({ min: -2, max: 2, noNaN: true })),
          { minLength: 1, maxLength: 200 },
        ),
        (basis, antiWindup, kp, ki, kb, uMin, width, steps) => {
          const cfg: PiConfig = { basis, kp, ki, antiWindup, backCalcGain: kb, uMin, uMax: uMin + width };
          const coeffs = piCoefficients(cfg, TS_S);
          const state = createPiState(uMin);
          for (const [e, ff] of steps) {
            const u = piStep(cfg, coeffs, state, e, ff);
            expect(u).toBeGreaterThanOrEqual(cfg.uMin);
            expect(u).toBeLessThanOrEqual(cfg.uMax);
            expect(Number.isFinite(state.x)).toBe(true);
          }
        },
      ),
    );
  });

  it('after a reset to u0, zero error holds the output at u0 (bumpless start), with or without feed-forward', () => {
    for (const antiWindup of ['clamp', 'backCalc'] as const) {
      const cfg: PiConfig = { ...continuousCfg, antiWindup, backCalcGain: 0.3 };
      const coeffs = piCoefficients(cfg, TS_S);
      const state = createPiState(0);
      for (let k = 0; k < 50; k++) piStep(cfg, coeffs, state, 0.7); // arbitrary history
      piReset(state, 0.37);
      for (let k = 0; k < 1000; k++) expect(piStep(cfg, coeffs, state, 0)).toBe(0.37);
      piReset(state, 0.6, 0.25);
      for (let k = 0; k < 1000; k++) expect(piStep(cfg, coeffs, state, 0, 0.25)).toBe(0.6);
    }
  });

  it('PiController rescales its coefficients on a sample-period change without a bump', () => {
    const ctl = new PiController(continuousCfg, TS_S, 0.4);
    for (let k = 0; k < 10; k++) ctl.step(0);
    const before = ctl.coefficients;
    ctl.setSamplePeriod(TS_S / 2);
    expect(ctl.samplePeriodS).toBe(TS_S / 2);
    expect(ctl.coefficients.b0 + ctl.coefficients.b1).toBeCloseTo((before.b0 + before.b1) / 2, 15);
    expect(ctl.step(0)).toBe(0.4);
  });

  it('rejects a non-finite error or feed-forward, naming it', () => {
    const coeffs = piCoefficients(continuousCfg, TS_S);
    const state = createPiState(0);
    expect(() => piStep(continuousCfg, coeffs, state, Number.NaN)).toThrow(
      'pi.step.errorValue: must be finite, got NaN',
    );
    expect(() => piStep(continuousCfg, coeffs, state, 0, Infinity)).toThrow(
      'pi.step.feedForward: must be finite, got Infinity',
    );
    expect(() => piReset(state, Number.NaN)).toThrow('pi.reset.u0: must be finite, got NaN');
  });
});

describe('DelayLine', () => {
  it('delays by exactly N samples, emitting the initial value first', () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 0, max: 12 }),
        fc.double({ min: -1, max: 1, noNaN: true }),
        fc.array(fc.double({ min: -1, max: 1, noNaN: true }), { minLength: 0, maxLength: 80 }),
        (n, init, inputs) => {
          const line = new DelayLine(n, init);
          inputs.forEach((x, k) => {
            expect(line.push(x)).toBe(k >= n ? inputs[k - n] : init);
          });
        },
      ),
    );
  });

  it('N = 1 models the one-sample computation delay of a DSP loop; reset refills the line', () => {
    const line = new DelayLine(1, 0.5);
    expect(line.peek()).toBe(0.5);
    expect(line.push(0.1)).toBe(0.5);
    expect(line.push(0.2)).toBe(0.1);
    line.reset(0.3);
    expect(line.push(0.9)).toBe(0.3);
    expect(new DelayLine(0).peek()).toBeNaN();
  });

  it('rejects a negative or fractional length, naming it', () => {
    expect(() => new DelayLine(-1)).toThrow('delayLine.nSamples: must be an integer >= 0, got -1');
    expect(() => new DelayLine(1.5)).toThrow('delayLine.nSamples: must be an integer >= 0, got 1.5');
    expect(() => new DelayLine(2).push(Number.NaN)).toThrow('delayLine.push.value: must be finite, got NaN');
  });
});

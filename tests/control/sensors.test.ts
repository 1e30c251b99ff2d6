import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/control/rng.ts';
import {
  coolantHeatW,
  createPowerMonitor,
  createTemperatureSensor,
  lossEstimateErrorBoundW,
  lossEstimateW,
  powerMonitorReading,
  powerMonitorStep,
  powerMonitorUpdatePeriodS,
  powerMonitorUpdates,
  temperatureSensorReading,
  temperatureSensorStep,
  type PowerMonitorConfig,
  type TemperatureSensorConfig,
} from '../../src/control/sensors.ts';

const ideal: PowerMonitorConfig = {
  conversionTimeS: 1e-3,
  averagingCount: 1,
  lsbW: 0.025,
  gainError: 0,
  offsetW: 0,
  noiseRmsW: 0,
};

describe('power monitor', () => {
  it('reads NaN and has published nothing before the first full averaged set', () => {
    const mon = createPowerMonitor({ ...ideal, averagingCount: 4 }, new Rng(1));
    expect(powerMonitorReading(mon)).toBeNaN();
    powerMonitorStep(mon, 10, 3.9e-3);
    expect(powerMonitorReading(mon)).toBeNaN();
    expect(powerMonitorUpdates(mon)).toBe(0);
    powerMonitorStep(mon, 10, 0.1e-3);
    expect(powerMonitorUpdates(mon)).toBe(1);
    expect(powerMonitorReading(mon)).toBe(10);
  });

  it('publishes readings on a grid of exactly lsbW: consecutive readings of a slow ramp differ by 0 or one lsbW', () => {
    const mon = createPowerMonitor(ideal, new Rng(1));
    const readings: number[] = [];
    for (let k = 0; k < 400; k++) {
      powerMonitorStep(mon, 10 + 0.0037 * k, ideal.conversionTimeS); // slope < 1 lsb per conversion
      readings.push(powerMonitorReading(mon));
      expect(mon.code).toBe(Math.round(mon.code));
      expect(mon.reading).toBe(mon.code * ideal.lsbW);
    }
    const steps = readings.slice(1).map((r, i) => r - readings[i]).filter((d) => d !== 0);
    expect(steps.length).toBeGreaterThan(40);
    for (const d of steps) expect(d).toBeCloseTo(ideal.lsbW, 12);
    // In register counts the step is exactly one code.
    const codes: number[] = [];
    const mon2 = createPowerMonitor(ideal, new Rng(1));
    for (let k = 0; k < 400; k++) {
      powerMonitorStep(mon2, 10 + 0.0037 * k, ideal.conversionTimeS);
      codes.push(mon2.code);
    }
    expect(new Set(codes.slice(1).map((c, i) => c - codes[i]))).toEqual(new Set([0, 1]));
  });

  it('updates exactly every conversionTimeS·averagingCount when stepped finer than a conversion', () => {
    const cfg: PowerMonitorConfig = { ...ideal, conversionTimeS: 1.1e-3, averagingCount: 4 };
    expect(powerMonitorUpdatePeriodS(cfg)).toBeCloseTo(4.4e-3, 15);
    const mon = createPowerMonitor(cfg, new Rng(1));
    const updateSteps: number[] = [];
    for (let k = 1; k <= 44 * 50; k++) {
      const before = powerMonitorUpdates(mon);
      powerMonitorStep(mon, 5, 1e-4);
      if (powerMonitorUpdates(mon) !== before) updateSteps.push(k);
    }
    // 4.4 ms / 0.1 ms = 44 steps between readings.
    expect(updateSteps).toEqual(Array.from({ length: 50 }, (_, i) => 44 * (i + 1)));
  });

  it('updates exactly every conversionTimeS·averagingCount for steps incommensurate with or longer than a conversion', () => {
    const cfg: PowerMonitorConfig = { ...ideal, conversionTimeS: 1.1e-3, averagingCount: 4 };
    // dt = 0.37 ms: after step k, t = 37k·10⁻⁵ s and the count is floor(37k / 440).
    const a = createPowerMonitor(cfg, new Rng(1));
    for (let k = 1; k <= 3000; k++) {
      powerMonitorStep(a, 5, 0.37e-3);
      expect(powerMonitorUpdates(a)).toBe(Math.floor((37 * k) / 440));
    }
    // dt = 50 ms spans ~45 conversions: count floor(5000k / 440).
    const b = createPowerMonitor(cfg, new Rng(1));
    for (let k = 1; k <= 200; k++) {
      powerMonitorStep(b, 5, 50e-3);
      expect(powerMonitorUpdates(b)).toBe(Math.floor((5000 * k) / 440));
      expect(powerMonitorReading(b)).toBe(5);
    }
  });

  it('counts updates correctly for any partition of time into steps (property)', () => {
    const cfg: PowerMonitorConfig = { ...ideal, conversionTimeS: 1.1e-3, averagingCount: 4 };
    fc.assert(
      fc.property(fc.array(fc.integer({ min: 0, max: 2000 }), { minLength: 1, maxLength: 100 }), (steps10us) => {
        const mon = createPowerMonitor(cfg, new Rng(1));
        let total10us = 0;
        for (const n of steps10us) {
          powerMonitorStep(mon, 7, n * 1e-5);
          total10us += n;
          expect(powerMonitorUpdates(mon)).toBe(Math.floor(total10us / 440));
        }
      }),
    );
  });

  it('integrates the true power exactly across window boundaries within a step (time-weighted mean)', () => {
    const cfg: PowerMonitorConfig = { ...ideal, averagingCount: 2, lsbW: 1e-6 };
    const mon = createPowerMonitor(cfg, new Rng(1));
    powerMonitorStep(mon, 10, 0.25e-3);
    powerMonitorStep(mon, 30, 1.5e-3); // ends 0.75 ms into the second window
    expect(powerMonitorUpdates(mon)).toBe(0);
    powerMonitorStep(mon, 20, 0.25e-3);
    // Window 1: (10·0.25 + 30·0.75)/1 = 25 W; window 2: (30·0.75 + 20·0.25)/1 = 27.5 W; mean 26.25 W.
    expect(powerMonitorUpdates(mon)).toBe(1);
    expect(powerMonitorReading(mon)).toBeCloseTo(26.25, 9);
  });

  it('reads a constant input as input·(1 + gainError) + offsetW to within half an lsb (noise 0)', () => {
    for (const [p, g, off] of [
      [100, 0.005, 0.2],
      [100, -0.01, -0.5],
      [2500, 0.003, 1.25],
      [-40, 0.005, 0.1],
    ]) {
      const cfg: PowerMonitorConfig = { ...ideal, averagingCount: 16, lsbW: 0.01, gainError: g, offsetW: off };
      const mon = createPowerMonitor(cfg, new Rng(1));
      powerMonitorStep(mon, p, 16e-3);
      expect(powerMonitorUpdates(mon)).toBe(1);
      expect(Math.abs(powerMonitorReading(mon) - (p * (1 + g) + off))).toBeLessThanOrEqual(cfg.lsbW / 2 + 1e-12);
    }
  });

  it('with noise, the error of many readings has zero mean and RMS noiseRmsW within 4 standard errors', () => {
    const noiseRmsW = 0.5;
    const cfg: PowerMonitorConfig = { ...ideal, lsbW: 1e-4, noiseRmsW };
    const mon = createPowerMonitor(cfg, new Rng(20240601));
    const n = 4000;
    let sum = 0;
    let sumSq = 0;
    for (let k = 0; k < n; k++) {
      powerMonitorStep(mon, 50, cfg.conversionTimeS);
      const err = powerMonitorReading(mon) - 50;
      sum += err;
      sumSq += err * err;
    }
    expect(powerMonitorUpdates(mon)).toBe(n);
    const mean = sum / n;
    const sd = Math.sqrt((sumSq - n * mean * mean) / (n - 1));
    // Tolerances: 4 standard errors. SE(mean) = σ/√n; SE(sample s.d.) of normal data ≈ σ/√(2(n−1)).
    // Quantization adds lsb²/12 ≈ 8·10⁻¹⁰ W² of variance: negligible against σ² = 0.25 W².
    expect(Math.abs(mean)).toBeLessThan((4 * noiseRmsW) / Math.sqrt(n));
    expect(Math.abs(sd - noiseRmsW)).toBeLessThan((4 * noiseRmsW) / Math.sqrt(2 * (n - 1)));
  });

  it('gives the identical reading sequence for the same seed', () => {
    const cfg: PowerMonitorConfig = { ...ideal, averagingCount: 4, noiseRmsW: 0.3 };
    const sequence = (seed: number) => {
      const mon = createPowerMonitor(cfg, new Rng(seed));
      const out: number[] = [];
      for (let k = 0; k < 300; k++) {
        powerMonitorStep(mon, 20 + Math.sin(k / 10), 0.7e-3);
        out.push(powerMonitorReading(mon));
      }
      return out;
    };
    expect(sequence(5)).toEqual(sequence(5));
    expect(sequence(5)).not.toEqual(sequence(6));
  });

  it('rejects misuse, naming the value and the expectation', () => {
    expect(() => createPowerMonitor({ ...ideal, conversionTimeS: 0 }, new Rng(1))).toThrow(
      'powerMonitor.conversionTimeS: must be finite and > 0, got 0',
    );
    expect(() => createPowerMonitor({ ...ideal, averagingCount: 2.5 }, new Rng(1))).toThrow(
      'powerMonitor.averagingCount: must be an integer >= 1, got 2.5',
    );
    expect(() => createPowerMonitor({ ...ideal, noiseRmsW: -1 }, new Rng(1))).toThrow(
      'powerMonitor.noiseRmsW: must be finite and >= 0, got -1',
    );
    const mon = createPowerMonitor(ideal, new Rng(1));
    expect(() => powerMonitorStep(mon, Number.NaN, 1e-3)).toThrow('powerMonitor.step.truePowerW: must be finite, got NaN');
    expect(() => powerMonitorStep(mon, 1, -1e-3)).toThrow('powerMonitor.step.dtS: must be finite and >= 0, got -0.001');
  });
});

describe('loss estimate from input and output power monitors', () => {
  const pinCfg: PowerMonitorConfig = { ...ideal, averagingCount: 4, lsbW: 1e-3, gainError: 0.005 };
  const poutCfg: PowerMonitorConfig = { ...pinCfg, gainError: -0.005 };

  function estimateAt(pinW: number, efficiency: number): { estimateW: number; trueLossW: number } {
    const pin = createPowerMonitor(pinCfg, new Rng(1));
    const pout = createPowerMonitor(poutCfg, new Rng(2));
    powerMonitorStep(pin, pinW, 4e-3);
    powerMonitorStep(pout, pinW * efficiency, 4e-3);
    return {
      estimateW: lossEstimateW(powerMonitorReading(pin), powerMonitorReading(pout)),
      trueLossW: pinW * (1 - efficiency),
    };
  }

  it('is Pin − Pout, NaN until both monitors have published', () => {
    expect(lossEstimateW(105, 100)).toBe(5);
    expect(lossEstimateW(Number.NaN, 100)).toBeNaN();
    expect(() => lossEstimateW(Infinity, 1)).toThrow('lossEstimate.pinReadingW');
  });

  it('has an error that grows in proportion to throughput because gain errors act on Pin and Pout', () => {
    const low = estimateAt(100, 0.96);
    const high = estimateAt(1000, 0.96);
    const errLow = low.estimateW - low.trueLossW;
    const errHigh = high.estimateW - high.trueLossW;
    // Expected error gIn·Pin − gOut·Pout = 0.005·Pin + 0.005·0.96·Pin = 0.0098·Pin.
    expect(errLow).toBeCloseTo(0.98, 2);
    expect(errHigh).toBeCloseTo(9.8, 2);
    expect(errHigh / errLow).toBeCloseTo(10, 1);
    // Relative to the loss it does not shrink with throughput: ≈ 25 % of a 4 % loss at any power.
    expect(errHigh / high.trueLossW).toBeCloseTo(errLow / low.trueLossW, 2);
    // The worst-case bound covers the observed error and grows with throughput too.
    const boundLow = lossEstimateErrorBoundW(100, 96, pinCfg, poutCfg);
    const boundHigh = lossEstimateErrorBoundW(1000, 960, pinCfg, poutCfg);
    expect(Math.abs(errLow)).toBeLessThanOrEqual(boundLow);
    expect(Math.abs(errHigh)).toBeLessThanOrEqual(boundHigh);
    expect(boundHigh).toBeGreaterThan(9 * boundLow);
  });
});

describe('temperature sensor (first-order lag)', () => {
  const cfg: TemperatureSensorConfig = { tauS: 2, offsetK: 0, noiseRmsK: 0, lsbK: 0 };

  it('reaches 1 − e⁻¹ ≈ 63.2 % of a step after one time constant, in one step or many', () => {
    const coarse = createTemperatureSensor(cfg, new Rng(1), 300);
    temperatureSensorStep(coarse, 310, cfg.tauS);
    const fine = createTemperatureSensor(cfg, new Rng(1), 300);
    for (let k = 0; k < 1000; k++) temperatureSensorStep(fine, 310, cfg.tauS / 1000);
    const expected = 300 + 10 * (1 - Math.exp(-1)); // 306.321 K
    expect(temperatureSensorReading(coarse)).toBeCloseTo(expected, 10);
    expect(temperatureSensorReading(fine)).toBeCloseTo(expected, 10);
    expect((temperatureSensorReading(fine) - 300) / 10).toBeCloseTo(0.632, 3);
  });

  it('adds its offset and quantizes to lsbK', () => {
    const s = createTemperatureSensor({ ...cfg, offsetK: 0.3, lsbK: 0.0625 }, new Rng(1), 300);
    expect(temperatureSensorReading(s)).toBe(300.3125); // 300.3 rounded to 1/16 K
    temperatureSensorStep(s, 300, 1);
    expect(Number.isInteger(temperatureSensorReading(s) / 0.0625)).toBe(true);
  });

  it('with no lag (τ = 0) follows the input at once; same seed gives the same noisy readings', () => {
    const s = createTemperatureSensor({ ...cfg, tauS: 0 }, new Rng(1), 300);
    temperatureSensorStep(s, 320, 1e-3);
    expect(temperatureSensorReading(s)).toBe(320);
    const noisy = (seed: number) => {
      const t = createTemperatureSensor({ ...cfg, noiseRmsK: 0.1, lsbK: 0.01 }, new Rng(seed), 300);
      return Array.from({ length: 50 }, () => {
        temperatureSensorStep(t, 305, 0.1);
        return temperatureSensorReading(t);
      });
    };
    expect(noisy(3)).toEqual(noisy(3));
    expect(noisy(3)).not.toEqual(noisy(4));
  });

  it('rejects misuse, naming the value', () => {
    expect(() => createTemperatureSensor({ ...cfg, tauS: -1 }, new Rng(1), 300)).toThrow(
      'temperatureSensor.tauS: must be finite and >= 0, got -1',
    );
    const s = createTemperatureSensor(cfg, new Rng(1), 300);
    expect(() => temperatureSensorStep(s, Number.NaN, 1)).toThrow('temperatureSensor.step.trueK: must be finite, got NaN');
  });
});

describe('coolant heat meter', () => {
  it('computes Q = ṁ·cp·(Tout − Tin) (steady-flow energy balance)', () => {
    // Water (cp ≈ 4186 J/(kg·K)) at ṁ = 0.05 kg/s warmed by 4 K: 0.05·4186·4 = 837.2 W.
    expect(coolantHeatW(0.05, 4186, 298.15, 302.15)).toBeCloseTo(837.2, 9);
    expect(coolantHeatW(0, 4186, 298, 310)).toBe(0);
  });

  it('turns a sensor offset mismatch into a fixed heat error ṁ·cp·(offOut − offIn), independent of ΔT', () => {
    const mDot = 0.05;
    const cp = 4186;
    const inlet = createTemperatureSensor({ tauS: 0, offsetK: 0.1, noiseRmsK: 0, lsbK: 0 }, new Rng(1), 300);
    const outlet = createTemperatureSensor({ tauS: 0, offsetK: -0.05, noiseRmsK: 0, lsbK: 0 }, new Rng(2), 300);
    for (const dT of [1, 5, 20]) {
      temperatureSensorStep(inlet, 300, 1);
      temperatureSensorStep(outlet, 300 + dT, 1);
      const q = coolantHeatW(mDot, cp, temperatureSensorReading(inlet), temperatureSensorReading(outlet));
      expect(q - mDot * cp * dT).toBeCloseTo(mDot * cp * (-0.05 - 0.1), 6);
    }
  });

  it('rejects negative flow or non-positive heat capacity, naming the value', () => {
    expect(() => coolantHeatW(-0.1, 4186, 300, 301)).toThrow('coolantHeat.massFlowKgPerS: must be finite and >= 0, got -0.1');
    expect(() => coolantHeatW(0.1, 0, 300, 301)).toThrow('coolantHeat.cpJPerKgK: must be finite and > 0, got 0');
  });
});

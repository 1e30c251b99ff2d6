/**
 * Shared test helpers: fast-check generators of physically plausible thermal specs (built from
 * bounded integers scaled to physical ranges, so no subnormals or absurd magnitudes), and a
 * fixed-step RK4 integrator independent of the model's own discretization.
 */

import fc from 'fast-check';
import type { DeviceThermalSpec, ThermalInputs, ThermalNetwork, ThermalSpec } from '../../../src/model/thermal/network.ts';
import { thermalDerivatives } from '../../../src/model/thermal/network.ts';

/** mantissa 1..9 × 10^exp, exp in [lo, hi]. */
export const decade = (lo: number, hi: number): fc.Arbitrary<number> =>
  fc.tuple(fc.integer({ min: 1, max: 9 }), fc.integer({ min: lo, max: hi })).map(([m, e]) => m * 10 ** e);

/** 0.005 … 0.3 K/W per term: TO-247-class junction–case totals are 0.2–0.6 K/W (REFERENCES.md). */
const rTerm = fc.integer({ min: 5, max: 300 }).map((k) => k / 1000);

const junctionCase: fc.Arbitrary<DeviceThermalSpec['junctionCase']> = fc.oneof(
  fc.integer({ min: 1, max: 4 }).chain((n) =>
    fc.record({
      kind: fc.constant('foster' as const),
      rKPerW: fc.array(rTerm, { minLength: n, maxLength: n }),
      tauS: fc.array(decade(-5, 0), { minLength: n, maxLength: n }),
    }),
  ),
  fc.integer({ min: 1, max: 4 }).chain((n) =>
    fc.record({
      kind: fc.constant('cauer' as const),
      rKPerW: fc.array(rTerm, { minLength: n, maxLength: n }),
      cJPerK: fc.array(decade(-4, 1), { minLength: n, maxLength: n }),
    }),
  ),
);

export const specArb: fc.Arbitrary<ThermalSpec> = fc
  .record({
    devices: fc.array(
      fc.record({ junctionCase, caseSinkKPerW: fc.integer({ min: 0, max: 50 }).map((k) => k / 100) }),
      { minLength: 1, maxLength: 3 },
    ),
    cth: fc.integer({ min: 50, max: 1000 }),
    rSinkCoolant: fc.integer({ min: 10, max: 500 }).map((k) => k / 1000),
    rSinkAmbient: fc.oneof(fc.constant(Infinity), fc.integer({ min: 5, max: 200 }).map((k) => k / 10)),
    massKg: fc.integer({ min: 50, max: 2000 }).map((k) => k / 1000),
    cp: fc.integer({ min: 3300, max: 4200 }),
  })
  .map(({ devices, cth, rSinkCoolant, rSinkAmbient, massKg, cp }) => ({
    devices: devices.map((d, i) => ({ name: `dev${i}`, ...d })),
    heatsink: { cthJPerK: cth, rSinkCoolantKPerW: rSinkCoolant, rSinkAmbientKPerW: rSinkAmbient },
    coolant: { massKg, cpJPerKgK: cp },
  }));

/** Inputs for a given device count; flow ≥ 0.01 kg/s so a steady state always exists. */
export const inputsArb = (nDevices: number, minFlowG = 10): fc.Arbitrary<ThermalInputs> =>
  fc.record({
    deviceLossW: fc.array(fc.integer({ min: 0, max: 2000 }).map((k) => k / 10), { minLength: nDevices, maxLength: nDevices }),
    sinkExtraW: fc.integer({ min: 0, max: 500 }),
    inletC: fc.integer({ min: -20, max: 80 }),
    flowKgPerS: fc.integer({ min: minFlowG, max: 300 }).map((g) => g / 1000),
    ambientC: fc.integer({ min: -30, max: 50 }),
  });

/** Classic fixed-step RK4 on thermalDerivatives, returning the state after `steps` steps of hS. */
export function integrateRk4(net: ThermalNetwork, t0C: Float64Array, inputs: ThermalInputs, hS: number, steps: number): Float64Array {
  const n = net.nNodes;
  const y = Float64Array.from(t0C);
  const k1 = new Float64Array(n);
  const k2 = new Float64Array(n);
  const k3 = new Float64Array(n);
  const k4 = new Float64Array(n);
  const tmp = new Float64Array(n);
  for (let s = 0; s < steps; s++) {
    thermalDerivatives(net, y, inputs, k1);
    for (let i = 0; i < n; i++) tmp[i] = y[i] + 0.5 * hS * k1[i];
    thermalDerivatives(net, tmp, inputs, k2);
    for (let i = 0; i < n; i++) tmp[i] = y[i] + 0.5 * hS * k2[i];
    thermalDerivatives(net, tmp, inputs, k3);
    for (let i = 0; i < n; i++) tmp[i] = y[i] + hS * k3[i];
    thermalDerivatives(net, tmp, inputs, k4);
    for (let i = 0; i < n; i++) y[i] += (hS / 6) * (k1[i] + 2 * k2[i] + 2 * k3[i] + k4[i]);
  }
  return y;
}

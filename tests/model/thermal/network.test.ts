import fc from 'fast-check';
import { inverse, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import {
  buildThermalNetwork,
  discretizeThermal,
  heatInputW,
  heatToAmbientW,
  heatToCoolantW,
  stepThermalDiscrete,
  storedEnergyJ,
  thermalDerivatives,
  thermalInputVector,
  thermalSteadyState,
  thermalSystemMatrices,
  type ThermalInputs,
  type ThermalNetwork,
  type ThermalSpec,
} from '../../../src/model/thermal/network.ts';
import { symmetricEigen } from '../../../src/model/thermal/symmetricEigen.ts';
import { inputsArb, integrateRk4, specArb } from './helpers.ts';

/** A bare heatsink (no devices, no cold plate): one RC stage C = cth, R = rSinkAmbient. */
function singleStage(rKPerW: number, cJPerK: number): ThermalNetwork {
  return buildThermalNetwork({
    devices: [],
    heatsink: { cthJPerK: cJPerK, rSinkCoolantKPerW: Infinity, rSinkAmbientKPerW: rKPerW },
    coolant: { massKg: 1, cpJPerKgK: 3400 },
  });
}

function uniform(net: ThermalNetwork, tempC: number): Float64Array {
  return new Float64Array(net.nNodes).fill(tempC);
}

function runDiscrete(net: ThermalNetwork, inputs: ThermalInputs, t0: Float64Array, dtS: number, steps: number): Float64Array[] {
  const disc = discretizeThermal(net, inputs.flowKgPerS, dtS);
  const u = new Float64Array(disc.nInputs);
  thermalInputVector(net, inputs, u);
  const out = [Float64Array.from(t0)];
  for (let k = 0; k < steps; k++) {
    const next = new Float64Array(net.nNodes);
    stepThermalDiscrete(disc, out[k], u, next);
    out.push(next);
  }
  return out;
}

const twoDeviceSpec: ThermalSpec = {
  devices: [
    { name: 'hs', junctionCase: { kind: 'foster', rKPerW: [0.2, 0.3], tauS: [1e-3, 0.1] }, caseSinkKPerW: 0.3 },
    { name: 'ls', junctionCase: { kind: 'cauer', rKPerW: [0.1, 0.25], cJPerK: [0.01, 0.5] }, caseSinkKPerW: 0.2 },
  ],
  heatsink: { cthJPerK: 448, rSinkCoolantKPerW: 0.05, rSinkAmbientKPerW: 5 },
  coolant: { massKg: 0.3, cpJPerKgK: 3400 },
};

describe('single RC stage step response', () => {
  // T(t) = P·R·(1 − e^(−t/RC)): analytic first-order step response (common textbook result).
  const rKPerW = 0.8;
  const cJPerK = 50;
  const tauS = rKPerW * cJPerK;
  const powerW = 25;
  const ambientC = 20;
  const inputs: ThermalInputs = { deviceLossW: [], sinkExtraW: powerW, inletC: 20, flowKgPerS: 0, ambientC };
  const analytic = (tS: number) => powerW * rKPerW * -Math.expm1(-tS / tauS);

  it('is exact with the ZOH discretization', () => {
    // ZOH is exact for a constant input; rel 1e-12 of P·R allows rounding over 50 steps.
    const net = singleStage(rKPerW, cJPerK);
    const dtS = tauS / 10;
    const traj = runDiscrete(net, inputs, uniform(net, ambientC), dtS, 50);
    traj.forEach((t, k) => {
      expect(Math.abs(t[net.layout.heatsink] - ambientC - analytic(k * dtS))).toBeLessThanOrEqual(1e-12 * powerW * rKPerW);
    });
  });

  it('matches RK4 integration of thermalDerivatives', () => {
    // RK4 with h = τ/100 has global error ~ (h/τ)^4 ≈ 1e-8 of P·R; tolerance 1e-7 of P·R.
    const net = singleStage(rKPerW, cJPerK);
    const hS = tauS / 100;
    for (const steps of [50, 100, 300]) {
      const t = integrateRk4(net, uniform(net, ambientC), inputs, hS, steps);
      expect(Math.abs(t[net.layout.heatsink] - ambientC - analytic(steps * hS))).toBeLessThanOrEqual(1e-7 * powerW * rKPerW);
    }
  });
});

describe('heatsink time constant', () => {
  it('is Rth·m·cp = 224 s for 0.5 K/W and 0.5 kg of aluminium', () => {
    // REFERENCES.md thermal: τ = Rth·m·cp, 0.5 K/W · 0.5 kg · 896 J/(kg·K) = 224 s
    // (aluminium cp ≈ 896 J/(kg·K) from handbook memory). rel 1e-12: exact arithmetic apart from rounding.
    const net = singleStage(0.5, 0.5 * 896);
    const { a, nNodes } = thermalSystemMatrices(net, 0);
    const hs = net.layout.heatsink;
    expect(Math.abs(-1 / a[hs * nNodes + hs] - 224)).toBeLessThanOrEqual(224 * 1e-12);
    // After one τ the rise reaches 1 − 1/e of its final value (definition of τ); rel 1e-12.
    const inputs = { deviceLossW: [], sinkExtraW: 100, inletC: 25, flowKgPerS: 0, ambientC: 25 };
    const [, oneTau] = runDiscrete(net, inputs, uniform(net, 25), 224, 1);
    expect(Math.abs((oneTau[hs] - 25) / (100 * 0.5) - (1 - Math.exp(-1)))).toBeLessThanOrEqual(1e-12);
  });
});

describe('coolant heat pick-up', () => {
  it('raises 10 L/min of water–glycol by 8.29 K when carrying 5 kW', () => {
    // REFERENCES.md thermal (derived from Q = ṁ·cp·ΔT): ρ 1065 kg/m³, cp 3400 J/(kg·K),
    // 10 L/min → ṁ = 0.1775 kg/s, ΔT = 5000/603.5 = 8.285 K, printed as 8.29 (abs 0.005 tolerance).
    const flowKgPerS = (10e-3 / 60) * 1065;
    const spec: ThermalSpec = { ...twoDeviceSpec, heatsink: { ...twoDeviceSpec.heatsink, rSinkAmbientKPerW: Infinity } };
    spec.coolant = { massKg: 0.3, cpJPerKgK: 3400 };
    const net = buildThermalNetwork(spec);
    const inputs = { deviceLossW: [2000, 2500], sinkExtraW: 500, inletC: 40, flowKgPerS, ambientC: 25 };
    const t = thermalSteadyState(net, inputs);
    const dTempK = t[net.layout.coolant] - inputs.inletC;
    expect(Math.abs(dTempK - 8.29)).toBeLessThanOrEqual(0.005);
    // Same quantity against the exact formula, rel 1e-12 (linear solve rounding only).
    expect(Math.abs(dTempK - 5000 / (flowKgPerS * 3400))).toBeLessThanOrEqual(1e-12 * dTempK);
    expect(Math.abs(heatToCoolantW(net, t, inputs.inletC, flowKgPerS) - 5000)).toBeLessThanOrEqual(5000 * 1e-12);
  });
});

describe('steady state', () => {
  it('adds the device path resistances to the heatsink rise', () => {
    // Series thermal resistances at DC (analytic): Tj − Tsink = P·(Σ R_jc + R_cs). The Foster device
    // checks that the Cauer conversion kept Σ R. rel 1e-12.
    const net = buildThermalNetwork(twoDeviceSpec);
    const t = thermalSteadyState(net, { deviceLossW: [40, 0], sinkExtraW: 10, inletC: 50, flowKgPerS: 0.1, ambientC: 25 });
    const hs = t[net.layout.heatsink];
    expect(Math.abs(t[net.layout.junction[0]] - hs - 40 * 0.8)).toBeLessThanOrEqual(32 * 1e-12 + 1e-12);
    expect(Math.abs(t[net.layout.junction[1]] - hs)).toBeLessThanOrEqual(1e-12 * Math.abs(hs));
  });

  it('steady-state-only network gives the full network\'s junction, heatsink and coolant temperatures (property)', () => {
    // Series resistances at DC (analytic): a Foster network and its Cauer ladder share Σ Ri, so
    // lumping each junction–case path into one stage changes no steady-state temperature of
    // interest. Tolerance 1e-9 K (linear solves of different sizes, rounding only).
    fc.assert(
      fc.property(specArb.chain((spec) => fc.tuple(fc.constant(spec), inputsArb(spec.devices.length))), ([spec, inputs]) => {
        const full = buildThermalNetwork(spec);
        const lumped = buildThermalNetwork(spec, { steadyStateOnly: true });
        expect(lumped.nNodes).toBe(spec.devices.length + 2);
        const a = thermalSteadyState(full, inputs);
        const b = thermalSteadyState(lumped, inputs);
        const pick = (net: ThermalNetwork, t: Float64Array): number[] => [...net.layout.junction.map((j) => t[j]), t[net.layout.heatsink], t[net.layout.coolant]];
        const ta = pick(full, a);
        const tb = pick(lumped, b);
        ta.forEach((v, i) => expect(Math.abs(v - tb[i])).toBeLessThanOrEqual(1e-9 * Math.max(1, Math.abs(v))));
      }),
    );
  });

  it('sends all injected heat out through coolant and ambient (property)', () => {
    // First law at steady state (analytic); rel 1e-9 as required.
    fc.assert(
      fc.property(specArb.chain((spec) => fc.tuple(fc.constant(spec), inputsArb(spec.devices.length))), ([spec, inputs]) => {
        const net = buildThermalNetwork(spec);
        const t = thermalSteadyState(net, inputs);
        const out = heatToCoolantW(net, t, inputs.inletC, inputs.flowKgPerS) + heatToAmbientW(net, t, inputs.ambientC);
        const inW = heatInputW(inputs);
        const scale = Math.max(inW, 1);
        expect(Math.abs(out - inW)).toBeLessThanOrEqual(1e-9 * scale);
      }),
      { numRuns: 200 },
    );
  });

  it('raises the junction temperature when its device loss rises (property)', () => {
    // G is an M-matrix, so G⁻¹ ≥ 0 and its diagonal is > 0: more loss means strictly hotter junction
    // and no node cooler (analytic). Slack 1e-9 K for rounding on the other nodes.
    const arb = specArb.chain((spec) =>
      fc.tuple(
        fc.constant(spec),
        inputsArb(spec.devices.length),
        fc.integer({ min: 0, max: spec.devices.length - 1 }),
        fc.integer({ min: 1, max: 1000 }).map((k) => k / 10),
      ),
    );
    fc.assert(
      fc.property(arb, ([spec, inputs, d, extraW]) => {
        const net = buildThermalNetwork(spec);
        const before = thermalSteadyState(net, inputs);
        const loss = Array.from(inputs.deviceLossW);
        loss[d] += extraW;
        const after = thermalSteadyState(net, { ...inputs, deviceLossW: loss });
        const j = net.layout.junction[d];
        expect(after[j]).toBeGreaterThan(before[j]);
        for (let i = 0; i < net.nNodes; i++) expect(after[i]).toBeGreaterThanOrEqual(before[i] - 1e-9);
      }),
      { numRuns: 150 },
    );
  });

  it('is reached by discrete ZOH stepping (property)', () => {
    // T[k] → (I − Ad)⁻¹·Bd·u = steady state (analytic fixed point). The step is a fraction of Σ τk
    // = trace(−A⁻¹) ≥ slowest τ, and 40·Σ τk of simulated time leaves < e^(−40) of the transient.
    // Tolerance 1e-8 of the largest rise: rounding in Ad over ≤ 400 steps.
    const arb = specArb.chain((spec) =>
      fc.tuple(fc.constant(spec), inputsArb(spec.devices.length), fc.integer({ min: 1, max: 10 })),
    );
    fc.assert(
      fc.property(arb, ([spec, inputs, tenths]) => {
        const net = buildThermalNetwork(spec);
        const sys = thermalSystemMatrices(net, inputs.flowKgPerS);
        const aInv = inverse(new Matrix(Array.from({ length: net.nNodes }, (_, i) => Array.from(sys.a.subarray(i * net.nNodes, (i + 1) * net.nNodes)))));
        let tauSumS = 0;
        for (let i = 0; i < net.nNodes; i++) tauSumS -= aInv.get(i, i);
        const dtS = (tauSumS * tenths) / 10;
        const steps = Math.ceil(40 / (tenths / 10));
        const ss = thermalSteadyState(net, inputs);
        const t0 = uniform(net, inputs.ambientC);
        const traj = runDiscrete(net, inputs, t0, dtS, steps);
        const last = traj[traj.length - 1];
        let scale = 1;
        for (let i = 0; i < net.nNodes; i++) scale = Math.max(scale, Math.abs(ss[i] - t0[i]));
        for (let i = 0; i < net.nNodes; i++) expect(Math.abs(last[i] - ss[i])).toBeLessThanOrEqual(1e-8 * scale);
      }),
      { numRuns: 100 },
    );
  });
});

describe('energy conservation', () => {
  it('balances stored energy against heat in and out at every instant (property)', () => {
    // Σ Ci·dTi/dt = P_in − P_coolant − P_ambient (first law, analytic); rel 1e-12 of the largest term.
    const arb = specArb.chain((spec) =>
      fc.tuple(
        fc.constant(spec),
        inputsArb(spec.devices.length, 0),
        fc.array(fc.integer({ min: -40, max: 200 }), { minLength: 40, maxLength: 40 }),
      ),
    );
    fc.assert(
      fc.property(arb, ([spec, inputs, temps]) => {
        const net = buildThermalNetwork(spec);
        const tempC = Float64Array.from({ length: net.nNodes }, (_, i) => temps[i % temps.length]);
        const dTdt = new Float64Array(net.nNodes);
        thermalDerivatives(net, tempC, inputs, dTdt);
        let dEdt = 0;
        let scale = Math.max(1, heatInputW(inputs));
        for (let i = 0; i < net.nNodes; i++) {
          dEdt += net.cJPerK[i] * dTdt[i];
          scale = Math.max(scale, Math.abs(net.cJPerK[i] * dTdt[i]));
        }
        const outW = heatToCoolantW(net, tempC, inputs.inletC, inputs.flowKgPerS) + heatToAmbientW(net, tempC, inputs.ambientC);
        expect(Math.abs(dEdt - (heatInputW(inputs) - outW))).toBeLessThanOrEqual(1e-12 * scale);
      }),
      { numRuns: 200 },
    );
  });

  it('conserves energy over a discrete run with changing inputs and flow (property)', () => {
    // Σ P_in·dt = ΔE_stored + ∫ heat out (first law). ∫T over each step is computed by the test's
    // own modal solution (integrateStateOverStep). The tolerance is relative to the magnitudes that
    // enter the arithmetic before cancelling (absolute temperatures times C or ṁ·cp·dt): rel 1e-11
    // of that scale (observed below 1e-13 over 600 runs).
    const arb = specArb.chain((spec) =>
      fc.tuple(
        fc.constant(spec),
        fc.array(inputsArb(spec.devices.length, 0), { minLength: 1, maxLength: 6 }),
        fc.integer({ min: 1, max: 600 }),
      ),
    );
    fc.assert(
      fc.property(arb, ([spec, inputList, dtDeciS]) => {
        const net = buildThermalNetwork(spec);
        const n = net.nNodes;
        const dtS = dtDeciS / 10;
        const { coolant, heatsink } = net.layout;
        let t = uniform(net, 25);
        let inJ = 0;
        let outJ = 0;
        let scaleJ = 0;
        const storedScaleJ = (temps: Float64Array) => temps.reduce((acc, x, i) => acc + net.cJPerK[i] * Math.abs(x), 0);
        for (const inputs of inputList) {
          const disc = discretizeThermal(net, inputs.flowKgPerS, dtS);
          const u = new Float64Array(disc.nInputs);
          thermalInputVector(net, inputs, u);
          const next = new Float64Array(n);
          stepThermalDiscrete(disc, t, u, next);
          const integralKS = integrateStateOverStep(net, inputs.flowKgPerS, t, u, dtS);
          const gStream = inputs.flowKgPerS * net.coolantCpJPerKgK;
          const gAmb = net.gSinkAmbientWPerK;
          inJ += heatInputW(inputs) * dtS;
          outJ += gStream * (integralKS[coolant] - inputs.inletC * dtS) + gAmb * (integralKS[heatsink] - inputs.ambientC * dtS);
          scaleJ = Math.max(
            scaleJ,
            Math.abs(heatInputW(inputs) * dtS),
            gStream * (Math.abs(integralKS[coolant]) + Math.abs(inputs.inletC * dtS)),
            gAmb * (Math.abs(integralKS[heatsink]) + Math.abs(inputs.ambientC * dtS)),
            storedScaleJ(t),
            storedScaleJ(next),
          );
          t = next;
        }
        const dStoredJ = storedEnergyJ(net, t, 25); // started uniform at 25 °C
        expect(Math.abs(inJ - dStoredJ - outJ)).toBeLessThanOrEqual(1e-11 * scaleJ);
      }),
      { numRuns: 100 },
    );
  });
});

/**
 * ∫0^dt T(τ)dτ for constant u by a modal solution written here, separately from the model's
 * discretization: y = Qᵀ·√C·T obeys y′ = −μ·y + f, so ∫y = y0·φ + f·(dt − φ)/μ with
 * φ = (1 − e^(−μ·dt))/μ (series for small μ·dt). It uses the project's Jacobi eigen-solver
 * (checked on its own in linalg.test.ts): ml-matrix's tql2 only resolves the slow eigenvalues to
 * an absolute eps·‖M‖, measured 2e-9 relative on a stiff case, which would swamp a 1e-9 check.
 */
function integrateStateOverStep(net: ThermalNetwork, flowKgPerS: number, t0: Float64Array, u: Float64Array, dtS: number): Float64Array {
  const { a, b, nNodes: n, nInputs: m } = thermalSystemMatrices(net, flowKgPerS);
  const sq = Array.from(net.cJPerK, Math.sqrt);
  const sym = new Float64Array(n * n);
  for (let i = 0; i < n; i++)
    for (let j = 0; j < n; j++) sym[i * n + j] = (-net.cJPerK[i] * a[i * n + j] - net.cJPerK[j] * a[j * n + i]) / 2 / (sq[i] * sq[j]);
  const { values: mu, vectors: q } = symmetricEigen(sym, n);
  const integ = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    let y0 = 0;
    let f = 0;
    for (let r = 0; r < n; r++) {
      y0 += q[r * n + k] * sq[r] * t0[r];
      let br = 0;
      for (let j = 0; j < m; j++) br += b[r * m + j] * u[j];
      f += q[r * n + k] * sq[r] * br;
    }
    const x = mu[k] * dtS;
    const phi = Math.abs(x) < 1e-8 ? dtS * (1 - x / 2) : -Math.expm1(-x) / mu[k];
    const forced = Math.abs(x) < 1e-4 ? dtS * dtS * (0.5 - x / 6 + (x * x) / 24) : (dtS - phi) / mu[k];
    integ[k] = y0 * phi + f * forced;
  }
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    let s = 0;
    for (let k = 0; k < n; k++) s += q[i * n + k] * integ[k];
    out[i] = s / sq[i];
  }
  return out;
}

describe('network structure', () => {
  it('converts Foster chains to Cauer and lays out nodes per device', () => {
    const net = buildThermalNetwork(twoDeviceSpec);
    expect(net.nNodes).toBe(2 + 2 + 2);
    expect(net.layout.junction).toEqual([0, 2]);
    expect(net.layout.heatsink).toBe(4);
    expect(net.layout.coolant).toBe(5);
    // Foster→Cauer reference ladder (REFERENCES.md), rel 1e-5 (printed to 6 digits).
    expect(Math.abs(net.cJPerK[0] / 0.0049261 - 1)).toBeLessThanOrEqual(1e-5);
    expect(Math.abs(net.cJPerK[5] - 0.3 * 3400)).toBeLessThanOrEqual(1e-9);
    for (const c of net.cJPerK) expect(c).toBeGreaterThan(0);
    expect(Object.isFrozen(net)).toBe(true);
    expect(Object.isFrozen(net.layout)).toBe(true);
  });
});

describe('thermal misuse', () => {
  const withDevice = (patch: object): ThermalSpec =>
    ({ ...twoDeviceSpec, devices: [{ ...twoDeviceSpec.devices[0], ...patch }, twoDeviceSpec.devices[1]] }) as ThermalSpec;

  it.each([
    [withDevice({ junctionCase: { kind: 'foster', rKPerW: [0.2, -2], tauS: [1e-3, 0.1] } }), 'spec.devices[0].junctionCase.rKPerW[1]: must be a finite number > 0, got -2'],
    [withDevice({ junctionCase: { kind: 'foster', rKPerW: [0.2], tauS: [1e-3, 0.1] } }), 'spec.devices[0].junctionCase.tauS: must have the same length as rKPerW (1), got 2'],
    [withDevice({ junctionCase: { kind: 'cauer', rKPerW: [0.2], cJPerK: [0] } }), 'spec.devices[0].junctionCase.cJPerK[0]: must be a finite number > 0, got 0'],
    [withDevice({ junctionCase: { kind: 'spice', rKPerW: [0.2] } }), "spec.devices[0].junctionCase.kind: must be 'foster' or 'cauer', got \"spice\""],
    [withDevice({ junctionCase: { kind: 'cauer', rKPerW: [1e-320], cJPerK: [1] } }), 'spec.devices[0].junctionCase.rKPerW[0]: must be within'],
    [withDevice({ caseSinkKPerW: NaN }), 'spec.devices[0].caseSinkKPerW: must be a finite number >= 0, got NaN'],
    [withDevice({ name: 'ls' }), 'spec.devices[1].name: must be unique, got duplicate "ls"'],
    [withDevice({ name: '' }), 'spec.devices[0].name: must be a non-empty string'],
    [{ ...twoDeviceSpec, heatsink: { ...twoDeviceSpec.heatsink, cthJPerK: 0 } }, 'spec.heatsink.cthJPerK: must be a finite number > 0, got 0'],
    [{ ...twoDeviceSpec, heatsink: { ...twoDeviceSpec.heatsink, rSinkCoolantKPerW: -1 } }, 'spec.heatsink.rSinkCoolantKPerW: must be > 0'],
    [{ ...twoDeviceSpec, heatsink: { ...twoDeviceSpec.heatsink, rSinkAmbientKPerW: NaN } }, 'spec.heatsink.rSinkAmbientKPerW: must be > 0'],
    [{ ...twoDeviceSpec, coolant: { massKg: 0, cpJPerKgK: 3400 } }, 'spec.coolant.massKg: must be a finite number > 0, got 0'],
    [{ ...twoDeviceSpec, devices: 'none' }, 'spec.devices: must be an array'],
  ])('rejects a bad spec (%#)', (spec, message) => {
    expect(() => buildThermalNetwork(spec as ThermalSpec)).toThrow(message);
  });

  it('rejects bad inputs and impossible steady states', () => {
    const net = buildThermalNetwork({ ...twoDeviceSpec, heatsink: { ...twoDeviceSpec.heatsink, rSinkAmbientKPerW: Infinity } });
    const inputs = { deviceLossW: [10, 10], sinkExtraW: 0, inletC: 40, flowKgPerS: 0, ambientC: 25 };
    expect(() => thermalSteadyState(net, inputs)).toThrow(/no steady state.*inputs\.flowKgPerS = 0.*rSinkAmbientKPerW = Infinity/);
    expect(() => thermalSteadyState(net, { ...inputs, deviceLossW: [10] })).toThrow(/inputs\.deviceLossW: must have one entry per device \(2\), got 1/);
    expect(() => thermalSteadyState(net, { ...inputs, flowKgPerS: -0.1 })).toThrow(/inputs\.flowKgPerS: must be a finite number >= 0, got -0\.1/);
    const out = new Float64Array(net.nNodes);
    expect(() => thermalDerivatives(net, new Float64Array(3), inputs, out)).toThrow(/tempC: must have length nNodes = 6, got 3/);
    expect(() => thermalDerivatives(net, out, { ...inputs, deviceLossW: [NaN, 1] }, new Float64Array(6))).toThrow(/inputs\.deviceLossW\[0\]: must be a finite number, got NaN/);
    expect(() => discretizeThermal(net, 0.1, 0)).toThrow(/dtS: must be a finite number > 0, got 0/);
    const disc = discretizeThermal(net, 0.1, 1);
    const t = new Float64Array(6);
    expect(() => stepThermalDiscrete(disc, t, new Float64Array(disc.nInputs), t)).toThrow(/out: must not overlap tempC/);
    const airOnly = buildThermalNetwork({ ...twoDeviceSpec, heatsink: { ...twoDeviceSpec.heatsink, rSinkCoolantKPerW: Infinity } });
    expect(() => thermalSteadyState(airOnly, inputs)).toThrow(/coolant node is isolated/);
  });
});

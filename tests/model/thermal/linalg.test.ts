import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { solveLinear } from '../../../src/model/thermal/denseLinalg.ts';
import { rationalFromNumber, rationalToNumber, ratDiv, ratMul } from '../../../src/model/thermal/exactRational.ts';
import { expm, zohDiscretize } from '../../../src/model/thermal/matrixExponential.ts';
import { buildThermalNetwork, discretizeThermal, thermalSystemMatrices } from '../../../src/model/thermal/network.ts';
import { symmetricEigen } from '../../../src/model/thermal/symmetricEigen.ts';

describe('exact rationals', () => {
  it('round-trips doubles exactly (property)', () => {
    // Every finite double is a dyadic rational; conversion back must be the identity.
    const dyadic = fc
      .tuple(fc.integer({ min: 1, max: 2 ** 53 - 1 }), fc.integer({ min: -200, max: 200 }), fc.boolean())
      .map(([m, e, neg]) => (neg ? -1 : 1) * m * 2 ** e);
    fc.assert(fc.property(dyadic, (x) => rationalToNumber(rationalFromNumber(x)) === x));
  });

  it('rounds 1/3 to the nearest double', () => {
    expect(rationalToNumber(ratDiv(rationalFromNumber(1), rationalFromNumber(3)))).toBe(1 / 3);
    expect(rationalToNumber(ratMul(rationalFromNumber(0.1), rationalFromNumber(3)))).toBe(0.30000000000000004);
  });

  it('rounds correctly just above a midpoint and regardless of reduction', () => {
    // IEEE 754 round-to-nearest (definition): 1 + 2^-53 is the midpoint between 1 and 1 + 2^-52;
    // anything above it rounds up, the midpoint itself rounds to even (1). A 64-bit truncated
    // quotient loses the 2^-120 and would land on the midpoint.
    const twoTo = (e: number): bigint => 1n << BigInt(e);
    const above = { num: twoTo(120) + twoTo(67) + 1n, den: twoTo(120) };
    expect(rationalToNumber(above)).toBe(1 + 2 ** -52);
    expect(rationalToNumber({ num: twoTo(53) + 1n, den: twoTo(53) })).toBe(1);
    // Same value, unreduced (×3/3): same double.
    expect(rationalToNumber({ num: 3n * above.num, den: 3n * above.den })).toBe(1 + 2 ** -52);
    expect(rationalToNumber({ num: -7n * 10n, den: 7n * 3n })).toBe(-10 / 3);
  });
});

describe('symmetric eigen-decomposition', () => {
  it('reconstructs random symmetric matrices with orthonormal vectors (property)', () => {
    // A = QΛQᵀ and QᵀQ = I (definition); tolerance 1e-13·‖A‖ for rounding of O(n) rotations.
    const arb = fc.integer({ min: 1, max: 8 }).chain((n) =>
      fc.tuple(fc.constant(n), fc.array(fc.integer({ min: -1000, max: 1000 }), { minLength: n * n, maxLength: n * n })),
    );
    fc.assert(
      fc.property(arb, ([n, raw]) => {
        const a = new Float64Array(n * n);
        for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) a[i * n + j] = (raw[i * n + j] + raw[j * n + i]) / 100;
        const norm = Math.max(1, ...Array.from(a, Math.abs));
        const { values, vectors: q } = symmetricEigen(a, n);
        for (let k = 1; k < n; k++) expect(values[k]).toBeGreaterThanOrEqual(values[k - 1]);
        for (let i = 0; i < n; i++)
          for (let j = 0; j < n; j++) {
            let rec = 0;
            let orth = 0;
            for (let k = 0; k < n; k++) {
              rec += q[i * n + k] * values[k] * q[j * n + k];
              orth += q[k * n + i] * q[k * n + j];
            }
            expect(Math.abs(rec - a[i * n + j])).toBeLessThanOrEqual(1e-13 * norm * n);
            expect(Math.abs(orth - (i === j ? 1 : 0))).toBeLessThanOrEqual(1e-14 * n);
          }
      }),
    );
  });

  it('keeps the small eigenvalue of a graded matrix to full relative accuracy', () => {
    // 2×2 closed form: λmax = (a+c)/2 + √(((a−c)/2)² + b²), λmin = (ac − b²)/λmax (no cancellation);
    // a = 1e8, b = 1e3, c = 1 gives ac − b² = 9.9e7 exactly. rel 1e-14.
    const big = 0.5 * (1e8 + 1) + Math.sqrt((0.5 * (1e8 - 1)) ** 2 + 1e6);
    const { values } = symmetricEigen([1e8, 1e3, 1e3, 1], 2);
    expect(Math.abs(values[0] / (9.9e7 / big) - 1)).toBeLessThanOrEqual(1e-14);
  });

  it('terminates on subnormal off-diagonal entries', () => {
    const { values } = symmetricEigen([2, 1e-310, 1e-310, 1], 2);
    expect(Array.from(values)).toEqual([1, 2]);
  });

  it('rejects non-symmetric input', () => {
    expect(() => symmetricEigen([1, 2, 3, 4], 2)).toThrow(/must be symmetric/);
  });
});

describe('matrix exponential', () => {
  it('matches the rotation closed form', () => {
    // exp([[0, θ], [−θ, 0]]) = [[cos θ, sin θ], [−sin θ, cos θ]] (analytic); abs 1e-14.
    const theta = 2.5;
    const e = expm(Float64Array.from([0, theta, -theta, 0]), 2);
    const expected = [Math.cos(theta), Math.sin(theta), -Math.sin(theta), Math.cos(theta)];
    expected.forEach((v, i) => expect(Math.abs(e[i] - v)).toBeLessThanOrEqual(1e-14));
  });

  it('agrees with the modal thermal discretization on a non-stiff network', () => {
    // Two independent exact ZOH methods (Van Loan augmented Padé vs modal) must agree; dt = 5 ms
    // keeps ‖A·dt‖ ≈ 10 so Padé needs few squarings. abs 1e-12 on entries of order 1.
    const net = buildThermalNetwork({
      devices: [{ name: 'hs', junctionCase: { kind: 'foster', rKPerW: [0.2, 0.3], tauS: [1e-3, 0.1] }, caseSinkKPerW: 0.3 }],
      heatsink: { cthJPerK: 448, rSinkCoolantKPerW: 0.05, rSinkAmbientKPerW: 5 },
      coolant: { massKg: 0.3, cpJPerKgK: 3400 },
    });
    const dtS = 5e-3;
    const sys = thermalSystemMatrices(net, 0.1);
    const pade = zohDiscretize(sys.a, sys.b, sys.nNodes, sys.nInputs, dtS);
    const modal = discretizeThermal(net, 0.1, dtS);
    modal.ad.forEach((v, i) => expect(Math.abs(v - pade.ad[i])).toBeLessThanOrEqual(1e-12));
    modal.bd.forEach((v, i) => expect(Math.abs(v - pade.bd[i])).toBeLessThanOrEqual(1e-12 * Math.max(1, Math.abs(v))));
  });
});

describe('dense solve', () => {
  it('solves and rejects singular systems', () => {
    const x = solveLinear(Float64Array.from([2, 1, 1, 3]), 2, Float64Array.from([3, 5]), 1);
    expect(Math.abs(x[0] - 0.8)).toBeLessThanOrEqual(1e-15);
    expect(Math.abs(x[1] - 1.4)).toBeLessThanOrEqual(1e-15);
    expect(() => solveLinear(Float64Array.from([1, 1, 1, 1]), 2, Float64Array.from([1, 1]), 1)).toThrow(/singular/);
  });
});

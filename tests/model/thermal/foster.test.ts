import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { cauerToFoster, cauerZth, fosterToCauer, fosterZth } from '../../../src/model/thermal/foster.ts';
import { decade } from './helpers.ts';

// REFERENCES.md "Thermal" derived example (formula Zth = Σ Ri(1 − e^(−t/τi)); ladder by the
// continued-fraction method). All values re-derived by hand/script before asserting: they reproduce.
const example = { rKPerW: [0.2, 0.3], tauS: [1e-3, 100e-3] };

function expectRel(actual: number, expected: number, rel: number): void {
  expect(Math.abs(actual - expected)).toBeLessThanOrEqual(rel * Math.abs(expected));
}

describe('Foster thermal impedance', () => {
  it('matches the REFERENCES.md example at 1, 10 and 100 ms', () => {
    // REFERENCES.md thermal example (derived from the Foster sum), rel 5e-5: printed to 5 significant digits.
    expectRel(fosterZth(example, 1e-3), 0.12941, 5e-5);
    expectRel(fosterZth(example, 10e-3), 0.22854, 5e-5);
    expectRel(fosterZth(example, 100e-3), 0.38964, 5e-5);
  });

  it('starts at zero and tends to the total resistance', () => {
    // Limits of Σ Ri(1 − e^(−t/τi)) (analytic); 1e-12 covers rounding of the sum.
    expect(fosterZth(example, 0)).toBe(0);
    expectRel(fosterZth(example, 1e3), 0.5, 1e-12);
  });
});

describe('Foster to Cauer conversion', () => {
  it('reproduces the REFERENCES.md ladder', () => {
    // Foster→Cauer: derived in REFERENCES.md thermal example (continued-fraction method);
    // rel 1e-5 because values are printed to 6 significant digits.
    const cauer = fosterToCauer(example);
    expectRel(cauer.rKPerW[0], 0.206014, 1e-5);
    expectRel(cauer.rKPerW[1], 0.293986, 1e-5);
    expectRel(cauer.cJPerK[0], 0.0049261, 1e-5);
    expectRel(cauer.cJPerK[1], 0.335176, 1e-5);
  });

  it('matches the closed form of the two-term expansion', () => {
    // Hand expansion of Y = D/N with D = 1 + 0.101 s + 1e-4 s², N = 0.5 + 0.0203 s:
    // C1 = 1e-4/0.0203, R1 = 0.0203/(0.101 − 0.5·C1), R2 = 0.5 − R1, C2 = (0.101 − 0.5·C1)/R2.
    // rel 1e-14: exact arithmetic in the model versus a few roundings here.
    const c1 = 1e-4 / 0.0203;
    const b1 = 0.101 - 0.5 * c1;
    const r1 = 0.0203 / b1;
    const r2 = 0.5 - r1;
    const cauer = fosterToCauer(example);
    expectRel(cauer.cJPerK[0], c1, 1e-14);
    expectRel(cauer.rKPerW[0], r1, 1e-14);
    expectRel(cauer.rKPerW[1], r2, 1e-14);
    expectRel(cauer.cJPerK[1], b1 / r2, 1e-14);
  });

  it('gives a Cauer ladder whose step response equals the Foster Zth', () => {
    // Equivalence (same driving-point impedance, analytic); rel 1e-6 as required by the brief.
    const cauer = fosterToCauer(example);
    for (const t of [1e-4, 1e-3, 3e-3, 10e-3, 100e-3, 1]) expectRel(cauerZth(cauer, t), fosterZth(example, t), 1e-6);
  });

  it('keeps the total resistance (DC value of Z)', () => {
    // Z(0) = Σ R for both forms (analytic); rel 1e-12.
    const cauer = fosterToCauer(example);
    expectRel(cauer.rKPerW[0] + cauer.rKPerW[1], 0.5, 1e-12);
  });

  it('round-trips random Foster networks with spread time constants (property)', () => {
    // Equivalence again, for up to 6 terms over 7 decades of τ; rel 1e-6 (brief's equivalence tolerance).
    const fosterArb = fc.integer({ min: 1, max: 6 }).chain((n) =>
      fc.record({
        rKPerW: fc.array(fc.integer({ min: 1, max: 500 }).map((k) => k / 1000), { minLength: n, maxLength: n }),
        tauS: fc.uniqueArray(decade(-6, 1), { minLength: n, maxLength: n }),
      }),
    );
    fc.assert(
      fc.property(fosterArb, fc.integer({ min: -7, max: 2 }), (foster, e) => {
        const cauer = fosterToCauer(foster);
        expect(cauer.rKPerW.length).toBe(foster.rKPerW.length);
        for (const x of [...cauer.rKPerW, ...cauer.cJPerK]) expect(x).toBeGreaterThan(0);
        const t = 10 ** e;
        expectRel(cauerZth(cauer, t), fosterZth(foster, t), 1e-6);
      }),
      { numRuns: 200 },
    );
  });

  it('merges terms with identical time constants into one stage', () => {
    // Two equal poles are one pole of Z(s) (analytic); rel 1e-12.
    const cauer = fosterToCauer({ rKPerW: [0.1, 0.2], tauS: [0.01, 0.01] });
    expect(cauer.rKPerW.length).toBe(1);
    expectRel(cauer.rKPerW[0], 0.3, 1e-12);
    expectRel(cauer.cJPerK[0], 0.01 / 0.3, 1e-12);
  });

  it('recovers the Foster terms from the ladder by modal analysis', () => {
    // cauerToFoster inverts fosterToCauer (analytic); rel 1e-9 (eigen solve of a 2×2 system).
    const back = cauerToFoster(fosterToCauer(example));
    expectRel(back.tauS[0], 1e-3, 1e-9);
    expectRel(back.tauS[1], 0.1, 1e-9);
    expectRel(back.rKPerW[0], 0.2, 1e-9);
    expectRel(back.rKPerW[1], 0.3, 1e-9);
  });
});

describe('Foster/Cauer misuse', () => {
  it('names the bad field', () => {
    expect(() => fosterZth({ rKPerW: [0.2, -2], tauS: [1e-3, 1e-2] }, 1)).toThrow('foster.rKPerW[1]: must be a finite number > 0, got -2');
    expect(() => fosterZth({ rKPerW: [0.2], tauS: [1e-3, 1e-2] }, 1)).toThrow(/foster\.tauS: must have the same length as rKPerW \(1\), got 2/);
    expect(() => fosterZth(example, -1)).toThrow(/tS: must be >= 0, got -1/);
    expect(() => fosterToCauer({ rKPerW: [], tauS: [] })).toThrow(/foster\.rKPerW: must be a non-empty array/);
    expect(() => fosterToCauer({ rKPerW: [0.2], tauS: [1e-320] })).toThrow(/foster\.tauS\[0\]: must be within/);
    expect(() => cauerZth({ rKPerW: [0.2], cJPerK: [NaN] }, 1)).toThrow(/cauer\.cJPerK\[0\]: must be a finite number > 0, got NaN/);
  });
});

/**
 * Inductor losses (src/model/magnetics.ts): iGSE core loss for triangular flux and copper DCR(T).
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { type CoreParams, coreLossW, dcrOhm, deltaBT, igseTriangularWPerM3 } from '../../src/model/magnetics.ts';
import { expectClose } from '../helpers/expectClose.ts';

fc.configureGlobal({ seed: 0x3a6e7, numRuns: 200 });

// N87 iGSE fit from the MagNet dataset (Li et al., "How MagNet: Machine Learning Framework for
// Modeling Power Magnetic Material Characteristics", IEEE APEC 2022), SI units, ΔB peak-to-peak.
const N87 = { kiSI: 0.79822, alpha: 1.3453, beta: 2.5752 };

describe('iGSE for triangular flux (Venkatachalam, Sullivan, Abdallah, Tacca, IEEE COMPEL 2002)', () => {
  it('gives N87 at 100 kHz, ΔB 0.1 T: 28 734 W/m³ at D 0.5 and 36 773 W/m³ at D 0.1', () => {
    // Derived from the closed form Pv = k_i·ΔB^β·f^α·[D^(1−α) + (1−D)^(1−α)] (the iGSE integral
    // of a two-slope waveform): 28 734.14 and 36 773.06 W/m³. Printed to the unit: abs 0.5.
    expectClose(igseTriangularWPerM3(N87, 0.1, 100e3, 0.5), 28734, { abs: 0.5, what: 'Pv(D 0.5)' });
    expectClose(igseTriangularWPerM3(N87, 0.1, 100e3, 0.1), 36773, { abs: 0.5, what: 'Pv(D 0.1)' });
  });

  it('matches a direct numerical iGSE integral of the triangle (property)', () => {
    // iGSE: Pv = (1/T)∫ k_i·|dB/dt|^α·ΔB^(β−α) dt; for a triangle |dB/dt| is ΔB/(D·T) on the rise
    // and ΔB/((1−D)·T) on the fall, so the integral is two constant segments. rel 1e-12.
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 99 }), fc.integer({ min: 1, max: 300 }), fc.integer({ min: 10, max: 1000 }), (dPct, bMilli, fKHz) => {
        const d = dPct / 100;
        const db = bMilli / 1000;
        const tS = 1 / (fKHz * 1e3);
        const seg = (dur: number): number => dur * N87.kiSI * Math.pow(db / dur, N87.alpha) * Math.pow(db, N87.beta - N87.alpha);
        const direct = (seg(d * tS) + seg((1 - d) * tS)) / tS;
        expectClose(igseTriangularWPerM3(N87, db, fKHz * 1e3, d), direct, { rel: 1e-12, what: 'Pv' });
      }),
    );
  });

  it('is symmetric in the rise fraction and least for a symmetric triangle (α > 1)', () => {
    for (const d of [0.05, 0.2, 0.35]) {
      expectClose(igseTriangularWPerM3(N87, 0.1, 100e3, d), igseTriangularWPerM3(N87, 0.1, 100e3, 1 - d), { rel: 1e-12, what: 'symmetry' });
      expect(igseTriangularWPerM3(N87, 0.1, 100e3, d)).toBeGreaterThan(igseTriangularWPerM3(N87, 0.1, 100e3, 0.5));
    }
    expect(igseTriangularWPerM3(N87, 0, 100e3, 0.5)).toBe(0);
  });

  it('turns the ripple into flux by Faraday, ΔB = L·Δi/(N·Ae), and loss by the core volume', () => {
    const core: CoreParams = { ...N87, aeM2: 1.5e-4, turns: 6, volumeM3: 1.8e-5 };
    // 12 µH, 9 A ripple: ΔB = 12e-6·9/(6·1.5e-4) = 0.12 T (derived).
    expectClose(deltaBT(core, 12e-6, 9), 0.12, { rel: 1e-12, what: 'ΔB' });
    expectClose(coreLossW(core, 12e-6, 9, 100e3, 0.25), igseTriangularWPerM3(N87, 0.12, 100e3, 0.25) * 1.8e-5, { rel: 1e-12, what: 'P_core' });
    expect(coreLossW(undefined, 12e-6, 9, 100e3, 0.25)).toBe(0);
  });
});

describe('copper DCR(T) = DCR20·(1 + 0.00393·(T − 20)) (common practice, annealed copper)', () => {
  it('rises 39.3 % per 100 K', () => {
    // Arithmetic of the formula; rel 1e-12.
    expect(dcrOhm(0.003, 20)).toBe(0.003);
    expectClose(dcrOhm(0.003, 120), 0.003 * 1.393, { rel: 1e-12, what: 'DCR(120 °C)' });
    expectClose(dcrOhm(0.003, -20), 0.003 * (1 - 0.1572), { rel: 1e-12, what: 'DCR(−20 °C)' });
  });
});

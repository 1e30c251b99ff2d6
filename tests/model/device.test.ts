/**
 * MOSFET model (src/model/device.ts): gate-charge switching times, temperature dependence and
 * the square-law channel, against the published formulas named on each check.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import {
  type GateDriveParams,
  channelDropV,
  kAt,
  newSwitchTiming,
  rdsOnOhm,
  rdsTempFactor,
  saturationCurrentA,
  saturationCurrentAt,
  switchTiming,
  turnOffEnergyJ,
  turnOnEnergyJ,
  vthAt,
} from '../../src/model/device.ts';
import { expectClose } from '../helpers/expectClose.ts';
import { idealDevice, part } from './fixtures.ts';

fc.configureGlobal({ seed: 0x10551a1, numRuns: 200 });

describe('gate-charge switching times (Vishay AN608A, "Power MOSFET Basics: Understanding Gate Charge")', () => {
  // AN608A example: Qgd 5 nC specified at 16.5 V, V_DS 13.5 V, drive 5.5 V, plateau 2.8 V,
  // R_G = 2.5 Ω internal + 360 Ω external. Our plateau is Vth + sqrt(2I/k): with Vth 2.0 V,
  // k 12.5 A/V² and I 4 A it is 2.0 + sqrt(0.64) = 2.8 V.
  const dev = idealDevice({ vth25V: 2, kAPerV2: 12.5, qgdCoulomb: 5e-9, qgdRefV: 16.5, rGateIntOhm: 2.5, cissF: 1e-9 });
  const gate: GateDriveParams = { vDriveV: 5.5, vOffV: 0, rDriverOnOhm: 0, rDriverOffOhm: 0, rGateExtOhm: 360 };
  const t = switchTiming(dev, gate, 5.5, 13.5, 4, 25, newSwitchTiming());

  it('puts the Miller plateau at 2.8 V for the chosen k, Vth and current', () => {
    expectClose(t.plateauV, 2.8, { rel: 1e-12, what: 'plateau' });
    expect(t.canTurnOn).toBe(true);
  });

  it('gives t_vf = R_G·(Qgd/V_spec)·V_DS/(V_drive − V_plateau) ≈ 549 ns and t_vr (plateau in the denominator) ≈ 530 ns', () => {
    // Derived from the note's formulas: 549.24 ns and 529.63 ns (rel 1e-12: same arithmetic);
    // printed "≈ 549 ns", "≈ 530 ns": abs 0.5 ns.
    const qPerV = 5e-9 / 16.5;
    expectClose(t.tFallVoltageS, (362.5 * qPerV * 13.5) / (5.5 - 2.8), { rel: 1e-12, what: 't_vf formula' });
    expectClose(t.tRiseVoltageS, (362.5 * qPerV * 13.5) / 2.8, { rel: 1e-12, what: 't_vr formula' });
    expectClose(t.tFallVoltageS, 549e-9, { abs: 0.5e-9, what: 't_vf printed' });
    expectClose(t.tRiseVoltageS, 530e-9, { abs: 0.5e-9, what: 't_vr printed' });
  });

  it('slows the turn-on edges as the gate drive falls toward the plateau; turn-off is set by the plateau alone (property)', () => {
    fc.assert(
      fc.property(fc.integer({ min: 0, max: 80 }), fc.integer({ min: 1, max: 100 }), fc.integer({ min: 1, max: 200 }), (iDeci, lowCenti, stepCenti) => {
        const i = iDeci / 10; // 0 … 8 A
        const plateau = 2 + Math.sqrt((2 * i) / 12.5);
        const vLow = plateau + 0.05 + lowCenti / 100; // just above the plateau … +1 V
        const vHigh = vLow + stepCenti / 100;
        const lo = switchTiming(dev, gate, vLow, 13.5, i, 25, newSwitchTiming());
        const hi = switchTiming(dev, gate, vHigh, 13.5, i, 25, newSwitchTiming());
        expect(lo.tFallVoltageS).toBeGreaterThan(hi.tFallVoltageS);
        expect(lo.tRiseCurrentS).toBeGreaterThanOrEqual(hi.tRiseCurrentS);
        expect(turnOnEnergyJ(13.5, i, lo)).toBeGreaterThanOrEqual(turnOnEnergyJ(13.5, i, hi));
        // The turn-off transitions discharge from the plateau to Voff: independent of the drive.
        expectClose(lo.tRiseVoltageS + lo.tFallCurrentS, hi.tRiseVoltageS + hi.tFallCurrentS, { rel: 1e-12, what: 'turn-off' });
        expectClose(turnOffEnergyJ(13.5, i, lo), turnOffEnergyJ(13.5, i, hi), { rel: 1e-12, abs: 1e-30, what: 'E_off' });
      }),
    );
  });

  it('cannot turn on when the drive does not pass the plateau at the switched current (property)', () => {
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 400 }), fc.integer({ min: 0, max: 300 }), (iDeci, belowCenti) => {
        const i = iDeci / 10;
        const plateau = 2 + Math.sqrt((2 * i) / 12.5);
        const v = Math.max(plateau - belowCenti / 100, 0.5); // 0 … 3 V below, never below 0.5 V
        expect(switchTiming(dev, gate, v, 13.5, i, 25, newSwitchTiming()).canTurnOn).toBe(false);
      }),
    );
  });
});

describe('on-resistance temperature dependence (Graovac, Pürschel, Kiep, "MOSFET Power Losses Calculation Using the Data-Sheet Parameters", Infineon, 2006)', () => {
  it('scales by (1 + α)^(Tj − 25): α 0.4 %/K from 25 to 125 °C gives ×1.49063', () => {
    // Derived 1.004^100 = 1.4906349; printed to 6 significant digits: rel 5e-6.
    expectClose(rdsTempFactor(idealDevice({ rdsTempCoeffPerK: 0.004 }), 125), 1.49063, { rel: 5e-6, what: 'R(125)/R(25)' });
    expect(rdsTempFactor(idealDevice({ rdsTempCoeffPerK: 0.004 }), 25)).toBe(1);
  });

  it('answers each device and temperature correctly when calls interleave (the factor is memoized)', () => {
    const a = idealDevice({ rdsTempCoeffPerK: 0.004 });
    const b = idealDevice({ rdsTempCoeffPerK: 0.007 });
    for (const [dev, tj] of [[a, 125], [b, 125], [a, 125], [a, 60], [b, 60], [b, 125]] as const)
      expect(rdsTempFactor(dev, tj)).toBe(Math.pow(1 + dev.rdsTempCoeffPerK, tj - 25));
  });
});

describe('square-law channel (Shichman & Hodges, IEEE JSSC SC-3, 1968)', () => {
  const si = part('ld-si100-3m');

  it('has a small-current drop I/(k·Vov) + Rs·I', () => {
    // Triode Vds = Vov − sqrt(Vov² − 2I/k) = (I/(k·Vov))·(1 + x/4 + …), x = 2I/(k·Vov²) = 4.3e-5
    // at 0.1 A and 10 V: rel 2e-5 bounds the neglected x/4 term.
    const i = 0.1;
    const vov = 10 - vthAt(si, 25);
    expectClose(channelDropV(si, i, 10, 25, 100), i / (si.kAPerV2 * vov) + si.rSeries25Ohm * i, { rel: 2e-5, what: 'drop' });
    expectClose(channelDropV(si, i, 10, 25, 100) / i, rdsOnOhm(si, 10, 25), { rel: 2e-5, what: 'Rds,on' });
  });

  it('saturates at k/2·Vov², past which the drop climbs steeply toward the bus', () => {
    const vgs = 4.5;
    const vov = vgs - si.vth25V;
    const isat = saturationCurrentA(si, vgs, 25);
    expectClose(isat, 0.5 * si.kAPerV2 * vov * vov, { rel: 1e-12, what: 'Isat' });
    // At Isat the channel drop reaches the overdrive; 10 % beyond it channel-length modulation
    // (I = Isat·(1 + λ·(Vds − Vov))) needs 0.1/λ = 5 V more.
    const rs = si.rSeries25Ohm;
    expectClose(channelDropV(si, isat, vgs, 25, 100), vov + rs * isat, { rel: 1e-9, what: 'drop at Isat' });
    expectClose(channelDropV(si, 1.1 * isat, vgs, 25, 100), vov + 0.1 / si.lambdaPerV + rs * 1.1 * isat, { rel: 1e-9, what: 'drop past Isat' });
    // Well below saturation the same 10 % of current costs millivolts.
    const below = channelDropV(si, 0.55 * isat, vgs, 25, 100) - channelDropV(si, 0.5 * isat, vgs, 25, 100);
    expect(below).toBeLessThan(0.1);
    expect(channelDropV(si, 2 * isat, vgs, 25, 48)).toBe(48);
  });

  it('saturationCurrentAt with k(Tj) and Vgs − Vth(Tj) evaluated is saturationCurrentA, 0 at and below threshold', () => {
    for (const [vgs, tj] of [[4.5, 25], [10, 125], [3, -40]] as const) {
      expect(saturationCurrentAt(kAt(si, tj), vgs - vthAt(si, tj))).toBe(saturationCurrentA(si, vgs, tj));
    }
    expect(saturationCurrentAt(kAt(si, 25), 0)).toBe(0);
    expect(saturationCurrentAt(kAt(si, 25), -1)).toBe(0);
  });

  it('below the zero-temperature-coefficient point the saturation current rises with Tj, above it it falls (property)', () => {
    // d ln Isat/dTj = −ln(1 + α) + 2·|dVth/dT|/Vov: positive while Vov < Vz = 2|dVth/dT|/ln(1 + α)
    // (2.0 V for the Si part, 2.7 V for the SiC part). Vov grows with Tj as Vth falls, so the
    // sign holds over [T1, T2] when Vov(T2) < Vz (rising) or Vov(T1) > Vz (falling).
    for (const dev of [si, part('ld-sic650-45m')]) {
      const vz = (2 * -dev.vthTempCoeffVPerK) / Math.log1p(dev.rdsTempCoeffPerK);
      const temps = fc.tuple(fc.integer({ min: -40, max: 174 }), fc.integer({ min: 1, max: 200 })).map(([t1, dt]) => [t1, Math.min(t1 + dt, 175)] as const);
      fc.assert(
        fc.property(temps, fc.integer({ min: 5, max: 95 }), ([t1, t2], pct) => {
          const vgs = vthAt(dev, t2) + (vz * pct) / 100; // Vov(T2) between 5 % and 95 % of Vz
          expect(saturationCurrentA(dev, vgs, t2)).toBeGreaterThan(saturationCurrentA(dev, vgs, t1));
        }),
      );
      fc.assert(
        fc.property(temps, fc.integer({ min: 105, max: 600 }), ([t1, t2], pct) => {
          const vgs = vthAt(dev, t1) + (vz * pct) / 100; // Vov(T1) above Vz
          expect(saturationCurrentA(dev, vgs, t2)).toBeLessThan(saturationCurrentA(dev, vgs, t1));
        }),
      );
    }
  });

  it('near threshold a hotter device drops less at the same current (the hot-spotting hazard)', () => {
    // REFERENCES.md "MOSFET temperature…": falling Vth outweighs mobility loss below the ZTC
    // point. At 4 V gate drive and 40 A the Si part is close to saturation when cold.
    const cold = channelDropV(si, 40, 4, 25, 48);
    const hot = channelDropV(si, 40, 4, 100, 48);
    expect(hot).toBeLessThan(cold);
    // …and the opposite at full drive, where the on-resistance rises with temperature.
    expect(channelDropV(si, 40, 10, 100, 48)).toBeGreaterThan(channelDropV(si, 40, 10, 25, 48));
    expect(kAt(si, 100)).toBeLessThan(kAt(si, 25));
  });
});


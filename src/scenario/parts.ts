/**
 * Library of invented parts (no real part numbers). Values are plausible for their class and
 * chosen so that every knob has a visible effect; they are demo data, not datasheet values.
 */
import type { DevicePart } from './schema.ts';

export const PARTS: Readonly<Record<string, DevicePart>> = Object.freeze({
  // ~100 V silicon trench MOSFET class, about 3 mΩ at 10 V gate drive.
  'ld-si100-3m': {
    label: 'invented 100 V Si trench, 3 mΩ class',
    vdsRatedV: 100,
    kAPerV2: 95,
    vth25V: 3.0,
    vthTempCoeffVPerK: -0.005,
    rSeries25Ohm: 0.0015,
    rdsTempCoeffPerK: 0.005,
    lambdaPerV: 0.02,
    cissF: 4.5e-9,
    qgdCoulomb: 12e-9,
    qgdRefV: 50,
    qgCoulomb: 60e-9,
    qgRefV: 10,
    rGateIntOhm: 1.2,
    cossF: 0.9e-9,
    diodeVf25V: 0.72,
    diodeROhm: 0.002,
    diodeVfTempCoeffVPerK: -0.002,
    qrr25Coulomb: 60e-9,
    qrrRefA: 25,
    qrrTempCoeffPerK: 0.005,
    tjMaxC: 175,
  },
  // ~650 V silicon-carbide MOSFET class, about 45 mΩ at 18 V gate drive.
  'ld-sic650-45m': {
    label: 'invented 650 V SiC, 45 mΩ class',
    vdsRatedV: 650,
    kAPerV2: 2.6,
    vth25V: 2.8,
    vthTempCoeffVPerK: -0.004,
    rSeries25Ohm: 0.02,
    rdsTempCoeffPerK: 0.003,
    lambdaPerV: 0.01,
    cissF: 1.5e-9,
    qgdCoulomb: 20e-9,
    qgdRefV: 400,
    qgCoulomb: 60e-9,
    qgRefV: 18,
    rGateIntOhm: 4,
    cossF: 0.15e-9,
    diodeVf25V: 3.2,
    diodeROhm: 0.02,
    diodeVfTempCoeffVPerK: -0.002,
    qrr25Coulomb: 80e-9,
    qrrRefA: 20,
    qrrTempCoeffPerK: 0.003,
    tjMaxC: 175,
  },
});

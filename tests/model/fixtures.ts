/**
 * Shared fixtures for the device/leg/operating-point tests: the demo case, a near-ideal switch
 * for formula checks, and leg builders. Plain data; nothing here asserts.
 */
import { readFileSync } from 'node:fs';
import type { DeviceParams, GateDriveParams } from '../../src/model/device.ts';
import { type LegInput, type LegParams, type LegResult, evaluateLeg, newLegResult } from '../../src/model/leg.ts';
import { type Scenario, parseScenario } from '../../src/scenario/parse.ts';
import { PARTS } from '../../src/scenario/parts.ts';

export const DEMO_PATH = new URL('../../cases/buck-aux-48v.yaml', import.meta.url);

export function demoScenario(): Scenario {
  return parseScenario(readFileSync(DEMO_PATH, 'utf8'));
}

export function part(id: string): DeviceParams {
  return { part: id, ...PARTS[id] };
}

/**
 * A switch whose non-idealities are all negligible at the currents and voltages of the textbook
 * examples (tens of volts, amperes): channel k = 10⁶ A/V² (1/(k·Vov) ≈ 1.25·10⁻⁷ Ω at 10 V drive),
 * no series resistance, femto-scale capacitances and charges (delays ~10⁻¹⁵ s), 1 mV diode.
 * Override fields to turn one non-ideality on at a time.
 */
export function idealDevice(over: Partial<DeviceParams> = {}): DeviceParams {
  return {
    part: 'ideal',
    label: 'near-ideal switch for formula checks',
    vdsRatedV: 1000,
    kAPerV2: 1e6,
    vth25V: 2,
    vthTempCoeffVPerK: 0,
    rSeries25Ohm: 0,
    rdsTempCoeffPerK: 0,
    lambdaPerV: 0.01,
    cissF: 1e-15,
    qgdCoulomb: 1e-18,
    qgdRefV: 1,
    qgCoulomb: 1e-15,
    qgRefV: 10,
    rGateIntOhm: 0,
    cossF: 1e-18,
    diodeVf25V: 1e-3,
    diodeROhm: 0,
    diodeVfTempCoeffVPerK: 0,
    qrr25Coulomb: 0,
    qrrRefA: 1,
    qrrTempCoeffPerK: 0,
    tjMaxC: 175,
    ...over,
  };
}

export const plainGate: GateDriveParams = { vDriveV: 10, vOffV: 0, rDriverOnOhm: 1.5, rDriverOffOhm: 0.8, rGateExtOhm: 2 };

export function legParams(hs: DeviceParams, ls: DeviceParams, over: Partial<LegParams> = {}): LegParams {
  return { hs, ls, gate: plainGate, lowSideMode: 'sync', commutationLoopH: 5e-9, skewS: 0, ...over };
}

/** evaluateLeg into a fresh result (tests keep results side by side). */
export function leg(p: LegParams, x: LegInput): LegResult {
  return evaluateLeg(p, x, newLegResult());
}

/** Sum of the four per-edge switching terms of both devices (W). */
export function switchingW(r: LegResult): number {
  return r.hs.turnOnW + r.hs.turnOffW + r.hs.cossW + r.hs.recoveryW + r.ls.turnOnW + r.ls.turnOffW + r.ls.cossW + r.ls.recoveryW;
}

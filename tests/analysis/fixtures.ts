/**
 * Scenarios for the small-signal tests: the demo buck, the per-sample instability case, a
 * half-bridge current loop, and the textbook buck of the Gvd reference built from near-ideal
 * devices. Plain data; nothing here asserts.
 */
import { readFileSync } from 'node:fs';
import { type Scenario, parseScenario, parseScenarioObject } from '../../src/scenario/parse.ts';
import { idealDevice } from '../model/fixtures.ts';

export function caseScenario(name: string): Scenario {
  return parseScenario(readFileSync(new URL(`../../cases/${name}.yaml`, import.meta.url), 'utf8'));
}

/** The near-ideal switch of the device tests (tests/model/fixtures.ts) as scenario overrides of a library part. */
function idealOverrides(): Record<string, unknown> {
  const { part: _part, label: _label, ...fields } = idealDevice();
  return { part: 'ld-si100-3m', ...fields };
}

const THERMAL = {
  devices: {
    highSide: { junctionCase: { kind: 'foster', rKPerW: [0.15, 0.25], tauS: [0.002, 0.05] }, caseSinkKPerW: 0.3 },
    lowSide: { junctionCase: { kind: 'foster', rKPerW: [0.15, 0.25], tauS: [0.002, 0.05] }, caseSinkKPerW: 0.3 },
  },
  heatsink: { cthJPerK: 400, rSinkCoolantKPerW: 0.05, rSinkAmbientKPerW: 5 },
  coolant: { inletC: 25, flowKgPerS: 0.1, cpJPerKgK: 3400, massKg: 0.15 },
  ambientC: 25,
};

/**
 * The REFERENCES.md Gvd example: Vin 12 V, L 10 µH, C 100 µF, R 1 Ω, DCR 10 mΩ (at 20 °C, so no
 * copper temperature correction), ESR 5 mΩ; Vout 6 V (the formula does not depend on D).
 */
export function textbookBuck(): Scenario {
  return parseScenarioObject({
    name: 'textbook-buck',
    topology: 'buck',
    pwm: { fswHz: 100e3, deadTimeS: 0, dutyMin: 0.01, dutyMax: 0.99 },
    gateDrive: { vDriveV: 10, rDriverOnOhm: 0, rDriverOffOhm: 0, rGateExtOhm: 0 },
    devices: { highSide: idealOverrides(), lowSide: idealOverrides() },
    buck: {
      vinV: 12,
      voutRefV: 6,
      inductor: { lH: 10e-6, dcr20Ohm: 0.01, tempC: 20 },
      outputCap: { cF: 100e-6, esrOhm: 0.005, rippleRatingA: 100 },
      inputCap: { cF: 100e-6, esrOhm: 0.005, rippleRatingA: 100 },
      load: { rOhm: 1 },
    },
    thermal: THERMAL,
    control: { kp: 0.01, ki: 100 },
  });
}

/**
 * A half-bridge leg driving 2 Ω + 500 µH from a 48 V link (50 mΩ source), DC current reference
 * 4 A; the PI (kp 0.4 duty/A, zero at R/L = 4000 rad/s) crosses over near 6 kHz at 100 kHz
 * sampling with one sample of delay: a visibly underdamped current loop.
 */
export function halfBridgeLoop(extra: Record<string, unknown> = {}): Scenario {
  return parseScenarioObject({
    name: 'hb-current-loop',
    topology: 'halfBridge',
    pwm: { fswHz: 100e3, deadTimeS: 100e-9, dutyMin: 0.02, dutyMax: 0.98 },
    gateDrive: { vDriveV: 10 },
    devices: { highSide: { part: 'ld-si100-3m' }, lowSide: { part: 'ld-si100-3m' } },
    halfBridge: {
      vdcV: 48,
      rSourceOhm: 0.05,
      linkCap: { cF: 470e-6, esrOhm: 0.01, rippleRatingA: 20 },
      load: { rOhm: 2, lH: 500e-6 },
      reference: { kind: 'dc', iA: 4 },
    },
    thermal: THERMAL,
    control: { kp: 0.4, ki: 1600 },
    sim: { durationS: 0.01, recordIntervalS: 1e-5, thermalStepS: 0.001 },
    ...extra,
  });
}

/**
 * Input description of a converter's thermal path and its validation.
 * Kept apart from network.ts so the plain-data contract reads on its own.
 */

import { describe, requireNonNegative, requirePositive, requirePositiveOrInfinity } from './checks.ts';
import { validateCauer, validateFoster } from './foster.ts';

export type JunctionCaseSpec =
  | { kind: 'foster'; rKPerW: number[]; tauS: number[] }
  | { kind: 'cauer'; rKPerW: number[]; cJPerK: number[] };

export interface DeviceThermalSpec {
  name: string;
  junctionCase: JunctionCaseSpec;
  /** Case → heatsink interface (grease/pad); 0 allowed for a bonded interface. */
  caseSinkKPerW: number;
}

export interface ThermalSpec {
  /** Usually 2 (high side, low side). Empty is allowed: a bare heatsink/cold-plate model. */
  devices: DeviceThermalSpec[];
  heatsink: {
    cthJPerK: number;
    /** Heatsink → coolant; Infinity for an air-cooled sink with no cold plate. */
    rSinkCoolantKPerW: number;
    /** Heatsink → ambient leak; Infinity for none. */
    rSinkAmbientKPerW: number;
  };
  /** Fluid held in the cold plate, treated as one well-mixed node. */
  coolant: { massKg: number; cpJPerKgK: number };
}

function requireObject(x: unknown, path: string): void {
  if (x === null || typeof x !== 'object' || Array.isArray(x)) throw new Error(`${path}: must be an object, got ${describe(x)}`);
}

/** Throws with the path of the first bad field (e.g. `spec.devices[1].junctionCase.rKPerW[0]`). */
export function validateThermalSpec(spec: ThermalSpec): void {
  requireObject(spec, 'spec');
  if (!Array.isArray(spec.devices)) throw new Error(`spec.devices: must be an array, got ${describe(spec.devices)}`);
  const names = new Set<string>();
  spec.devices.forEach((dev, i) => {
    const path = `spec.devices[${i}]`;
    requireObject(dev, path);
    if (typeof dev.name !== 'string' || dev.name.trim() === '')
      throw new Error(`${path}.name: must be a non-empty string, got ${describe(dev.name)}`);
    if (names.has(dev.name)) throw new Error(`${path}.name: must be unique, got duplicate ${JSON.stringify(dev.name)}`);
    names.add(dev.name);
    const jc = dev.junctionCase;
    requireObject(jc, `${path}.junctionCase`);
    if (jc.kind === 'foster') validateFoster(jc, `${path}.junctionCase`);
    else if (jc.kind === 'cauer') validateCauer(jc, `${path}.junctionCase`);
    else throw new Error(`${path}.junctionCase.kind: must be 'foster' or 'cauer', got ${describe((jc as { kind: unknown }).kind)}`);
    requireNonNegative(dev.caseSinkKPerW, `${path}.caseSinkKPerW`);
  });
  requireObject(spec.heatsink, 'spec.heatsink');
  requirePositive(spec.heatsink.cthJPerK, 'spec.heatsink.cthJPerK');
  requirePositiveOrInfinity(spec.heatsink.rSinkCoolantKPerW, 'spec.heatsink.rSinkCoolantKPerW');
  requirePositiveOrInfinity(spec.heatsink.rSinkAmbientKPerW, 'spec.heatsink.rSinkAmbientKPerW');
  requireObject(spec.coolant, 'spec.coolant');
  requirePositive(spec.coolant.massKg, 'spec.coolant.massKg');
  requirePositive(spec.coolant.cpJPerKgK, 'spec.coolant.cpJPerKgK');
}

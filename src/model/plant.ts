/**
 * Plant: the scenario's physical parameters resolved once into the flat, frozen form the
 * model functions take. No knobs here (fsw, dead time, gate drive are inputs to each call).
 */
import type { Scenario } from '../scenario/parse.ts';
import type { LegParams } from './leg.ts';
import type { CoreParams } from './magnetics.ts';
import type { ThermalSpec } from './thermal/network.ts';

export interface CapacitorParams {
  readonly cF: number;
  readonly esrOhm: number;
  readonly rippleRatingA: number;
}

export interface BuckParams {
  readonly kind: 'buck';
  readonly vinV: number;
  readonly voutRefV: number;
  readonly lH: number;
  readonly dcr20Ohm: number;
  readonly inductorTempC: number;
  readonly core: CoreParams | undefined;
  readonly cout: CapacitorParams;
  readonly cin: CapacitorParams;
  readonly load: { readonly rOhm: number } | { readonly iA: number };
}

export interface HalfBridgeParams {
  readonly kind: 'halfBridge';
  readonly vdcV: number;
  readonly rSourceOhm: number;
  readonly link: CapacitorParams;
  readonly loadROhm: number;
  readonly loadLH: number;
  readonly backEmfV: number;
  readonly reference: { readonly kind: 'dc'; readonly iA: number } | { readonly kind: 'sine'; readonly amplitudeA: number; readonly freqHz: number; readonly offsetA: number };
}

export interface Knobs {
  readonly fswHz: number;
  readonly deadTimeS: number;
  readonly vDriveV: number;
}

export interface Plant {
  readonly leg: LegParams;
  readonly conv: BuckParams | HalfBridgeParams;
  readonly dutyMin: number;
  readonly dutyMax: number;
  readonly knobs: Knobs;
  readonly passiveToPlateFraction: number;
}

export function buildPlant(s: Scenario): Plant {
  const leg: LegParams = {
    hs: s.devices.highSide,
    ls: s.devices.lowSide,
    gate: {
      vDriveV: s.gateDrive.vDriveV,
      vOffV: s.gateDrive.vOffV,
      rDriverOnOhm: s.gateDrive.rDriverOnOhm,
      rDriverOffOhm: s.gateDrive.rDriverOffOhm,
      rGateExtOhm: s.gateDrive.rGateExtOhm,
    },
    lowSideMode: s.pwm.lowSideMode,
    commutationLoopH: s.layout.commutationLoopH,
    skewS: s.gateDrive.skewS,
  };
  let conv: BuckParams | HalfBridgeParams;
  if (s.topology === 'buck') {
    const b = s.buck!;
    conv = {
      kind: 'buck',
      vinV: b.vinV,
      voutRefV: b.voutRefV,
      lH: b.inductor.lH,
      dcr20Ohm: b.inductor.dcr20Ohm,
      inductorTempC: b.inductor.tempC,
      core: b.inductor.core,
      cout: b.outputCap,
      cin: b.inputCap,
      load: b.load,
    };
  } else {
    const h = s.halfBridge!;
    conv = {
      kind: 'halfBridge',
      vdcV: h.vdcV,
      rSourceOhm: h.rSourceOhm,
      link: h.linkCap,
      loadROhm: h.load.rOhm,
      loadLH: h.load.lH,
      backEmfV: h.load.backEmfV,
      reference: h.reference,
    };
  }
  return Object.freeze({
    leg: Object.freeze(leg),
    conv: Object.freeze(conv),
    dutyMin: s.pwm.dutyMin,
    dutyMax: s.pwm.dutyMax,
    knobs: Object.freeze({ fswHz: s.pwm.fswHz, deadTimeS: s.pwm.deadTimeS, vDriveV: s.gateDrive.vDriveV }),
    passiveToPlateFraction: s.thermal.passiveToPlateFraction,
  });
}

/** The scenario's thermal path in the thermal network's plain form (high side, then low side). */
export function thermalSpecOf(s: Scenario): ThermalSpec {
  const t = s.thermal;
  return {
    devices: (['highSide', 'lowSide'] as const).map((name) => ({
      name,
      junctionCase: structuredClone(t.devices[name].junctionCase) as ThermalSpec['devices'][number]['junctionCase'],
      caseSinkKPerW: t.devices[name].caseSinkKPerW,
    })),
    heatsink: { ...t.heatsink },
    coolant: { massKg: t.coolant.massKg, cpJPerKgK: t.coolant.cpJPerKgK },
  };
}

/**
 * A simulation system: the immutable description built once from a scenario (plant, thermal
 * network, controller configuration, profiles). Everything that changes during a run lives in
 * the engine's context, never here.
 */
import { buildPlant, type Plant, thermalSpecOf } from '../model/plant.ts';
import { buildThermalNetwork, type ThermalNetwork } from '../model/thermal/network.ts';
import type { PiConfig } from '../control/pi.ts';
import type { Scenario } from '../scenario/parse.ts';
import { ScenarioError } from '../scenario/errors.ts';
import { type Profile, constantProfile, makeProfile } from './profiles.ts';

export interface SimProfiles {
  readonly heatDemandW: Profile;
  readonly loadROhm: Profile;
  readonly loadIA: Profile;
  readonly vinV: Profile;
  readonly inletC: Profile;
  readonly flowKgPerS: Profile;
  /** Regulation reference: buck output voltage, half-bridge load current. */
  readonly reference: Profile;
  readonly fswHz: Profile;
  readonly deadTimeS: Profile;
  readonly vDriveV: Profile;
  readonly controlKp: Profile;
  readonly controlKi: Profile;
  /** 1 when the supervisor drives the knobs, 0 for manual knobs. */
  readonly supervisorOn: Profile;
}

export interface SimSystem {
  readonly scenario: Scenario;
  readonly plant: Plant;
  readonly net: ThermalNetwork;
  readonly pi: Omit<PiConfig, 'uMin' | 'uMax'> & { readonly uMin: number; readonly uMax: number };
  readonly delaySamples: number;
  readonly sampling: NonNullable<Scenario['control']>['sampling'];
  readonly sensorFilterHz: number | undefined;
  readonly profiles: SimProfiles;
  readonly loadIsCurrent: boolean;
}

function sineProfile(offsetA: number, amplitudeA: number, freqHz: number): Profile {
  return { constant: false, stepwise: false, valueAt: (t) => offsetA + amplitudeA * Math.sin(2 * Math.PI * freqHz * t), nextBreakS: () => Infinity };
}

export function buildSystem(scenario: Scenario): SimSystem {
  const ctl = scenario.control;
  if (!ctl) throw new ScenarioError([{ path: 'control', message: 'required to simulate the closed loop (kp, ki, basis, sampling)' }]);
  const plant = buildPlant(scenario);
  const net = buildThermalNetwork(thermalSpecOf(scenario));
  const p = scenario.profiles;
  const c = plant.conv;
  let reference: Profile;
  if (c.kind === 'buck') reference = constantProfile(c.voutRefV);
  else if (p.iRefA !== undefined) reference = makeProfile(p.iRefA, 0);
  else if (c.reference.kind === 'dc') reference = constantProfile(c.reference.iA);
  else reference = sineProfile(c.reference.offsetA, c.reference.amplitudeA, c.reference.freqHz);
  const loadIsCurrent = c.kind === 'buck' && 'iA' in c.load;
  const profiles: SimProfiles = {
    heatDemandW: makeProfile(p.heatDemandW, 0),
    loadROhm: makeProfile(p.loadROhm, c.kind === 'buck' && 'rOhm' in c.load ? c.load.rOhm : c.kind === 'halfBridge' ? c.loadROhm : NaN),
    loadIA: makeProfile(p.loadIA, c.kind === 'buck' && 'iA' in c.load ? c.load.iA : 0),
    vinV: makeProfile(p.vinV, c.kind === 'buck' ? c.vinV : c.vdcV),
    inletC: makeProfile(p.inletC, scenario.thermal.coolant.inletC),
    flowKgPerS: makeProfile(p.flowKgPerS, scenario.thermal.coolant.flowKgPerS),
    reference,
    fswHz: makeProfile(p.fswHz, scenario.pwm.fswHz),
    deadTimeS: makeProfile(p.deadTimeS, scenario.pwm.deadTimeS),
    vDriveV: makeProfile(p.vDriveV, scenario.gateDrive.vDriveV),
    controlKp: makeProfile(p.controlKp, ctl.kp),
    controlKi: makeProfile(p.controlKi, ctl.ki),
    supervisorOn: makeProfile(p.supervisorOn, scenario.supervisor?.enabled ? 1 : 0),
  };
  return Object.freeze({
    scenario,
    plant,
    net,
    pi: Object.freeze({
      basis: ctl.basis,
      kp: ctl.kp,
      ki: ctl.ki,
      antiWindup: ctl.antiWindup,
      backCalcGain: ctl.backCalcGain,
      uMin: scenario.pwm.dutyMin,
      uMax: scenario.pwm.dutyMax,
    }),
    delaySamples: ctl.delaySamples,
    sampling: ctl.sampling,
    sensorFilterHz: ctl.sensorFilterHz,
    profiles: Object.freeze(profiles),
    loadIsCurrent,
  }) as SimSystem;
}

/** Control sample period for the current switching frequency. */
export function samplePeriodS(sys: SimSystem, fswHz: number): number {
  return sys.sampling.mode === 'perPwm' ? sys.sampling.divider / fswHz : 1 / sys.sampling.rateHz;
}

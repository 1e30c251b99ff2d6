/**
 * The simulation behind one live session, built exactly as a replay run builds it (same system,
 * same supervisor), so what the session shows is what `lossdial run` reproduces. The live run has
 * no end: it goes on until the user stops it; its replay file sets `sim.durationS` to the time
 * reached.
 */
import { createSupervisor } from '../control/supervisor.ts';
import type { Scenario } from '../scenario/parse.ts';
import { type LiveInput, type SimRecord, type SupervisorTask, Simulation, simulate, type SimResult } from '../sim/engine.ts';
import { supervisorFor } from '../sim/supervisorHook.ts';
import { type SimSystem, buildSystem } from '../sim/system.ts';

export interface LiveRun {
  readonly scenario: Scenario;
  readonly sys: SimSystem;
  readonly sim: Simulation;
  readonly supervisor: SupervisorTask | undefined;
}

export const LIVE_INPUTS: readonly LiveInput[] = [
  'heatDemandW', 'loadROhm', 'loadIA', 'vinV', 'inletC', 'flowKgPerS',
  'fswHz', 'deadTimeS', 'vDriveV', 'controlKp', 'controlKi', 'supervisorOn',
];

/**
 * System and supervisor for a scenario. Runs get their supervisor from `supervisorFor` (the one
 * place that decides it, shared with `lossdial run`); while that hook wires none, a scenario with
 * an enabled supervisor section gets the plain heat supervisor here, so the live bench can still
 * track a demand. `supervisorWiredForRun` tells whether `lossdial run` builds the same thing.
 */
export function runParts(scenario: Scenario): { sys: SimSystem; supervisor: SupervisorTask | undefined } {
  const sys = buildSystem(scenario);
  return { sys, supervisor: supervisorFor(sys) ?? createSupervisor(sys) };
}

/** True when `lossdial run` drives this scenario with the same supervisor as a live session. */
export function supervisorWiredForRun(scenario: Scenario): boolean {
  const sys = buildSystem(scenario);
  return supervisorFor(sys) !== undefined || createSupervisor(sys) === undefined;
}

export function createLiveRun(scenario: Scenario, onRecord: (r: SimRecord) => void): LiveRun {
  const { sys, supervisor } = runParts(scenario);
  const sim = new Simulation(sys, { durationS: Infinity, supervisor, onRecord, keepRecords: false });
  return { scenario, sys, sim, supervisor };
}

/** Replay a scenario to its end in-process (what `lossdial run` computes), records kept. */
export function replayRun(scenario: Scenario): SimResult {
  const { sys, supervisor } = runParts(scenario);
  return simulate(sys, { supervisor });
}

/** Live steps of every input that has any. */
export function liveStepsOf(sim: Simulation): Record<string, Array<[number, number]>> {
  const out: Record<string, Array<[number, number]>> = {};
  for (const name of LIVE_INPUTS) {
    const steps = sim.profiles[name].steps();
    if (steps.length > 0) out[name] = steps;
  }
  return out;
}

/** Each input's value at t = 0 before any live change (the scenario's own profile). */
export function baseValuesAt0(sys: SimSystem): Record<string, number> {
  const out: Record<string, number> = {};
  for (const name of LIVE_INPUTS) out[name] = sys.profiles[name].valueAt(0);
  return out;
}

/**
 * The simulation behind one live session, built exactly as a replay run builds it (same system,
 * same supervisor), so what the session shows is what `lossdial run` reproduces. The live run has
 * no end: it goes on until the user stops it; its replay file sets `sim.durationS` to the time
 * reached.
 */
import { createSupervisor } from '../control/supervisor.ts';
import type { Scenario } from '../scenario/parse.ts';
import { type LiveInput, type SimRecord, type SupervisorTask, Simulation, simulate, type SimResult } from '../sim/engine.ts';
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

/** System and supervisor for a scenario, as the replay (`run`) builds them. */
export function runParts(scenario: Scenario): { sys: SimSystem; supervisor: SupervisorTask | undefined } {
  const sys = buildSystem(scenario);
  return { sys, supervisor: createSupervisor(sys) };
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

/**
 * Where a run gets its heat supervisor. Runners call `supervisorFor(sys)` and pass the result to
 * `simulate()`; undefined means the knobs follow the scenario's fixed settings and profiles.
 *
 * The supervisor's stable switching-frequency band comes from the stability analysis (phase- and
 * gain-margin floors of the inner loop at the gate drive in use, cached per 0.5 V), intersected
 * with any band configured in the scenario; the configured band alone is the fallback when the
 * analysis finds no band around the nominal frequency.
 */
import { stableFswBand } from '../analysis/stableBand.ts';
import { createSupervisor } from '../control/supervisor.ts';
import type { SupervisorTask } from './engine.ts';
import type { Scenario } from '../scenario/parse.ts';
import type { SimSystem } from './system.ts';

/**
 * The supervisor's stable-fsw band as a function of the gate drive in use: margin floors from the
 * analysis at that drive (rounded to 0.5 V, cached), intersected with any configured band.
 */
export function stableBandFor(scenario: Scenario): (vDriveV: number) => [number, number] | undefined {
  const cfg = scenario.supervisor;
  const cache = new Map<number, [number, number] | undefined>();
  return (vDriveV: number) => {
    if (!cfg) return undefined;
    const key = Math.round(vDriveV * 2) / 2;
    if (cache.has(key)) return cache.get(key);
    let out: [number, number] | undefined = cfg.stableBandHz ? [cfg.stableBandHz[0], cfg.stableBandHz[1]] : undefined;
    if (cfg.fsw.enabled) {
      const b = stableFswBand(scenario, { pmFloorDeg: cfg.pmFloorDeg, gmFloorDb: cfg.gmFloorDb, fswMinHz: cfg.fsw.minHz, fswMaxHz: cfg.fsw.maxHz, vDriveV: key });
      if (b.ok) out = out ? [Math.max(out[0], b.loHz), Math.min(out[1], b.hiHz)] : [b.loHz, b.hiHz];
    }
    cache.set(key, out);
    return out;
  };
}

export function supervisorFor(sys: SimSystem): SupervisorTask | undefined {
  const cfg = sys.scenario.supervisor;
  if (!cfg || !cfg.enabled) return undefined;
  return createSupervisor(sys, stableBandFor(sys.scenario));
}

/** The warning a runner adds when the scenario asks for a supervisor that `supervisorFor` did not provide. */
export function supervisorNotWiredWarning(sys: SimSystem, task: SupervisorTask | undefined): string | undefined {
  const s = sys.scenario.supervisor;
  if (!s || !s.enabled || task) return undefined;
  return 'the scenario has an enabled supervisor section but no supervisor was created: the knobs followed the fixed settings and profiles';
}

/**
 * Cautions at the live operating point: the same checks as `point` (src/analysis/cautions.ts) on
 * the electrical steady state at the present knobs, source, load and junction temperatures, plus
 * the supervisor's shortfall when the demand cannot be met.
 */
import { type Caution, electricalCautions, thermalCautions } from '../analysis/cautions.ts';
import { electricalPoint } from '../model/electrical.ts';
import type { Knobs, Plant } from '../model/plant.ts';
import type { Scenario } from '../scenario/parse.ts';

export interface LiveConditions {
  knobs: Knobs;
  tjHsC: number;
  tjLsC: number;
  vinV: number;
  loadROhm: number;
  loadIA: number;
  /** Supervisor shortfall (W) and binding constraint, when it reports them. */
  shortfallW?: number;
  binding?: string;
}

export interface LiveCaution {
  code: string;
  severity: 'warning' | 'danger';
  message: string;
}

/** The plant with the present source and load (the scenario's values are only where the run started). */
export function plantNow(plant: Plant, c: Pick<LiveConditions, 'vinV' | 'loadROhm' | 'loadIA'>): Plant {
  const conv = plant.conv;
  if (conv.kind === 'buck') {
    const load = 'iA' in conv.load ? { iA: c.loadIA } : { rOhm: c.loadROhm };
    return { ...plant, conv: { ...conv, vinV: c.vinV, load } };
  }
  return { ...plant, conv: { ...conv, vdcV: c.vinV } };
}

export function liveCautions(plant: Plant, scenario: Scenario, c: LiveConditions): LiveCaution[] {
  const out: Caution[] = [];
  try {
    const ep = electricalPoint(plantNow(plant, c), c.knobs, c.tjHsC, c.tjLsC);
    out.push(...electricalCautions(plant, ep, c.tjHsC, c.tjLsC, scenario.limits));
  } catch (e) {
    out.push({ code: 'lostRegulation', severity: 'danger', message: `no steady operating point at these settings: ${(e as Error).message}` });
  }
  out.push(...thermalCautions(plant, c.tjHsC, c.tjLsC, scenario.limits));
  const list: LiveCaution[] = out.map((x) => ({ code: x.code, severity: x.severity, message: x.message }));
  if (c.shortfallW !== undefined && c.shortfallW > 0.5)
    list.push({
      code: 'demandNotMet',
      severity: 'warning',
      message: `heat demand not met: short by ${c.shortfallW.toFixed(1)} W${c.binding && c.binding !== 'none' ? `, binding constraint ${c.binding}` : ''}`,
    });
  return list;
}

/**
 * Loop margins along a run: at each record's knobs, load and junction temperatures, the
 * configured basis's phase and gain margins. Distinct points are cached (fsw to 1 kHz, dead
 * time to 5 ns, gate drive to 0.1 V, temperatures to 5 K), so a long replay costs a few dozen
 * evaluations. Points without a small-signal loop (lost regulation) are NaN.
 */
import type { Scenario } from '../scenario/parse.ts';
import type { SimRecord } from '../sim/engine.ts';
import { marginContext, marginsAt } from './margins.ts';

export interface MarginSample {
  pmDeg: number;
  gmDb: number;
  stable: boolean;
}

export interface MarginsAlong {
  samples: MarginSample[];
  minPmDeg: number;
  minPmAtS: number;
  minGmDb: number;
  minGmAtS: number;
  /** Time spent with the phase margin under the floor (or unstable). */
  timeBelowPmFloorS: number;
  pmFloorDeg: number;
  evaluations: number;
}

export function marginsAlongRun(scenario: Scenario, records: readonly SimRecord[], pmFloorDeg: number): MarginsAlong {
  const ctx = marginContext(scenario);
  const cache = new Map<string, MarginSample>();
  const basis = scenario.control?.basis ?? 'continuous';
  const buck = scenario.topology === 'buck';
  const currentLoad = buck && scenario.buck !== undefined && 'iA' in scenario.buck.load;
  const out: MarginSample[] = [];
  let minPm = Infinity, minPmAt = NaN, minGm = Infinity, minGmAt = NaN, below = 0;
  for (let i = 0; i < records.length; i++) {
    const r = records[i];
    const o = {
      fswHz: Math.round(r.fswHz / 1000) * 1000,
      deadTimeS: Math.round(r.deadTimeS / 5e-9) * 5e-9,
      vDriveV: Math.round(r.vDriveV * 10) / 10,
      tjHsC: Math.round(r.tjHsC / 5) * 5,
      tjLsC: Math.round(r.tjLsC / 5) * 5,
      ...(buck && !currentLoad && Number.isFinite(r.loadROhm) ? { loadROhm: r.loadROhm } : {}),
    };
    const key = JSON.stringify(o);
    let m = cache.get(key);
    if (!m) {
      try {
        const res = marginsAt(ctx, o).bases[basis];
        m = { pmDeg: res.pmDeg, gmDb: res.gmDb, stable: res.stable };
      } catch {
        m = { pmDeg: NaN, gmDb: NaN, stable: false };
      }
      cache.set(key, m);
    }
    out.push(m);
    if (m.pmDeg < minPm) { minPm = m.pmDeg; minPmAt = r.tS; }
    if (m.gmDb < minGm) { minGm = m.gmDb; minGmAt = r.tS; }
    const dt = i > 0 ? r.tS - records[i - 1].tS : r.tS;
    if (!m.stable || !(m.pmDeg >= pmFloorDeg)) below += dt;
  }
  return {
    samples: out, minPmDeg: minPm, minPmAtS: minPmAt, minGmDb: minGm, minGmAtS: minGmAt, timeBelowPmFloorS: below,
    pmFloorDeg, evaluations: cache.size,
  };
}

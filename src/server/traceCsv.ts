/**
 * A trace as CSV, exactly as `lossdial run` writes trace.csv: the run's columns (src/sim/runOutput.ts)
 * over the records, then the inner loop's margins along them (src/analysis/marginsAlong.ts, computed
 * after the fact as the run does). Records are copied, never modified.
 */
import { marginsAlongRun } from '../analysis/marginsAlong.ts';
import { toCsv } from '../io/csv.ts';
import type { SimRecord } from '../sim/engine.ts';
import { traceColumns, traceRows } from '../sim/runOutput.ts';
import type { SimSystem } from '../sim/system.ts';

export function traceCsvText(sys: SimSystem, trace: readonly SimRecord[]): string {
  const scenario = sys.scenario;
  let records: readonly SimRecord[] = trace;
  if (scenario.control && records.length > 0) {
    const along = marginsAlongRun(scenario, records, scenario.supervisor?.pmFloorDeg ?? 45);
    records = records.map((r, i) => ({ ...r, pmDeg: along.samples[i].pmDeg, gmDb: along.samples[i].gmDb }));
  }
  const cols = traceColumns(sys, records).map((c) => c[0]);
  return toCsv(traceRows(sys, records), cols);
}

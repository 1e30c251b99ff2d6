/**
 * A run's results as plain data for the files `lossdial run` writes: trace rows with unit-named
 * columns (one per record) and the summary (status, metrics, warnings, cautions). Pure: the
 * caller serializes and writes.
 */
import { type Caution, HARDWARE_NOTICE } from '../analysis/cautions.ts';
import { runCautions } from './cautions.ts';
import type { SimRecord, SimResult } from './engine.ts';
import type { SimSystem } from './system.ts';

type Column = readonly [name: string, get: (r: SimRecord) => number | string];

const BASE_KEYS = new Set([
  'tS', 'demandW', 'heatToCoolantW', 'pinW', 'poutW', 'totalLossW', 'semiLossW', 'hsLossW', 'lsLossW', 'passiveLossW',
  'gateDriverW', 'efficiency', 'yMeasured', 'reference', 'yDevMax', 'duty', 'fswHz', 'deadTimeS', 'vDriveV', 'tjHsC',
  'tjLsC', 'heatsinkC', 'coolantC', 'inletC', 'loadROhm', 'loadIA',
]);

/** Trace columns in file order; names carry SI units. The regulated quantity is named for the topology. */
export function traceColumns(sys: SimSystem, records: readonly SimRecord[]): Column[] {
  const buck = sys.plant.conv.kind === 'buck';
  const cols: Column[] = [
    ['tS', (r) => r.tS],
    ['demandW', (r) => r.demandW],
    ['heatToCoolantW', (r) => r.heatToCoolantW],
    ['pinW', (r) => r.pinW],
    ['poutW', (r) => r.poutW],
    ['totalLossW', (r) => r.totalLossW],
    ['semiLossW', (r) => r.semiLossW],
    ['hsLossW', (r) => r.hsLossW],
    ['lsLossW', (r) => r.lsLossW],
    ['passiveLossW', (r) => r.passiveLossW],
    ['gateDriverW', (r) => r.gateDriverW],
    ['efficiency', (r) => r.efficiency],
    [buck ? 'voutV' : 'iLoadA', (r) => r.yMeasured],
    [buck ? 'voutRefV' : 'iRefA', (r) => r.reference],
    [buck ? 'voutDevMaxV' : 'iLoadDevMaxA', (r) => r.yDevMax],
    ['duty', (r) => r.duty],
    ['fswHz', (r) => r.fswHz],
    ['deadTimeS', (r) => r.deadTimeS],
    ['vDriveV', (r) => r.vDriveV],
    ['tjHsC', (r) => r.tjHsC],
    ['tjLsC', (r) => r.tjLsC],
    ['heatsinkC', (r) => r.heatsinkC],
    ['coolantC', (r) => r.coolantC],
    ['inletC', (r) => r.inletC],
  ];
  if (buck) cols.push(sys.loadIsCurrent ? ['loadIA', (r) => r.loadIA] : ['loadROhm', (r) => r.loadROhm]);
  // Supervisor fields, in the order they first appear.
  const extra = new Set<string>();
  for (const r of records) for (const k of Object.keys(r)) if (!BASE_KEYS.has(k)) extra.add(k);
  for (const k of extra) cols.push([k, (r) => r[k]]);
  return cols;
}

/** One row per record: column name → value (non-finite numbers become null, an empty CSV field). */
export function traceRows(sys: SimSystem, records: readonly SimRecord[]): Array<Record<string, number | string | null>> {
  const cols = traceColumns(sys, records);
  return records.map((r) => {
    const row: Record<string, number | string | null> = {};
    for (const [name, get] of cols) {
      const v = get(r);
      row[name] = typeof v === 'number' && !Number.isFinite(v) ? null : v ?? null;
    }
    return row;
  });
}

export interface RunSummary {
  scenario: string;
  topology: 'buck' | 'halfBridge';
  status: SimResult['status'];
  cause: string | null;
  causeCode: string | null;
  tEndS: number;
  durationS: number;
  engine: 'auto' | 'odex' | 'zoh';
  records: number;
  metrics: {
    energyJ: {
      input: number;
      output: number;
      lossTotal: number;
      lossHighSide: number;
      lossLowSide: number;
      lossPassive: number;
      lossGateDriver: number;
      heatToCoolant: number;
      /** ∫ of the power into stored electrical energy (½Li² + ½Cv²). */
      storedElectrical: number;
    };
    /** Output energy over input energy. */
    meanEfficiency: number;
    /** Heat carried off by the coolant per joule of loss. */
    usefulHeatFraction: number;
    junctions: Record<'highSide' | 'lowSide', { peakC: number; peakAtS: number; tjMaxC: number; limitMinusMarginC: number; timeAboveLimitMinusMarginS: number; timeAboveLimitS: number }>;
    regulation: { quantity: 'voutV' | 'iLoadA'; maxAbsDeviation: number; maxAbsDeviationAtS: number | null; dutyAtLimitS: number };
    heatsinkFinalC: number | null;
    coolantFinalC: number | null;
    engineStats: SimResult['stats'];
  };
  warnings: string[];
  cautions: Caution[];
  notice?: string;
}

const num = (x: number): number | null => (Number.isFinite(x) ? x : null);

export function runSummary(sys: SimSystem, res: SimResult, run: { durationS: number; engine: 'auto' | 'odex' | 'zoh'; warnings?: readonly string[] }): RunSummary {
  const e = res.energiesJ;
  const ex = res.extremes;
  const lossTotal = e.hs + e.ls + e.passive + e.gateDriver;
  const lim = sys.scenario.limits;
  const junction = (d: 0 | 1): RunSummary['metrics']['junctions']['highSide'] => {
    const dev = d === 0 ? sys.plant.leg.hs : sys.plant.leg.ls;
    return {
      peakC: ex.tjPeakC[d],
      peakAtS: ex.tjPeakAtS[d],
      tjMaxC: dev.tjMaxC,
      limitMinusMarginC: dev.tjMaxC - lim.tjMarginK,
      timeAboveLimitMinusMarginS: ex.timeInMarginS[d],
      timeAboveLimitS: ex.timeAboveMaxS[d],
    };
  };
  const last = res.records[res.records.length - 1];
  const cautions = runCautions(sys, res);
  const summary: RunSummary = {
    scenario: sys.scenario.name,
    topology: sys.plant.conv.kind,
    status: res.status,
    cause: res.cause ?? null,
    causeCode: res.causeCode ?? null,
    tEndS: res.tEndS,
    durationS: run.durationS,
    engine: run.engine,
    records: res.records.length,
    metrics: {
      energyJ: {
        input: e.pin,
        output: e.pout,
        lossTotal,
        lossHighSide: e.hs,
        lossLowSide: e.ls,
        lossPassive: e.passive,
        lossGateDriver: e.gateDriver,
        heatToCoolant: e.coolant,
        storedElectrical: e.store,
      },
      meanEfficiency: e.pin > 0 ? e.pout / e.pin : 0,
      usefulHeatFraction: lossTotal > 0 ? e.coolant / lossTotal : 0,
      junctions: { highSide: junction(0), lowSide: junction(1) },
      regulation: {
        quantity: sys.plant.conv.kind === 'buck' ? 'voutV' : 'iLoadA',
        maxAbsDeviation: ex.maxAbsErrorY,
        maxAbsDeviationAtS: num(ex.maxAbsErrorAtS),
        dutyAtLimitS: ex.dutyPinnedS,
      },
      heatsinkFinalC: last ? last.heatsinkC : null,
      coolantFinalC: last ? last.coolantC : null,
      engineStats: res.stats,
    },
    warnings: [...new Set([...res.warnings, ...(run.warnings ?? [])])],
    cautions,
  };
  if (cautions.length > 0) summary.notice = HARDWARE_NOTICE;
  return summary;
}

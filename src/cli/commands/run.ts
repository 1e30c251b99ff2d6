/**
 * `lossdial run FILE`: replay a scenario through the hybrid engine and write `trace.csv` (one row
 * per record) and `summary.json` (status, metrics, warnings, cautions), both atomically.
 * The engine runs in short synchronous chunks with the event loop in between, so Ctrl-C is heard:
 * the results so far are written with status `interrupted`.
 */
import { mkdir } from 'node:fs/promises';
import { join } from 'node:path';
import { type Command, Option } from 'commander';
import { toJsonText } from '../../io/atomic.ts';
import { toCsv } from '../../io/csv.ts';
import { ScenarioError } from '../../scenario/errors.ts';
import { Simulation } from '../../sim/engine.ts';
import { runSummary, traceColumns, traceRows } from '../../sim/runOutput.ts';
import { runMetrics } from '../../analysis/metrics.ts';
import { marginsAlongRun } from '../../analysis/marginsAlong.ts';
import { HARDWARE_NOTICE } from '../../analysis/cautions.ts';
import { copyPlotlyBeside, renderRunReport } from '../../io/runReport.ts';
import { supervisorFor, supervisorNotWiredWarning } from '../../sim/supervisorHook.ts';
import { type SimSystem, buildSystem } from '../../sim/system.ts';
import { CliError, SET_OPTION_HELP, ScenarioFileError, collect, describeFsError, ioOf, loadScenario, numberArg, writeOutput, type Io } from '../common.ts';

export const EXIT_DIVERGED = 3;
export const EXIT_INTERRUPTED = 130;

interface RunOptions {
  out?: string;
  duration?: number;
  set: string[];
  engine?: 'auto' | 'odex' | 'zoh';
}

/** Wall time per synchronous engine chunk: short enough for Ctrl-C to feel immediate. */
const CHUNK_WALL_MS = 50;
/** Progress lines appear only once a run has taken this long. */
const PROGRESS_AFTER_MS = 1000;

const pct = (x: number): string => `${(100 * x).toFixed(2)} %`;

/** Drive a Simulation to its end in chunks, yielding to the event loop between them. */
async function drive(sim: Simulation, io: Io, stopRequested: () => boolean): Promise<void> {
  const t0 = performance.now();
  const tEnd = sim.tEndS;
  let stepS = tEnd / 1000;
  let nextTenth = 1;
  let shown = false;
  while (!sim.done && !stopRequested()) {
    const c0 = performance.now();
    sim.advanceUntil(Math.min(sim.t + stepS, tEnd));
    const chunkMs = performance.now() - c0;
    // Aim each chunk at CHUNK_WALL_MS of work; where chunks end does not change the trajectory.
    stepS *= Math.min(Math.max(CHUNK_WALL_MS / Math.max(chunkMs, 0.1), 0.25), 4);
    const wallMs = performance.now() - t0;
    const frac = sim.t / tEnd;
    // Once the run has taken a second: a first line, then one per 10 % of the simulated time.
    if (wallMs > PROGRESS_AFTER_MS && (!shown || frac * 10 >= nextTenth)) {
      shown = true;
      nextTenth = Math.floor(frac * 10) + 1;
      io.err(`run: ${Math.round(100 * frac)} % — ${sim.t.toPrecision(4)} of ${tEnd} s simulated in ${(wallMs / 1e3).toFixed(1)} s wall (${(sim.t / (wallMs / 1e3)).toPrecision(3)}× real time)\n`);
    }
    await new Promise<void>((resolve) => setImmediate(resolve));
  }
}

function defaultOutDir(name: string): string {
  return join('out', name.replace(/[^A-Za-z0-9._-]+/g, '_'));
}

export async function runScenario(file: string, opts: RunOptions, io: Io): Promise<number> {
  const scenario = await loadScenario(file, opts.set);
  let sys: SimSystem;
  try {
    sys = buildSystem(scenario);
  } catch (e) {
    if (e instanceof ScenarioError) throw new ScenarioFileError(file, e, 'cannot be simulated');
    throw e;
  }
  const durationS = opts.duration ?? scenario.sim.durationS;
  if (!(durationS > 0)) throw new CliError(`--duration: must be > 0 s, got ${durationS}`);
  const engine = opts.engine ?? scenario.sim.engine;
  const dir = opts.out ?? defaultOutDir(scenario.name);
  try {
    await mkdir(dir, { recursive: true });
  } catch (e) {
    throw new CliError(`cannot create output directory ${dir}: ${describeFsError(e)}`);
  }
  const supervisor = supervisorFor(sys);
  const hookWarning = supervisorNotWiredWarning(sys, supervisor);

  let stop = false;
  const onSigint = (): void => {
    stop = true;
  };
  // Once: a second Ctrl-C falls through to the default handler and ends the process.
  process.once('SIGINT', onSigint);
  const sim = new Simulation(sys, { durationS, engine, supervisor, shouldStop: () => stop });
  try {
    await drive(sim, io, () => stop);
  } finally {
    process.removeListener('SIGINT', onSigint);
  }
  if (stop && !sim.done) {
    sim.status = 'interrupted';
    sim.cause = `stopped by Ctrl-C at ${sim.t.toFixed(6)} s of ${durationS} s`;
    sim.causeCode = 'interrupted';
  }
  const res = sim.finish();
  const summary = runSummary(sys, res, { durationS, engine, warnings: hookWarning ? [hookWarning] : [] });
  // Heat-loop metrics (tracking per demand step, regulation around actuator moves, zero-demand
  // penalty, actuator travel) and the loop margins along the trajectory.
  const heat = runMetrics(scenario, sys.plant, res);
  const pmFloor = scenario.supervisor?.pmFloorDeg ?? 45;
  let along: ReturnType<typeof marginsAlongRun> | undefined;
  if (scenario.control && res.records.length > 0) {
    along = marginsAlongRun(scenario, res.records, pmFloor);
    along.samples.forEach((m, i) => {
      res.records[i].pmDeg = m.pmDeg;
      res.records[i].gmDb = m.gmDb;
    });
  }
  const fullSummary = {
    ...summary,
    heatLoop: {
      trackedQuantity: heat.trackedQuantity,
      tracking: heat.heatTracking,
      regulationAroundMoves: heat.regulation,
      zeroDemand: heat.zeroDemand ?? null,
      actuatorTravel: heat.actuatorTravel,
      heatElsewhereJ: heat.energyJ.heatElsewhere,
    },
    marginsAlongRun: along
      ? { pmFloorDeg: along.pmFloorDeg, minPmDeg: along.minPmDeg, minPmAtS: along.minPmAtS, minGmDb: along.minGmDb, minGmAtS: along.minGmAtS, timeBelowPmFloorS: along.timeBelowPmFloorS, evaluations: along.evaluations }
      : null,
  };
  const cols = traceColumns(sys, res.records).map((c) => c[0]);
  const tracePath = join(dir, 'trace.csv');
  const summaryPath = join(dir, 'summary.json');
  const reportPath = join(dir, 'report.html');
  await writeOutput(tracePath, toCsv(traceRows(sys, res.records), cols));
  await writeOutput(summaryPath, toJsonText(fullSummary));
  try {
    copyPlotlyBeside(dir);
  } catch (e) {
    throw new CliError(`cannot copy plotly.min.js into ${dir}: ${describeFsError(e)}`);
  }
  await writeOutput(
    reportPath,
    renderRunReport({
      name: scenario.name,
      description: scenario.description,
      status: res.status,
      cause: res.cause,
      topology: sys.plant.conv.kind,
      records: res.records,
      metrics: heat,
      cautions: summary.cautions,
      warnings: summary.warnings,
      notice: HARDWARE_NOTICE,
    }),
  );

  const m = summary.metrics;
  const peak = Math.max(m.junctions.highSide.peakC, m.junctions.lowSide.peakC);
  io.out(
    `${scenario.name}: ${res.status}${res.cause ? ` (${res.cause})` : ''}, ${res.tEndS.toPrecision(6)} s simulated; ` +
      `mean efficiency ${pct(m.meanEfficiency)}, loss ${(m.energyJ.lossTotal / Math.max(res.tEndS, 1e-12)).toFixed(2)} W mean, ` +
      `peak Tj ${peak.toFixed(1)} °C\nwrote ${tracePath} (${res.records.length} rows), ${summaryPath} and ${reportPath}\n`,
  );
  if (heat.heatTracking.steps.length > 0) {
    const lines = [`heat loop (${heat.trackedQuantity}; band ${heat.heatTracking.bandRule}):`];
    for (const st of heat.heatTracking.steps)
      lines.push(
        `  ${st.tStartS.toFixed(0).padStart(6)} s  demand ${st.demandW.toFixed(1).padStart(6)} W → ${st.finalW.toFixed(2).padStart(7)} W` +
          (st.limited ? `  LIMITED (short ${(st.demandW - st.finalW).toFixed(1)} W)` : `  settled ${Number.isFinite(st.settlingS) ? `${st.settlingS.toFixed(1)} s` : 'no'}, overshoot ${st.overshootPct.toFixed(1)} %`),
      );
    const g = heat.regulation;
    lines.push(`  regulation: max deviation ${g.maxDeviation.toPrecision(3)} ${g.unit} over ${g.moves} actuator moves (settled within ${(g.settleAfterMovesMaxS * 1e3).toFixed(2)} ms)`);
    if (heat.zeroDemand)
      lines.push(`  zero demand: efficiency ${(100 * heat.zeroDemand.efficiency).toFixed(2)} % vs best ${(100 * heat.zeroDemand.bestEfficiency).toFixed(2)} % (penalty ${heat.zeroDemand.penaltyPctPoints.toFixed(3)} points)`);
    if (along) lines.push(`  inner loop along the run: phase margin ≥ ${along.minPmDeg.toFixed(1)}°, gain margin ≥ ${along.minGmDb.toFixed(1)} dB (floor ${along.pmFloorDeg}°)`);
    io.out(`${lines.join('\n')}\n`);
  }
  for (const w of summary.warnings) io.err(`warning: ${w}\n`);
  if (summary.cautions.length > 0) {
    for (const c of summary.cautions) io.err(`${c.severity}: ${c.code}: ${c.message}\n`);
    io.err(`${summary.notice}\n`);
  }
  if (res.status === 'diverged') throw new CliError(`run diverged at ${res.tEndS.toFixed(6)} s: ${res.cause}; partial results written to ${dir}`, EXIT_DIVERGED);
  if (res.status === 'interrupted') throw new CliError(`interrupted at ${res.tEndS.toFixed(6)} s; partial results written to ${dir}`, EXIT_INTERRUPTED);
  return 0;
}

export function register(program: Command): void {
  program
    .command('run')
    .description('replay the scenario through the dynamic simulation: trace.csv (one row per record) and summary.json (status, metrics, cautions)')
    .argument('<file>', 'scenario file (YAML or JSON)')
    .option('--out <dir>', 'output directory (default out/<scenario name>)')
    .option('--duration <s>', 'simulated time in seconds (default sim.durationS)', numberArg('--duration'))
    .option('--set <path=value>', SET_OPTION_HELP, collect, [])
    .addOption(new Option('--engine <engine>', 'integrator: auto (ZOH fast path, odex where strongly nonlinear), odex, or zoh (default sim.engine)').choices(['auto', 'odex', 'zoh']))
    .addHelpText(
      'after',
      '\nExit status: 0 when the run reached its end (status ok or limited), 3 when it diverged (partial results written,\n' +
        'status diverged with its cause), 130 when interrupted with Ctrl-C (results so far written, status interrupted),\n' +
        '2 on bad input, 1 on an internal failure. Progress goes to standard error for runs longer than about a second.\n\n' +
        'Examples:\n  lossdial run cases/buck-aux-48v.yaml\n  lossdial run cases/buck-aux-48v.yaml --duration 600 --set sim.recordIntervalS=1 --out out/warmup',
    )
    .action(async (file: string, opts: RunOptions, cmd: Command) => {
      await runScenario(file, opts, ioOf(cmd));
    });
}

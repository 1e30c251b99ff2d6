/** `lossdial margins FILE`: inner-loop margins at the operating point, margin maps, Bode page, gain suggestion. */
import { readFile } from 'node:fs/promises';
import { createRequire } from 'node:module';
import { Command, Option } from 'commander';
import { HARDWARE_NOTICE } from '../../analysis/cautions.ts';
import { LinearizationError } from '../../analysis/linearize.ts';
import { type MapAxis, type MarginMap, type MarginsBode, type MarginsResult, loadPathOf, marginMap, marginsAt, marginsBode, suggestGains } from '../../analysis/margins.ts';
import { MAX_SWEEP_STEPS, sweepValues } from '../../analysis/sweep.ts';
import { toCsv } from '../../io/csv.ts';
import { marginsPage } from '../../io/marginsReport.ts';
import { ScenarioError } from '../../scenario/errors.ts';
import { CliError, EXIT_INTERNAL, SET_OPTION_HELP, ScenarioFileError, collect, ioOf, loadScenario, numberArg, writeOutput } from '../common.ts';
import { renderMap, renderMargins, renderSuggestion } from '../marginsText.ts';

interface MarginsOptions {
  set: string[];
  map: string[];
  log?: boolean;
  json?: boolean;
  csv?: boolean;
  html?: string;
  suggest?: string;
  loads?: string;
  pmFloor?: number;
  gmFloor?: number;
  out?: string;
}

const MAX_MAP_CELLS = 250_000;

/** `PATH=A:B:N[:log|:lin]` → axis spec. */
export function parseMapArg(arg: string, logAll: boolean): { path: string; from: number; to: number; steps: number; log: boolean } {
  const m = /^([^=\s]+)=([^:]+):([^:]+):([^:]+)(?::(log|lin))?$/.exec(arg.trim());
  if (!m) throw new CliError(`--map: expected PATH=FROM:TO:STEPS[:log|:lin] (e.g. pwm.fswHz=20e3:300e3:15), got ${JSON.stringify(arg)}`);
  const num = (s: string, what: string): number => {
    const v = Number(s.trim());
    if (!/^[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$/.test(s.trim()) || !Number.isFinite(v)) throw new CliError(`--map ${m[1]}: ${what} must be a finite number, got ${JSON.stringify(s)}`);
    return v;
  };
  const steps = num(m[4], 'STEPS');
  if (!Number.isInteger(steps) || steps < 1 || steps > MAX_SWEEP_STEPS) throw new CliError(`--map ${m[1]}: STEPS must be a whole number from 1 to ${MAX_SWEEP_STEPS}, got ${m[4]}`);
  return { path: m[1], from: num(m[2], 'FROM'), to: num(m[3], 'TO'), steps, log: m[5] ? m[5] === 'log' : logAll };
}

/** `LO:HI` in Hz. */
function parseBand(arg: string): [number, number] {
  const m = /^([^:]+):([^:]+)$/.exec(arg.trim());
  const lo = m ? Number(m[1]) : NaN;
  const hi = m ? Number(m[2]) : NaN;
  if (!m || !Number.isFinite(lo) || !Number.isFinite(hi) || !(lo > 0) || !(hi >= lo)) throw new CliError(`--suggest: expected LO:HI in Hz with 0 < LO ≤ HI (e.g. 50e3:250e3), got ${JSON.stringify(arg)}`);
  return [lo, hi];
}

function parseLoads(arg: string | undefined): number[] | undefined {
  if (arg === undefined) return undefined;
  const vals = arg.split(',').map((s) => Number(s.trim()));
  if (vals.length === 0 || vals.some((v) => !Number.isFinite(v) || v < 0)) throw new CliError(`--loads: expected comma-separated non-negative numbers (e.g. 0.48,4.8), got ${JSON.stringify(arg)}`);
  return vals;
}

/** JSON with non-finite numbers spelled out: Infinity (no crossover) as "Infinity", NaN (no frequency) as null. */
function marginsJson(v: unknown): string {
  return `${JSON.stringify(v, (_k, x) => (typeof x === 'number' && !Number.isFinite(x) ? (Number.isNaN(x) ? null : x > 0 ? 'Infinity' : '-Infinity') : x), 2)}\n`;
}

function mapRows(m: MarginMap): Record<string, unknown>[] {
  return m.cells.map((c) => {
    const row: Record<string, unknown> = {};
    m.axes.forEach((a, i) => (row[a.path] = c.values[i]));
    row.status = c.status;
    for (const b of ['continuous', 'perSample'] as const) {
      const x = c.bases?.[b];
      row[`${b}.crossoverHz`] = x?.crossoverHz ?? null;
      row[`${b}.pmDeg`] = x?.pmDeg ?? null;
      row[`${b}.gmDb`] = x?.gmDb ?? null;
      row[`${b}.phaseCrossoverHz`] = x?.phaseCrossoverHz ?? null;
      row[`${b}.maxPoleAbs`] = x?.maxPoleAbs ?? null;
      row[`${b}.stable`] = x?.stable ?? null;
    }
    row.reason = c.reason ?? null;
    return row;
  });
}

function bodeRows(bd: MarginsBode): Record<string, number>[] {
  return bd.freqHz.map((fHz, i) => ({
    freqHz: fHz,
    'continuous.magDb': bd.exact.continuous.magDb[i],
    'continuous.phaseDeg': bd.exact.continuous.phaseDeg[i],
    'perSample.magDb': bd.exact.perSample.magDb[i],
    'perSample.phaseDeg': bd.exact.perSample.phaseDeg[i],
    'approx.continuous.magDb': bd.approx.continuous.magDb[i],
    'approx.continuous.phaseDeg': bd.approx.continuous.phaseDeg[i],
    'approx.perSample.magDb': bd.approx.perSample.magDb[i],
    'approx.perSample.phaseDeg': bd.approx.perSample.phaseDeg[i],
  }));
}

async function plotlySource(): Promise<string> {
  const require = createRequire(import.meta.url);
  try {
    return await readFile(require.resolve('plotly.js-dist-min/plotly.min.js'), 'utf8');
  } catch (e) {
    throw new CliError(`cannot read plotly.min.js from plotly.js-dist-min (reinstall dependencies): ${e instanceof Error ? e.message : String(e)}`, EXIT_INTERNAL);
  }
}

export function register(program: Command): void {
  program
    .command('margins')
    .description('inner-loop stability: crossover, phase and gain margins, closed-loop poles (exact discrete loop with delay and PWM hold), both gain bases; margin maps; PI gain suggestion')
    .argument('<file>', 'scenario file (YAML or JSON) with a control section')
    .option('--set <path=value>', SET_OPTION_HELP, collect, [])
    .option('--map <PATH=A:B:N>', 'margin map axis (repeat for a second axis), e.g. --map pwm.fswHz=20e3:300e3:15; append :log or :lin per axis', collect, [])
    .option('--log', 'space map axes geometrically (unless an axis says :lin)')
    .addOption(new Option('--json', 'print JSON (margins with Bode data, or the map cells); Infinity means no crossover').conflicts('csv'))
    .addOption(new Option('--csv', 'print CSV: the Bode table, or one row per map cell').conflicts('json'))
    .option('--html <file>', 'write a self-contained HTML page: Bode plot, and the margin map with the phase-margin floor')
    .option('--suggest <LO:HI>', 'suggest PI gains that hold the floors across this fsw band (Hz) and the --loads, maximizing crossover')
    .option('--loads <list>', `load values for --suggest (the scenario's load field: buck.load.rOhm, buck.load.iA or halfBridge.load.rOhm), comma-separated`)
    .option('--pm-floor <deg>', 'phase-margin floor (default: supervisor.pmFloorDeg or 45)', numberArg('--pm-floor'))
    .option('--gm-floor <dB>', 'gain-margin floor (default: supervisor.gmFloorDb or 6)', numberArg('--gm-floor'))
    .option('--out <file>', 'write the printed output to a file (atomically) instead of standard output')
    .addHelpText(
      'after',
      `
The configured gain basis uses the scenario's gains; the other basis uses the equivalent gains at
the scenario's fsw (same kp, same integral per sample). Continuous-basis gains are rescaled with
the sample period, per-sample gains are not: maps over pwm.fswHz show the difference.
Fast map axes (no re-parse per cell): pwm.fswHz, pwm.deadTimeS, gateDrive.vDriveV, buck.load.rOhm,
buck.load.iA, buck.vinV, halfBridge.load.rOhm, halfBridge.vdcV, control.kp, control.ki,
control.delaySamples, control.sensorFilterHz; any other field path works through re-validation.

Examples:
  lossdial margins cases/buck-aux-48v.yaml
  lossdial margins cases/buck-aux-48v.yaml --map pwm.fswHz=20e3:300e3:15 --log
  lossdial margins cases/buck-persample-unstable.yaml --map pwm.fswHz=100e3:300e3:21
  lossdial margins cases/buck-aux-48v.yaml --map pwm.fswHz=20e3:300e3:25:log --map gateDrive.vDriveV=5:12:15 --html margins.html
  lossdial margins cases/buck-aux-48v.yaml --suggest 20e3:300e3 --loads 0.48,4.8`,
    )
    .action(async (file: string, opts: MarginsOptions, cmd: Command) => {
      const io = ioOf(cmd);
      if (opts.map.length > 2) throw new CliError(`--map: at most two axes, got ${opts.map.length}`);
      const specs = opts.map.map((m) => parseMapArg(m, opts.log ?? false));
      if (specs.length === 2 && specs[0].path === specs[1].path) throw new CliError(`--map: the two axes must differ, got ${specs[0].path} twice`);
      if (opts.suggest !== undefined && specs.length > 0) throw new CliError('--suggest and --map: choose one');
      const axes: MapAxis[] = specs.map((s) => {
        try {
          return { path: s.path, values: sweepValues(s.from, s.to, s.steps, s.log) };
        } catch (e) {
          if (e instanceof RangeError) throw new CliError(`--map ${s.path}: ${e.message}`);
          throw e;
        }
      });
      const cellsN = axes.reduce((n, a) => n * a.values.length, 1);
      if (cellsN > MAX_MAP_CELLS) throw new CliError(`--map: ${cellsN} cells is more than ${MAX_MAP_CELLS}; use fewer steps`);
      const band = opts.suggest !== undefined ? parseBand(opts.suggest) : undefined;
      const loads = parseLoads(opts.loads);
      if (loads && !band) throw new CliError('--loads applies to --suggest');
      const scenario = await loadScenario(file, opts.set);
      if (!scenario.control) throw new CliError(`${file}: margins need a control section (kp, ki, basis, sampling, delaySamples)`);
      const pmFloor = opts.pmFloor ?? scenario.supervisor?.pmFloorDeg ?? 45;
      const gmFloor = opts.gmFloor ?? scenario.supervisor?.gmFloorDb ?? 6;
      const refuse = (e: unknown): never => {
        if (e instanceof LinearizationError) throw new CliError(`${file}: ${e.message}`);
        if (e instanceof ScenarioError) throw new ScenarioFileError(file, e, `mapped over ${axes.map((a) => a.path).join(' × ')} does not give valid scenarios`);
        throw e;
      };
      let text: string;
      let map: MarginMap | undefined;
      if (band) {
        let sug;
        try {
          sug = suggestGains(scenario, { fswBandHz: band, loads, pmFloorDeg: pmFloor, gmFloorDb: gmFloor });
        } catch (e) {
          if (e instanceof RangeError) throw new CliError(`--suggest: ${e.message}`);
          return refuse(e);
        }
        if (opts.json) text = marginsJson({ scenario: scenario.name, loadField: loadPathOf(scenario), suggestion: sug });
        else if (opts.csv) text = toCsv(sug.corners.map((c) => ({ ...c, kp: sug.kp, ki: sug.ki, basis: sug.basis })));
        else text = renderSuggestion(sug);
      } else if (axes.length > 0) {
        try {
          map = marginMap(scenario, axes);
        } catch (e) {
          return refuse(e);
        }
        if (opts.json) text = marginsJson(map);
        else if (opts.csv) text = toCsv(mapRows(map));
        else text = renderMap(map);
      } else {
        text = '';
      }
      // The point result: always for text/HTML without a map or suggestion; Bode data in JSON/CSV.
      let result: MarginsResult | undefined;
      let bode: MarginsBode | undefined;
      if (!band && (axes.length === 0 || opts.html)) {
        let r: MarginsResult;
        let bd: MarginsBode;
        try {
          r = marginsAt(scenario);
          bd = marginsBode(scenario);
        } catch (e) {
          return refuse(e);
        }
        result = r;
        bode = bd;
        if (axes.length === 0) {
          if (opts.json) text = marginsJson({ ...r, bode: bd });
          else if (opts.csv) text = toCsv(bodeRows(bd));
          else text = renderMargins(r);
        }
      }
      if (opts.html) {
        if (!result || !bode) throw new CliError('--html: not available with --suggest');
        const page = marginsPage({ result, bode, map, pmFloorDeg: pmFloor, gmFloorDb: gmFloor, notice: HARDWARE_NOTICE }, await plotlySource());
        await writeOutput(opts.html, page);
        io.err(`wrote ${opts.html}\n`);
      }
      if (opts.out) {
        await writeOutput(opts.out, text);
        io.err(`wrote ${opts.out}\n`);
      } else io.out(text);
    });
}

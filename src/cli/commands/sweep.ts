/** `lossdial sweep FILE --param PATH ...`: one-parameter characterization, a point per value. */
import { Command, Option } from 'commander';
import { HARDWARE_NOTICE } from '../../analysis/cautions.ts';
import { MAX_SWEEP_STEPS, sweepPoints, sweepValues } from '../../analysis/sweep.ts';
import { toJsonText } from '../../io/atomic.ts';
import { toCsv } from '../../io/csv.ts';
import { type PointRecord, pointRecord } from '../../io/pointRecord.ts';
import { ScenarioError } from '../../scenario/errors.ts';
import { CliError, SET_OPTION_HELP, ScenarioFileError, collect, integerArg, ioOf, loadScenario, numberArg, writeOutput } from '../common.ts';
import { fixed, plain, table } from '../format.ts';

interface SweepOptions {
  param: string;
  from: number;
  to: number;
  steps: number;
  log?: boolean;
  csv?: boolean;
  json?: boolean;
  set?: string[];
  out?: string;
}

export type SweepRow = { param: string; value: number } & PointRecord;

function renderTable(param: string, rows: readonly SweepRow[]): string {
  const head = [param, 'eff %', 'loss W', 'semi W', 'passive W', 'Tj max °C', 'iValley A', 'cautions'];
  const body = rows.map((r) => [
    plain(r.value),
    fixed(100 * r.efficiency, 2),
    fixed(r.totalLossW, 2),
    fixed(r.semiconductorLossW, 2),
    fixed(r.passiveLossW, 2),
    fixed(Math.max(r.tjC.highSide, r.tjC.lowSide), 1),
    fixed(r.iValleyA, 2),
    [...new Set(r.cautions.map((c) => c.code))].join(' ') || (r.status === 'ok' ? '' : r.status),
  ]);
  return table([head, ...body], ['r', 'r', 'r', 'r', 'r', 'r', 'r', 'l']);
}

/**
 * Each distinct caution once — same code and same sentence apart from its numbers — with the
 * values where it occurs and its first message.
 */
function renderSweepCautions(rows: readonly SweepRow[]): string {
  const groups = new Map<string, { severity: string; code: string; message: string; values: number[] }>();
  let flagged = 0;
  for (const r of rows) {
    if (r.cautions.length > 0) flagged++;
    for (const c of r.cautions) {
      const key = `${c.code}|${c.message.replace(/-?\d+(\.\d+)?(e[-+]?\d+)?/g, '#')}`;
      const g = groups.get(key) ?? { severity: c.severity, code: c.code, message: c.message, values: [] };
      if (!g.values.includes(r.value)) g.values.push(r.value);
      groups.set(key, g);
    }
  }
  if (groups.size === 0) return '';
  const list = (vs: number[]): string => (vs.length <= 4 ? vs.map(plain).join(', ') : `${vs.slice(0, 2).map(plain).join(', ')} … ${plain(vs[vs.length - 1])} (${vs.length} points)`);
  const lines = [...groups.values()].map((g) => [g.severity, g.code, `at ${list(g.values)}:`, g.message]);
  return `\nCautions (${flagged} of ${rows.length} points; message shown for the first)\n${table(lines, ['l', 'l', 'l', 'l'])}\n${HARDWARE_NOTICE}\n`;
}

export function register(program: Command): void {
  program
    .command('sweep')
    .description('sweep one scenario parameter: a steady-state point per value (loss, efficiency, Tj, ripple, cautions)')
    .argument('<file>', 'scenario file (YAML or JSON)')
    .requiredOption('--param <path>', 'dotted field path to sweep, e.g. pwm.fswHz or gateDrive.vDriveV')
    .requiredOption('--from <value>', 'first value (SI units of the field)', numberArg('--from'))
    .requiredOption('--to <value>', 'last value', numberArg('--to'))
    .requiredOption('--steps <n>', 'number of points, end points included', integerArg('--steps', 1, MAX_SWEEP_STEPS))
    .option('--log', 'space the points geometrically (bounds must be > 0)')
    .addOption(new Option('--csv', 'print CSV: one row per point, nested fields flattened with dots').conflicts('json'))
    .addOption(new Option('--json', 'print JSON: {param, spacing, rows: [...]}').conflicts('csv'))
    .option('--set <path=value>', SET_OPTION_HELP, collect)
    .option('--out <file>', 'write the output to a file (atomically) instead of standard output')
    .addHelpText(
      'after',
      '\nEach row has the keys of `point --json` plus `param` and `value`. In CSV the cautions column is a `;`-joined list of codes.\n\nExamples:\n  lossdial sweep cases/buck-aux-48v.yaml --param pwm.fswHz --from 20e3 --to 800e3 --steps 9 --log\n  lossdial sweep cases/buck-aux-48v.yaml --param gateDrive.vDriveV --from 4 --to 12 --steps 9 --csv',
    )
    .action(async (file: string, opts: SweepOptions, cmd: Command) => {
      const io = ioOf(cmd);
      let values: number[];
      try {
        values = sweepValues(opts.from, opts.to, opts.steps, opts.log);
      } catch (e) {
        if (e instanceof RangeError) throw new CliError(`sweep: ${e.message}`);
        throw e;
      }
      const scenario = await loadScenario(file, opts.set ?? []);
      let points;
      try {
        points = sweepPoints(scenario, opts.param, values);
      } catch (e) {
        if (e instanceof ScenarioError) throw new ScenarioFileError(file, e, `swept over --param ${opts.param} does not give valid scenarios`);
        throw e;
      }
      const rows: SweepRow[] = points.map((p) => ({ param: opts.param, value: p.value, ...pointRecord(p.point, p.scenario) }));
      let text: string;
      const anyCaution = rows.some((r) => r.cautions.length > 0);
      if (opts.csv) text = toCsv(rows.map((r) => ({ ...r, cautions: r.cautions.map((c) => c.code).join(';') })));
      else if (opts.json) text = toJsonText({ scenario: scenario.name, param: opts.param, spacing: opts.log ? 'log' : 'linear', rows });
      else text = `sweep of ${opts.param} on ${scenario.name} (${rows.length} points, ${opts.log ? 'log' : 'linear'})\n${renderTable(opts.param, rows)}${renderSweepCautions(rows)}`;
      if (opts.out) {
        await writeOutput(opts.out, text);
        io.err(`wrote ${rows.length} points to ${opts.out}\n`);
      } else io.out(text);
      // Machine-readable output stays clean; the hazard notice still reaches the person at the terminal.
      if (anyCaution && (opts.csv || opts.json || opts.out)) {
        const n = rows.filter((r) => r.cautions.length > 0).length;
        const codes = [...new Set(rows.flatMap((r) => r.cautions.map((c) => c.code)))].join(', ');
        io.err(`note: ${n} of ${rows.length} points carry cautions (${codes}). ${HARDWARE_NOTICE}\n`);
      }
    });
}

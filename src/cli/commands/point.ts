/** `lossdial point FILE`: the steady-state operating point with losses and temperatures. */
import type { Command } from 'commander';
import { operatingPoint, pointContext } from '../../analysis/operatingPoint.ts';
import { toJsonText } from '../../io/atomic.ts';
import { pointRecord } from '../../io/pointRecord.ts';
import { SET_OPTION_HELP, collect, ioOf, loadScenario } from '../common.ts';
import { renderCautions, renderPoint } from '../pointText.ts';

interface PointOptions {
  set?: string[];
  json?: boolean;
}

export function register(program: Command): void {
  program
    .command('point')
    .description('steady-state operating point: duty, efficiency, loss breakdown, junction temperatures, heat to coolant')
    .argument('<file>', 'scenario file (YAML or JSON)')
    .option('--set <path=value>', SET_OPTION_HELP, collect)
    .option('--json', 'print the point as one JSON record')
    .addHelpText(
      'after',
      '\nExamples:\n  lossdial point cases/buck-aux-48v.yaml\n  lossdial point cases/buck-aux-48v.yaml --set pwm.fswHz=300e3 --set gateDrive.vDriveV=6 --json',
    )
    .action(async (file: string, opts: PointOptions, cmd: Command) => {
      const io = ioOf(cmd);
      const scenario = await loadScenario(file, opts.set ?? []);
      const record = pointRecord(operatingPoint(pointContext(scenario)), scenario);
      if (opts.json) io.out(toJsonText(record));
      else io.out(renderPoint(record) + renderCautions(record.cautions));
    });
}

/** `lossdial schema`: the JSON Schema of scenario files, for editors. */
import type { Command } from 'commander';
import { toJsonText } from '../../io/atomic.ts';
import { scenarioJsonSchema } from '../../scenario/exportSchema.ts';
import { ioOf, writeOutput } from '../common.ts';

export function register(program: Command): void {
  program
    .command('schema')
    .description('print the JSON Schema of scenario files (for editor completion and checks)')
    .option('--out <file>', 'write it to a file (atomically) instead of standard output')
    .addHelpText('after', '\nExample:\n  lossdial schema --out cases/scenario.schema.json')
    .action(async (opts: { out?: string }, cmd: Command) => {
      const text = toJsonText(scenarioJsonSchema());
      if (opts.out) {
        await writeOutput(opts.out, text);
        ioOf(cmd).err(`wrote ${opts.out}\n`);
      } else ioOf(cmd).out(text);
    });
}

/** `lossdial check FILE...`: validate scenario files; every problem as `path: message`. */
import type { Command } from 'commander';
import { CliError, ioOf, loadScenario } from '../common.ts';

export function register(program: Command): void {
  program
    .command('check')
    .description('validate scenario files; print every problem as "path: message"')
    .argument('<files...>', 'scenario files (YAML or JSON)')
    .addHelpText('after', '\nExit code 0 when every file is valid, 2 otherwise.\n\nExample:\n  lossdial check cases/buck-aux-48v.yaml')
    .action(async (files: string[], _opts: unknown, cmd: Command) => {
      const io = ioOf(cmd);
      let bad = 0;
      for (const file of files) {
        try {
          const s = await loadScenario(file);
          io.out(`ok: ${s.name} (${s.topology})\n`);
        } catch (e) {
          if (!(e instanceof CliError)) throw e;
          bad++;
          io.err(`${e.message}\n`);
        }
      }
      if (bad > 0) throw new CliError('', 2);
    });
}

/** `lossdial study-merge DIR... --out DIR`: combine shard outputs into one study output. */
import type { Command } from 'commander';
import { mergeStudies } from '../../study/merge.ts';
import { StudyError } from '../../study/runner.ts';
import { CliError, ioOf } from '../common.ts';
import { renderRiskTable } from '../studyText.ts';

export function register(program: Command): void {
  program
    .command('study-merge')
    .description('combine study shard directories into one output, identical to a single-machine run')
    .argument('<dirs...>', 'shard output directories (from study --shard K/N)')
    .requiredOption('--out <dir>', 'directory for the combined output')
    .addHelpText(
      'after',
      '\nEvery input must come from the same study spec and scenario; together they must hold each sample\nexactly once (duplicates or gaps are an error, naming the samples and shards).\n\nExample:\n  lossdial study-merge out/spread/shard-* --out out/spread-all',
    )
    .action(async (dirs: string[], opts: { out: string }, cmd: Command) => {
      const io = ioOf(cmd);
      let merged;
      try {
        merged = await mergeStudies(dirs, opts.out);
      } catch (e) {
        if (e instanceof StudyError) throw new CliError(e.message);
        throw e;
      }
      io.out(`merged ${dirs.length} director${dirs.length === 1 ? 'y' : 'ies'}: ${merged.total} samples\n`);
      if (merged.summary) io.out(renderRiskTable(merged.summary, merged.kind));
      io.out(`\nwrote results.jsonl, results.csv, summary.json, report.html in ${opts.out}\n`);
    });
}

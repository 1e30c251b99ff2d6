/** `lossdial study FILE --spec STUDY.yaml`: a parallel, resumable, shardable study over scenario variants. */
import { availableParallelism } from 'node:os';
import { join } from 'node:path';
import { SingleBar } from 'cli-progress';
import type { Command } from 'commander';
import { HARDWARE_NOTICE } from '../../analysis/cautions.ts';
import { ScenarioError } from '../../scenario/errors.ts';
import { type StudyProgress, StudyError, runStudy } from '../../study/runner.ts';
import { type Shard, ShardError, parseShard } from '../../study/shard.ts';
import { type StudySpec, parseStudySpec } from '../../study/spec.ts';
import { CliError, EXIT_INTERNAL, type Io, SET_OPTION_HELP, collect, integerArg, ioOf, loadScenario, readTextFile } from '../common.ts';
import { etaText, rateText, renderRiskTable } from '../studyText.ts';

export const EXIT_INTERRUPTED = 130;

interface StudyOptions {
  spec: string;
  workers?: number;
  out?: string;
  shard?: string;
  set: string[];
  progress: boolean;
}

export async function loadStudySpec(file: string): Promise<StudySpec> {
  const text = await readTextFile(file);
  try {
    return parseStudySpec(text);
  } catch (e) {
    if (e instanceof ScenarioError) {
      const n = e.problems.length;
      throw new CliError(`${file} is not a valid study spec (${n} problem${n === 1 ? '' : 's'}):\n${e.message}`);
    }
    throw e;
  }
}

/** A bar on a terminal; elsewhere (batch logs, pipes) a plain line every 10 s and at the end. */
function progressFor(io: Io, enabled: boolean): StudyProgress | undefined {
  if (!enabled) return undefined;
  let t0 = 0;
  let startDone = 0;
  let total = 0;
  const rate = (done: number): number => (done - startDone) / Math.max((performance.now() - t0) / 1000, 1e-3);
  if (process.stderr.isTTY) {
    const bar = new SingleBar({
      stream: process.stderr,
      format: 'study {bar} {percentage}% | {value}/{total} | {rate} samples/s | ETA {etaText}',
      hideCursor: true,
      clearOnComplete: false,
    });
    return {
      start(n, done) {
        t0 = performance.now();
        startDone = done;
        total = n;
        bar.start(n, done, { rate: '–', etaText: '?' });
      },
      update(done) {
        const r = rate(done);
        bar.update(done, { rate: rateText(r), etaText: etaText((total - done) / r) });
      },
      stop: () => bar.stop(),
    };
  }
  let last = 0;
  let lastDone = 0;
  const line = (done: number): void => {
    const r = rate(done);
    io.err(`study: ${done}/${total} (${Math.floor((100 * done) / Math.max(total, 1))} %), ${rateText(r)} samples/s, ETA ${etaText((total - done) / r)}\n`);
  };
  return {
    start(n, done) {
      t0 = last = performance.now();
      startDone = lastDone = done;
      total = n;
    },
    update(done) {
      lastDone = done;
      if (performance.now() - last > 10_000) {
        last = performance.now();
        line(done);
      }
    },
    stop: () => {
      if (lastDone > startDone) line(lastDone);
    },
  };
}

function outDirFor(opts: StudyOptions, spec: StudySpec, shard: Shard | undefined): string {
  const base = opts.out ?? join('out', `study-${spec.name}`);
  return shard && shard.n > 1 ? join(base, `shard-${shard.k}-of-${shard.n}`) : base;
}

export function register(program: Command): void {
  program
    .command('study')
    .description('run a study (grid, random sample, device-spread Monte Carlo) over scenario variants on a worker pool; resumable and shardable')
    .argument('<file>', 'scenario file (YAML or JSON)')
    .requiredOption('--spec <study.yaml>', 'study spec (YAML or JSON): name, seed, kind, grid, random, deviceSpread, outputs')
    .option('--workers <n>', `worker threads (default: ${availableParallelism()}, the available cores)`, integerArg('--workers', 1, 1024))
    .option('--out <dir>', 'output directory (default out/study-<spec name>); rerun with the same --out to resume')
    .option('--shard <K/N|auto/N>', 'run only samples with index mod N = K, into <out>/shard-K-of-N; auto takes K from the batch scheduler array index')
    .option('--set <path=value>', SET_OPTION_HELP, collect, [])
    .option('--no-progress', 'no progress bar or progress lines on stderr')
    .addHelpText(
      'after',
      `
Outputs in --out: study.json (what was run), results.jsonl (one line per sample, appended as
samples finish; rewritten sorted by index at the end), results.csv; for a whole study also
summary.json (risk table, heat-margin statistics) and report.html (self-contained, offline).
Ctrl-C stops dispatch, writes the samples in flight and exits 130; the same command resumes.

--shard auto/N reads the task index from JOB_COMPLETION_INDEX (Kubernetes indexed Job),
SLURM_ARRAY_TASK_ID, PBS_ARRAY_INDEX, SGE_TASK_ID (1-based) or AWS_BATCH_JOB_ARRAY_INDEX.
Combine shard directories with study-merge.

Examples:
  lossdial study cases/buck-cabin-warmup.yaml --spec cases/studies/spread-lowdrive.yaml --out out/spread
  lossdial study cases/buck-cabin-warmup.yaml --spec cases/studies/spread-lowdrive.yaml --out out/spread --shard auto/8`,
    )
    .action(async (file: string, opts: StudyOptions, cmd: Command) => {
      const io = ioOf(cmd);
      let shard: Shard | undefined;
      try {
        shard = opts.shard !== undefined ? parseShard(opts.shard, process.env) : undefined;
      } catch (e) {
        if (e instanceof ShardError) throw new CliError(e.message);
        throw e;
      }
      const spec = await loadStudySpec(opts.spec);
      const scenario = await loadScenario(file, opts.set);
      const outDir = outDirFor(opts, spec, shard);
      const workers = opts.workers ?? availableParallelism();
      const controller = new AbortController();
      let signals = 0;
      const onSignal = (): void => {
        signals++;
        if (signals === 1) {
          io.err('\nstopping: no new samples; finishing the ones in flight (Ctrl-C again to quit at once)\n');
          controller.abort();
        } else process.exit(EXIT_INTERRUPTED);
      };
      process.on('SIGINT', onSignal);
      process.on('SIGTERM', onSignal);
      let result;
      try {
        result = await runStudy({ spec, scenario, outDir, workers, shard, progress: progressFor(io, opts.progress), signal: controller.signal });
      } catch (e) {
        if (e instanceof StudyError) throw new CliError(e.message);
        if (e instanceof ScenarioError) throw new CliError(`${opts.spec} does not fit ${file} (${e.problems.length} problem${e.problems.length === 1 ? '' : 's'}):\n${e.message}`);
        throw e;
      } finally {
        process.off('SIGINT', onSignal);
        process.off('SIGTERM', onSignal);
      }
      if (result.droppedPartialLine) io.err('note: dropped a cut-short last line left by the previous run; its sample is computed again\n');
      const where = shard && shard.n > 1 ? ` shard ${shard.k}/${shard.n}` : '';
      const done = result.resumed + result.computed;
      if (result.interrupted)
        throw new CliError(
          `interrupted: ${done} of ${result.shardTotal} samples${where} are in ${join(outDir, 'results.jsonl')}; run the same command again to resume`,
          EXIT_INTERRUPTED,
        );
      const resumedText = result.resumed > 0 ? `, ${result.resumed} already done` : '';
      const speed = result.computed > 0 ? ` in ${result.elapsedS.toFixed(1)} s (${rateText(result.samplesPerS)} samples/s on ${workers} worker${workers === 1 ? '' : 's'})` : '';
      io.out(`study ${spec.name} on ${scenario.name}${where}: ${result.shardTotal} samples (kind ${spec.kind}), ${result.computed} computed${resumedText}${speed}\n`);
      const counts = Object.entries(result.counts).map(([k, v]) => `${k} ${v}`).join(', ');
      io.out(`  status: ${counts}\n`);
      if (result.summary) {
        io.out(renderRiskTable(result.summary, spec.kind));
        io.out(`\nwrote results.jsonl, results.csv, summary.json, report.html in ${outDir}\n`);
        if (result.summary.risk.some((r) => r.count > 0)) io.err(`note: some builds cross a limit. ${HARDWARE_NOTICE}\n`);
      } else io.out(`wrote results.jsonl, results.csv in ${outDir}; combine the shards with: lossdial study-merge <shard dirs> --out <dir>\n`);
      const failed = result.counts.failed ?? 0;
      if (failed > 0) throw new CliError(`${failed} samples failed with an internal error (status "failed" in results.jsonl); this is a bug in lossdial`, EXIT_INTERNAL);
    });
}

/**
 * Running a study on this machine: a piscina worker pool evaluates batches of samples, each
 * finished batch is appended to `results.jsonl` at once, and a rerun with the same `--out`
 * resumes where the last one stopped. When every sample of the run's shard is in, the results
 * are rewritten sorted by index with `results.csv` (and, for a whole study, `summary.json` and
 * `report.html`), all written atomically. The files hold no times or machine details, so the
 * same study gives the same bytes on any machine, with any worker count or shard split.
 */
import { createHash } from 'node:crypto';
import { type FileHandle, mkdir, open, readFile, truncate } from 'node:fs/promises';
import { createRequire } from 'node:module';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { Piscina } from 'piscina';
import { writeFileAtomic, writeJsonAtomic } from '../io/atomic.ts';
import { ScenarioError, type ScenarioProblem } from '../scenario/errors.ts';
import { type Scenario, parseScenarioObject } from '../scenario/parse.ts';
import { RESULT_FIELDS, type SampleRecord } from './evaluate.ts';
import { ResultsFileError, parseRecords, readResultsText, resultsCsv, sortedJsonl } from './records.ts';
import { renderStudyReport } from './report.ts';
import { type StudySummary, summarize } from './risk.ts';
import { shardIndexes } from './sampler.ts';
import type { Shard } from './shard.ts';
import { type StudySpec, parseStudySpecObject } from './spec.ts';
import { type StudyContext, preflight, studyContext } from './variant.ts';
import type { StudyWorkerData } from './worker.ts';

export const MANIFEST_FILE = 'study.json';
export const RESULTS_FILE = 'results.jsonl';
export const CSV_FILE = 'results.csv';
export const SUMMARY_FILE = 'summary.json';
export const REPORT_FILE = 'report.html';
export const FORMAT = 'lossdial-study/1';

/** A study that cannot run or merge as asked (bad directory, other study's results, gaps). */
export class StudyError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'StudyError';
  }
}

export interface StudyManifest {
  format: string;
  study: string;
  kind: string;
  scenario: string;
  total: number;
  shard: Shard | null;
  specHash: string;
  scenarioHash: string;
  spec: unknown;
  scenarioInput: unknown;
}

function canonical(v: unknown): string {
  if (Array.isArray(v)) return `[${v.map(canonical).join(',')}]`;
  if (v !== null && typeof v === 'object')
    return `{${Object.keys(v)
      .sort()
      .map((k) => `${JSON.stringify(k)}:${canonical((v as Record<string, unknown>)[k])}`)
      .join(',')}}`;
  return JSON.stringify(v) ?? 'null';
}

function hashOf(v: unknown): string {
  return createHash('sha256').update(canonical(v)).digest('hex').slice(0, 16);
}

export function manifestOf(spec: StudySpec, base: Scenario, shard: Shard | undefined): StudyManifest {
  return {
    format: FORMAT,
    study: spec.name,
    kind: spec.kind,
    scenario: base.name,
    total: spec.total,
    shard: shard && shard.n > 1 ? { k: shard.k, n: shard.n } : null,
    specHash: hashOf(spec.input),
    scenarioHash: hashOf(base.input),
    spec: spec.input,
    scenarioInput: base.input,
  };
}

/** The study's context, checked before anything is written: spec × scenario, outputs, kind. */
export function prepareStudy(spec: StudySpec, base: Scenario): StudyContext {
  const ctx = studyContext(spec, base);
  const problems: ScenarioProblem[] = [];
  try {
    preflight(ctx);
  } catch (e) {
    if (!(e instanceof ScenarioError)) throw e;
    problems.push(...e.problems);
  }
  const known = RESULT_FIELDS[spec.kind];
  (spec.outputs ?? []).forEach((o, i) => {
    if (!known.includes(o)) problems.push({ path: `outputs[${i}]`, message: `unknown result field ${JSON.stringify(o)} for kind ${spec.kind}; known: ${known.join(', ')}` });
  });
  if (problems.length > 0) throw new ScenarioError(problems);
  return ctx;
}

export async function readIfExists(path: string): Promise<string | undefined> {
  try {
    return await readFile(path, 'utf8');
  } catch (e) {
    if ((e as NodeJS.ErrnoException).code === 'ENOENT') return undefined;
    throw e;
  }
}

function plotlySource(): Promise<string> {
  const require = createRequire(import.meta.url);
  return readFile(require.resolve('plotly.js-dist-min'), 'utf8');
}

/**
 * Write the finished outputs for `lines` (every sample of the manifest's shard): sorted
 * results.jsonl and results.csv; for a whole study also summary.json and report.html.
 */
export async function finalizeStudy(outDir: string, manifest: StudyManifest, lines: ReadonlyMap<number, string>): Promise<StudySummary | undefined> {
  const spec = parseStudySpecObject(manifest.spec);
  const base = parseScenarioObject(manifest.scenarioInput);
  const ctx = studyContext(spec, base);
  await writeFileAtomic(join(outDir, RESULTS_FILE), sortedJsonl(lines));
  const records: SampleRecord[] = parseRecords(lines);
  await writeFileAtomic(join(outDir, CSV_FILE), resultsCsv(records, spec.outputs));
  if (manifest.shard) return undefined;
  const summary = summarize(records, spec.grid.map((a) => a.path));
  await writeJsonAtomic(join(outDir, SUMMARY_FILE), { study: spec.name, scenario: base.name, kind: spec.kind, total: spec.total, operating: ctx.operatingPatch, tjMarginK: ctx.tjMarginK, ...summary });
  const html = renderStudyReport(
    { study: spec.name, description: spec.description, scenario: base.name, kind: spec.kind, total: spec.total, operating: ctx.operatingPatch, tjMarginK: ctx.tjMarginK, spread: spec.deviceSpread, summary },
    await plotlySource(),
  );
  await writeFileAtomic(join(outDir, REPORT_FILE), html);
  return summary;
}

export interface StudyProgress {
  start(total: number, done: number): void;
  update(done: number): void;
  stop(): void;
}

export interface RunStudyOptions {
  spec: StudySpec;
  /** The scenario with the command line's --set applied (the spec's `set` comes on top). */
  scenario: Scenario;
  outDir: string;
  workers: number;
  shard?: Shard;
  progress?: StudyProgress;
  /** Aborting stops dispatch; samples in flight finish and are written. */
  signal?: AbortSignal;
  /** Samples per worker task (default: sized from the study, 1..64). */
  batchSize?: number;
}

export interface RunStudyResult {
  /** Samples in this run's shard (the whole study without a shard). */
  shardTotal: number;
  /** Found done in results.jsonl at start (resumed), and computed in this run. */
  resumed: number;
  computed: number;
  /** A cut-short last line found at start and dropped (its sample was recomputed). */
  droppedPartialLine: boolean;
  interrupted: boolean;
  elapsedS: number;
  /** Samples per second from dispatch to the last sample (worker start-up included). */
  samplesPerS: number;
  /** Samples per second between the first and the last finished batch (start-up excluded). */
  steadySamplesPerS: number;
  complete: boolean;
  counts: Record<string, number>;
  summary?: StudySummary;
}

export async function runStudy(opts: RunStudyOptions): Promise<RunStudyResult> {
  const { spec, scenario, outDir } = opts;
  const t0 = performance.now();
  prepareStudy(spec, scenario);
  const manifest = manifestOf(spec, scenario, opts.shard);
  await mkdir(outDir, { recursive: true });
  const manifestPath = join(outDir, MANIFEST_FILE);
  const resultsPath = join(outDir, RESULTS_FILE);
  const existing = await readIfExists(manifestPath);
  if (existing !== undefined) {
    let old: Partial<StudyManifest>;
    try {
      old = JSON.parse(existing) as Partial<StudyManifest>;
    } catch {
      throw new StudyError(`${manifestPath} is not a study manifest; use another --out`);
    }
    const differs: string[] = (['format', 'specHash', 'scenarioHash', 'total'] as const).filter((k) => old[k] !== manifest[k]);
    if (JSON.stringify(old.shard ?? null) !== JSON.stringify(manifest.shard)) differs.push('shard');
    if (differs.length > 0)
      throw new StudyError(
        `${outDir} holds results of another study or shard (${differs.join(', ')} differ${differs.length === 1 ? 's' : ''}); use another --out, or delete it to start over`,
      );
  } else {
    if ((await readIfExists(resultsPath)) !== undefined) throw new StudyError(`${resultsPath} exists without ${MANIFEST_FILE}; use another --out`);
    await writeJsonAtomic(manifestPath, manifest);
  }

  const mine = shardIndexes(spec.total, opts.shard);
  const shardN = opts.shard?.n ?? 1;
  const shardK = opts.shard?.k ?? 0;
  let read = { lines: new Map<number, string>(), goodBytes: 0, partial: undefined as string | undefined };
  const text = await readIfExists(resultsPath);
  if (text !== undefined) {
    try {
      read = readResultsText(text, spec.total, resultsPath);
    } catch (e) {
      if (e instanceof ResultsFileError) throw new StudyError(e.message);
      throw e;
    }
    for (const i of read.lines.keys())
      if (i % shardN !== shardK) throw new StudyError(`${resultsPath} holds sample ${i}, which is not in shard ${shardK}/${shardN}`);
    // Drop a line cut short by an interruption before appending after it.
    if (read.partial !== undefined) await truncate(resultsPath, read.goodBytes);
  }
  const todo = mine.filter((i) => !read.lines.has(i));
  const resumed = mine.length - todo.length;
  let computed = 0;
  let interrupted = false;
  let timing = { t0: 0, t1: 0, tFirst: 0, firstCount: 0 };
  if (todo.length > 0) ({ computed, interrupted, timing } = await computeSamples(opts, resultsPath, todo, resumed, mine.length));
  const complete = !interrupted && computed === todo.length;
  const result: RunStudyResult = {
    shardTotal: mine.length,
    resumed,
    computed,
    droppedPartialLine: read.partial !== undefined,
    interrupted,
    elapsedS: (performance.now() - t0) / 1000,
    samplesPerS: computed > 0 && timing.t1 > timing.t0 ? computed / ((timing.t1 - timing.t0) / 1000) : 0,
    steadySamplesPerS: timing.t1 > timing.tFirst && computed > timing.firstCount ? (computed - timing.firstCount) / ((timing.t1 - timing.tFirst) / 1000) : 0,
    complete,
    counts: {},
  };
  if (!complete) return result;
  const final = readResultsText(await readFile(resultsPath, 'utf8'), spec.total, resultsPath);
  const missing = mine.filter((i) => !final.lines.has(i));
  if (missing.length > 0 || final.partial !== undefined) throw new StudyError(`${resultsPath}: ${missing.length} samples missing after the run (first: ${missing.slice(0, 5).join(', ')})`);
  for (const line of final.lines.values()) {
    const status = (JSON.parse(line) as SampleRecord).result.status;
    result.counts[status] = (result.counts[status] ?? 0) + 1;
  }
  result.summary = await finalizeStudy(outDir, manifest, final.lines);
  return result;
}

/** Append every byte (a write may take fewer than it is given). */
async function appendAll(fh: FileHandle, bytes: Uint8Array): Promise<void> {
  for (let off = 0; off < bytes.length; ) off += (await fh.write(bytes, off, bytes.length - off)).bytesWritten;
}

/**
 * The worker pool of a study: `threads` threads, each evaluating batches of sample indexes of
 * this spec on this scenario (`worker.ts`). Also used by the benchmark, so it measures the pool
 * the studies run on.
 */
export function createStudyPool(spec: StudySpec, scenario: Scenario, threads: number): Piscina {
  const isTs = import.meta.url.endsWith('.ts');
  const workerData: StudyWorkerData = { specInput: spec.input, scenarioInput: scenario.input };
  return new Piscina({
    filename: fileURLToPath(new URL(isTs ? './workerBoot.mjs' : './worker.js', import.meta.url)),
    minThreads: threads,
    maxThreads: threads,
    idleTimeout: 60_000,
    // The boot module registers the TypeScript loader itself; nothing inherited is needed.
    execArgv: [],
    workerData,
  });
}

async function computeSamples(
  opts: RunStudyOptions,
  resultsPath: string,
  todo: readonly number[],
  resumed: number,
  shardTotal: number,
): Promise<{ computed: number; interrupted: boolean; timing: { t0: number; t1: number; tFirst: number; firstCount: number } }> {
  // At least 32 tasks per worker (progress, balance), at most 64 samples a task: each task costs the
  // main thread a message and a file append, which for point samples would otherwise take a share
  // of a core that the workers need.
  const batchSize = opts.batchSize ?? Math.min(64, Math.max(1, Math.ceil(todo.length / (Math.max(1, opts.workers) * 32))));
  const batches: number[][] = [];
  for (let b = 0; b < todo.length; b += batchSize) batches.push(todo.slice(b, b + batchSize));
  // No more threads than batches: each thread pays the TypeScript start-up.
  const workers = Math.max(1, Math.min(Math.floor(opts.workers), batches.length));
  const pool = createStudyPool(opts.spec, opts.scenario, workers);
  const fh = await open(resultsPath, 'a');
  let computed = 0;
  let stopped = false;
  let interrupted = false;
  let failure: unknown;
  let writing: Promise<unknown> = Promise.resolve();
  const t0 = performance.now();
  let t1 = t0;
  let tFirst = 0;
  let firstCount = 0;
  opts.progress?.start(shardTotal, resumed);
  try {
    await new Promise<void>((resolve) => {
      let next = 0;
      let inFlight = 0;
      const finishIfIdle = (): void => {
        if (inFlight === 0 && (stopped || next >= batches.length)) resolve();
      };
      const pump = (): void => {
        while (!stopped && inFlight < 2 * workers && next < batches.length) {
          const batch = batches[next++];
          inFlight++;
          pool
            .run(batch)
            .then((text: Uint8Array) => {
              // Appends are chained so lines never interleave; one write per batch.
              writing = writing.then(async () => {
                await appendAll(fh, text);
                computed += batch.length;
                if (tFirst === 0) {
                  tFirst = performance.now();
                  firstCount = computed;
                }
                opts.progress?.update(resumed + computed);
              });
              return writing;
            })
            .catch((e: unknown) => {
              failure ??= e;
              stopped = true;
            })
            .finally(() => {
              inFlight--;
              pump();
              finishIfIdle();
            });
        }
        finishIfIdle();
      };
      if (opts.signal?.aborted) {
        stopped = interrupted = true;
        resolve();
        return;
      }
      opts.signal?.addEventListener('abort', () => {
        stopped = interrupted = true;
        finishIfIdle();
      });
      pump();
    });
    await writing;
    t1 = performance.now();
  } finally {
    opts.progress?.stop();
    await fh.close();
    await pool.destroy();
  }
  if (failure !== undefined) throw failure;
  return { computed, interrupted, timing: { t0, t1, tFirst, firstCount } };
}

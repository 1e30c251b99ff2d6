/**
 * Combining shard outputs: every input must come from the same study (spec and scenario), and
 * together they must hold each sample exactly once; the output is what a single-machine run
 * writes, byte for byte (see finalizeStudy).
 */
import { mkdir } from 'node:fs/promises';
import { join } from 'node:path';
import { writeJsonAtomic } from '../io/atomic.ts';
import { ResultsFileError, readResultsText } from './records.ts';
import type { StudySummary } from './risk.ts';
import { FORMAT, MANIFEST_FILE, RESULTS_FILE, type StudyManifest, StudyError, finalizeStudy, readIfExists } from './runner.ts';

/** Read a finished or partial study directory for merging. */
export async function readStudyDir(dir: string): Promise<{ manifest: StudyManifest; read: ReturnType<typeof readResultsText> }> {
  const m = await readIfExists(join(dir, MANIFEST_FILE));
  if (m === undefined) throw new StudyError(`${dir}: no ${MANIFEST_FILE}; not a study output directory`);
  let manifest: StudyManifest;
  try {
    manifest = JSON.parse(m) as StudyManifest;
  } catch {
    throw new StudyError(`${join(dir, MANIFEST_FILE)} is not a study manifest`);
  }
  if (manifest.format !== FORMAT) throw new StudyError(`${join(dir, MANIFEST_FILE)}: format ${JSON.stringify(manifest.format)}, expected ${FORMAT}`);
  const text = (await readIfExists(join(dir, RESULTS_FILE))) ?? '';
  try {
    return { manifest, read: readResultsText(text, manifest.total, join(dir, RESULTS_FILE)) };
  } catch (e) {
    if (e instanceof ResultsFileError) throw new StudyError(e.message);
    throw e;
  }
}

/**
 * Combine shard outputs into one study output, identical to a single-machine run. All inputs
 * must come from the same study (spec and scenario); together they must hold every sample
 * exactly once.
 */
export async function mergeStudies(dirs: readonly string[], outDir: string): Promise<{ total: number; kind: string; summary: StudySummary | undefined }> {
  if (dirs.length === 0) throw new StudyError('study-merge: give at least one study directory');
  const parts = [];
  for (const d of dirs) parts.push({ dir: d, ...(await readStudyDir(d)) });
  const first = parts[0].manifest;
  for (const p of parts.slice(1)) {
    const differs = (['study', 'specHash', 'scenarioHash', 'total'] as const).filter((k) => p.manifest[k] !== first[k]);
    if (differs.length > 0) throw new StudyError(`${p.dir} is from another study than ${parts[0].dir} (${differs.join(', ')} differ)`);
  }
  const lines = new Map<number, string>();
  const from = new Map<number, string>();
  const dups: string[] = [];
  for (const p of parts) {
    if (p.read.partial !== undefined) throw new StudyError(`${p.dir}: its results end with a cut-short line; finish that shard first (rerun it with the same --out)`);
    for (const [i, line] of p.read.lines) {
      if (lines.has(i)) {
        dups.push(`${i} (${from.get(i)} and ${p.dir})`);
        continue;
      }
      lines.set(i, line);
      from.set(i, p.dir);
    }
  }
  if (dups.length > 0) throw new StudyError(`study-merge: ${dups.length} samples appear more than once, e.g. ${dups.slice(0, 3).join('; ')}`);
  const missing: number[] = [];
  for (let i = 0; i < first.total; i++) if (!lines.has(i)) missing.push(i);
  if (missing.length > 0) {
    const shards = [...new Set(parts.map((p) => p.manifest.shard?.n).filter((n): n is number => n !== undefined))];
    const hint = shards.length === 1 ? ` (shards ${[...new Set(missing.map((i) => i % shards[0]))].slice(0, 10).join(', ')} of ${shards[0]} incomplete or not given)` : '';
    throw new StudyError(`study-merge: ${missing.length} of ${first.total} samples missing, first ${missing.slice(0, 5).join(', ')}${hint}`);
  }
  await mkdir(outDir, { recursive: true });
  const manifest: StudyManifest = { ...first, shard: null };
  await writeJsonAtomic(join(outDir, MANIFEST_FILE), manifest);
  const summary = await finalizeStudy(outDir, manifest, lines);
  return { total: first.total, kind: first.kind, summary };
}

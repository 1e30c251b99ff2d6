/**
 * The results file of a study: JSON lines, one record per sample, appended as samples finish.
 * Reading it back tolerates exactly one kind of damage, the one an interruption leaves: a last
 * line without its newline (a write cut short). Anything else is reported, never repaired.
 */
import { toCsv } from '../io/csv.ts';
import type { SampleRecord } from './evaluate.ts';

export class ResultsFileError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'ResultsFileError';
  }
}

export function recordLine(rec: SampleRecord): string {
  return `${JSON.stringify(rec)}\n`;
}

export interface ResultsRead {
  /** Complete lines (with their newline) by sample index. */
  lines: Map<number, string>;
  /** Bytes of the file up to the end of the last complete line. */
  goodBytes: number;
  /** The cut-short last line, when there was one (dropped). */
  partial: string | undefined;
}

/**
 * Parse a results file's text. Each complete line must be a record with an integer `index`
 * in [0, total); an index seen twice is an error (`what` names the file in messages).
 */
export function readResultsText(text: string, total: number, what: string): ResultsRead {
  const lines = new Map<number, string>();
  const end = text.lastIndexOf('\n') + 1;
  const partial = end < text.length ? text.slice(end) : undefined;
  let lineNo = 0;
  let start = 0;
  while (start < end) {
    const stop = text.indexOf('\n', start) + 1;
    const line = text.slice(start, stop);
    start = stop;
    lineNo++;
    if (line.trim() === '') continue;
    let index: unknown;
    try {
      index = (JSON.parse(line) as { index?: unknown }).index;
    } catch {
      throw new ResultsFileError(`${what} line ${lineNo}: not a JSON record (${JSON.stringify(line.slice(0, 40))}…); the file was changed by something other than lossdial`);
    }
    if (typeof index !== 'number' || !Number.isInteger(index) || index < 0 || index >= total)
      throw new ResultsFileError(`${what} line ${lineNo}: sample index must be a whole number from 0 to ${total - 1}, got ${JSON.stringify(index)}`);
    if (lines.has(index)) throw new ResultsFileError(`${what} line ${lineNo}: sample ${index} appears twice`);
    lines.set(index, line);
  }
  return { lines, goodBytes: Buffer.byteLength(text.slice(0, end)), partial };
}

/** The lines sorted by sample index, joined: the canonical results.jsonl of a finished study. */
export function sortedJsonl(lines: ReadonlyMap<number, string>): string {
  return [...lines.keys()]
    .sort((a, b) => a - b)
    .map((i) => lines.get(i)!)
    .join('');
}

export function parseRecords(lines: ReadonlyMap<number, string>): SampleRecord[] {
  return [...lines.keys()].sort((a, b) => a - b).map((i) => JSON.parse(lines.get(i)!) as SampleRecord);
}

/**
 * results.csv: one row per sample in index order, columns `index`, `seed`, `params.<path>`,
 * `devices.<device>.<draw>`, then the result fields (all, or those listed in `outputs`).
 */
export function resultsCsv(records: readonly SampleRecord[], outputs?: readonly string[]): string {
  const rows = records.map((r) => {
    const res = r.result as Record<string, unknown>;
    const picked = outputs ? Object.fromEntries(['status', ...outputs.filter((o) => o !== 'status')].map((k) => [k, res[k]])) : res;
    return { index: r.index, seed: r.seed, params: r.params, ...(r.devices ? { devices: r.devices } : {}), ...picked };
  });
  return toCsv(rows);
}

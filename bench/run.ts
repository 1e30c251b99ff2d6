/**
 * `npm run bench`: runs each benchmark in turn on this (single) thread, prints one line per
 * result with its ratio to target, and writes bench/results/latest.json atomically.
 * Add a benchmark by writing a module that exports a `Bench` and listing it below.
 */
import { mkdirSync, renameSync, writeFileSync } from 'node:fs';
import { cpus } from 'node:os';
import { fileURLToPath } from 'node:url';
import { benchMargins } from './margins.ts';
import { benchOpPoint } from './opPoint.ts';
import { benchServer } from './server.ts';
import { benchReplay, benchReplaySupervised } from './replay.ts';
import { benchStudy } from './study.ts';
import type { Bench, BenchResult } from './types.ts';

const BENCHES: ReadonlyArray<readonly [string, Bench]> = [['opPoint', benchOpPoint], ['study', benchStudy], ['replay', benchReplay], ['replaySupervised', benchReplaySupervised], ['margins', benchMargins], ['server', benchServer]];

function line(r: BenchResult): string {
  const value = r.value >= 100 ? Math.round(r.value).toString() : r.value.toPrecision(4);
  const target = r.target !== undefined ? ` (target ≥ ${r.target})` : '';
  const ratio = r.ratio !== undefined ? ` ratio ${r.ratio.toFixed(2)}` : '';
  return `${r.label}: ${value}${target}${ratio}`;
}

function writeAtomic(path: string, text: string): void {
  const tmp = `${path}.${process.pid}.tmp`;
  writeFileSync(tmp, text);
  renameSync(tmp, path);
}

async function main(): Promise<void> {
  const only = process.argv.slice(2);
  const results: BenchResult[] = [];
  for (const [id, bench] of BENCHES) {
    if (only.length > 0 && !only.includes(id)) continue;
    const r = await bench();
    results.push(r);
    console.log(line(r));
  }
  const dir = fileURLToPath(new URL('./results/', import.meta.url));
  mkdirSync(dir, { recursive: true });
  const record = {
    date: new Date().toISOString(),
    node: process.version,
    cpu: cpus()[0]?.model ?? 'unknown',
    threads: 1,
    results: Object.fromEntries(results.map((r) => [r.id, r])),
  };
  writeAtomic(`${dir}latest.json`, `${JSON.stringify(record, null, 2)}\n`);
}

main().catch((e: unknown) => {
  console.error(e instanceof Error ? (e.stack ?? e.message) : String(e));
  process.exit(1);
});

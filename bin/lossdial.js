#!/usr/bin/env -S node --single-threaded-gc
// Runs the TypeScript sources through tsx's loader so `npx lossdial` works right after `npm ci`.
// --single-threaded-gc: `study` and `serve` keep every core busy with worker threads, and V8's
// parallel GC helpers then only compete with them (measured: a fifth of a core taken from two
// study workers, +7 % samples/s without them); single-threaded commands lose nothing measurable.
// V8 reads the flag at start only (setting it at run time aborts), hence the shebang.
import { register } from 'tsx/esm/api';

register();
const { main } = await import('../src/cli/main.ts');
const code = await main(process.argv.slice(2));
process.exitCode = code;

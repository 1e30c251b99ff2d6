/**
 * The CLI's commands. To add one: create `src/cli/commands/<name>.ts` exporting
 * `register(program)`, and add one line here. Help lists commands in this order.
 */
import type { Command } from 'commander';
import * as check from './check.ts';
import * as margins from './margins.ts';
import * as point from './point.ts';
import * as run from './run.ts';
import * as schema from './schema.ts';
import * as serve from './serve.ts';
import * as study from './study.ts';
import * as studyMerge from './studyMerge.ts';
import * as sweep from './sweep.ts';

export interface CliCommand {
  register(program: Command): void;
}

export const COMMANDS: readonly CliCommand[] = [
  check,
  point,
  sweep,
  run,
  margins,
  schema,
  study,
  studyMerge,
  serve,
];

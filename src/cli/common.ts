/**
 * Helpers shared by the CLI commands: output streams, errors with exit codes, loading a scenario
 * file with `--set` overrides, and atomic output files.
 */
import { readFile } from 'node:fs/promises';
import { type Command, InvalidArgumentError } from 'commander';
import { writeFileAtomic } from '../io/atomic.ts';
import { ScenarioError } from '../scenario/errors.ts';
import { type Scenario, parseScenario, parseSetValue, withOverrides } from '../scenario/parse.ts';

export const EXIT_OK = 0;
export const EXIT_INTERNAL = 1;
export const EXIT_BAD_INPUT = 2;

/** A failure the user can act on: the message is printed as is, the process exits with `exitCode`. */
export class CliError extends Error {
  readonly exitCode: number;
  constructor(message: string, exitCode: number = EXIT_BAD_INPUT) {
    super(message);
    this.name = 'CliError';
    this.exitCode = exitCode;
  }
}

export interface Io {
  out(text: string): void;
  err(text: string): void;
}

/** The output streams main() configured; subcommands inherit them from the program. */
export function ioOf(cmd: Command): Io {
  const cfg = cmd.configureOutput();
  const out = cfg.writeOut ?? ((s: string) => process.stdout.write(s));
  const err = cfg.writeErr ?? ((s: string) => process.stderr.write(s));
  return { out, err };
}

/** `path: message`, one line per problem. */
export function formatProblems(e: ScenarioError): string {
  return e.problems.map((p) => `${p.path || '(root)'}: ${p.message}\n`).join('');
}

export function describeFsError(e: unknown): string {
  const code = (e as NodeJS.ErrnoException | undefined)?.code;
  switch (code) {
    case 'ENOENT':
      return 'no such file or directory';
    case 'EISDIR':
      return 'is a directory, expected a file';
    case 'EACCES':
    case 'EPERM':
      return 'permission denied';
    case 'ENOTDIR':
      return 'a part of the path is not a directory';
    default:
      return e instanceof Error ? e.message : String(e);
  }
}

export async function readTextFile(file: string): Promise<string> {
  try {
    return await readFile(file, 'utf8');
  } catch (e) {
    throw new CliError(`cannot read ${file}: ${describeFsError(e)}`);
  }
}

/** Problems in a scenario file, printed with the file named in the header. */
export class ScenarioFileError extends CliError {
  constructor(file: string, cause: ScenarioError, what = 'is not a valid scenario') {
    const n = cause.problems.length;
    super(`${file} ${what} (${n} problem${n === 1 ? '' : 's'}):\n${formatProblems(cause).trimEnd()}`);
    this.name = 'ScenarioFileError';
  }
}

/** `--set path=value` → [path, parsed value]. */
export function parseSetArg(arg: string): [string, unknown] {
  const eq = arg.indexOf('=');
  if (eq <= 0) throw new CliError(`--set: expected path=value (e.g. pwm.fswHz=200e3), got ${JSON.stringify(arg)}`);
  const path = arg.slice(0, eq).trim();
  try {
    return [path, parseSetValue(arg.slice(eq + 1))];
  } catch (e) {
    if (e instanceof ScenarioError) throw new CliError(`--set ${path}: ${e.problems.map((p) => p.message).join('; ')}`);
    throw e;
  }
}

/** Commander option collector for repeated `--set` (no default, so help shows none). */
export function collect(value: string, previous: string[] | undefined): string[] {
  return [...(previous ?? []), value];
}

export const SET_OPTION_HELP = 'override a scenario field, e.g. --set pwm.fswHz=200e3 (repeatable)';

/** Read, parse and validate a scenario file, then apply `--set` overrides (re-validated). */
export async function loadScenario(file: string, sets: readonly string[] = []): Promise<Scenario> {
  const text = await readTextFile(file);
  let scenario: Scenario;
  try {
    scenario = parseScenario(text);
  } catch (e) {
    if (e instanceof ScenarioError) throw new ScenarioFileError(file, e);
    throw e;
  }
  if (sets.length === 0) return scenario;
  const patch: Record<string, unknown> = {};
  for (const s of sets) {
    const [path, value] = parseSetArg(s);
    patch[path] = value;
  }
  try {
    return withOverrides(scenario, patch);
  } catch (e) {
    if (e instanceof ScenarioError) throw new ScenarioFileError(file, e, `with ${sets.map((s) => `--set ${s}`).join(' ')} is not a valid scenario`);
    throw e;
  }
}

/** Write an output file atomically; a missing directory or a permission problem is bad input (exit 2). */
export async function writeOutput(file: string, text: string): Promise<void> {
  try {
    await writeFileAtomic(file, text);
  } catch (e) {
    throw new CliError(`cannot write ${file}: ${describeFsError(e)}`);
  }
}

function plainNumber(text: string): number | undefined {
  const t = text.trim();
  return /^[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$/.test(t) ? Number(t) : undefined;
}

/** Commander argument parser for a finite number written plainly (`200e3`, `-1.5`, `0.04`). */
export function numberArg(what: string): (value: string) => number {
  return (value: string) => {
    const v = plainNumber(value);
    if (typeof v !== 'number' || !Number.isFinite(v)) throw new InvalidArgumentError(`${what} must be a finite number (e.g. 20e3), got ${JSON.stringify(value)}.`);
    return v;
  };
}

export function integerArg(what: string, min: number, max: number): (value: string) => number {
  return (value: string) => {
    const v = plainNumber(value);
    if (typeof v !== 'number' || !Number.isInteger(v) || v < min || v > max)
      throw new InvalidArgumentError(`${what} must be a whole number from ${min} to ${max}, got ${JSON.stringify(value)}.`);
    return v;
  };
}

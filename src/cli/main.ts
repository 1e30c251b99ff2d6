/**
 * The `lossdial` command line. `main(argv)` never exits the process: it returns the exit code
 * (0 success, 1 internal failure, 2 bad input or usage) so tests can call it in-process with
 * captured output.
 */
import { readFileSync } from 'node:fs';
import { Command, CommanderError } from 'commander';
import { ScenarioError } from '../scenario/errors.ts';
import { CliError, EXIT_BAD_INPUT, EXIT_INTERNAL, EXIT_OK, type Io, formatProblems } from './common.ts';
import { COMMANDS } from './commands/index.ts';

const VERSION = (JSON.parse(readFileSync(new URL('../../package.json', import.meta.url), 'utf8')) as { version: string }).version;

export const PROCESS_IO: Io = {
  out: (s) => void process.stdout.write(s),
  err: (s) => void process.stderr.write(s),
};

export function buildProgram(io: Io): Command {
  const program = new Command('lossdial')
    .description('A bench for making a DC-DC buck or an inverter half-bridge leg deliberately less efficient so its losses heat a coolant loop.')
    .version(VERSION, '-V, --version')
    .configureOutput({ writeOut: io.out, writeErr: io.err })
    .showHelpAfterError('(run with --help for usage)')
    .exitOverride();
  // Subcommands inherit the output, exit override and help-after-error settings above.
  for (const c of COMMANDS) c.register(program);
  return program;
}

function exitCodeOf(e: CommanderError): number {
  if (e.code === 'commander.helpDisplayed' || e.code === 'commander.version') return EXIT_OK;
  if (e.code === 'commander.help') return e.exitCode === 0 ? EXIT_OK : EXIT_BAD_INPUT;
  return EXIT_BAD_INPUT;
}

let pipeGuarded = false;

/** `lossdial sweep ... | head`: a reader that closes early is not an error; stop writing quietly. */
function guardStdoutPipe(): void {
  if (pipeGuarded) return;
  pipeGuarded = true;
  process.stdout.on('error', (e: NodeJS.ErrnoException) => {
    if (e.code === 'EPIPE') process.exit(process.exitCode ?? 0);
    throw e;
  });
}

export async function main(argv: string[], io: Io = PROCESS_IO): Promise<number> {
  if (io === PROCESS_IO) guardStdoutPipe();
  const program = buildProgram(io);
  try {
    await program.parseAsync(argv, { from: 'user' });
    return EXIT_OK;
  } catch (e) {
    // Commander has already printed its own message for usage errors.
    if (e instanceof CommanderError) return exitCodeOf(e);
    if (e instanceof CliError) {
      if (e.message) io.err(`${e.message}\n`);
      return e.exitCode;
    }
    if (e instanceof ScenarioError) {
      io.err(formatProblems(e));
      return EXIT_BAD_INPUT;
    }
    const detail = e instanceof Error ? (process.env.LOSSDIAL_DEBUG ? (e.stack ?? e.message) : e.message) : String(e);
    io.err(`internal error: ${detail}\n(this is a bug in lossdial; set LOSSDIAL_DEBUG=1 for the stack trace)\n`);
    return EXIT_INTERNAL;
  }
}

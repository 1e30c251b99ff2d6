/** `lossdial serve`: the live dashboard on http://127.0.0.1:8080/ until Ctrl-C. */
import { availableParallelism } from 'node:os';
import type { Command } from 'commander';
import { ListenError, startServer } from '../../server/server.ts';
import { CliError, EXIT_BAD_INPUT, integerArg, ioOf } from '../common.ts';

interface ServeCliOptions {
  host: string;
  port: number;
  case: string;
  maxSessions: number;
  threads: number | 'auto';
}

/** Session threads by default: one per core, at most four (the main thread keeps the sockets). */
export function autoSessionThreads(): number {
  return Math.max(1, Math.min(4, availableParallelism()));
}

function threadsArg(value: string): number | 'auto' {
  if (value === 'auto') return 'auto';
  return integerArg('--threads', 0, 64)(value);
}

export function register(program: Command): void {
  program
    .command('serve')
    .description('live dashboard: run the simulation in the browser, move the heat demand, step the load, tune the loop, save the session as a replayable scenario')
    .option('--host <address>', 'address to listen on (loopback by default; anything else exposes the bench to your network)', '127.0.0.1')
    .option('--port <n>', 'port to listen on (0: any free port)', integerArg('--port', 0, 65535), 8080)
    .option('--case <name>', 'demo case each new session starts with (a name from cases/)', 'buck-cabin-warmup')
    .option('--max-sessions <n>', 'live sessions allowed at once', integerArg('--max-sessions', 1, 64), 8)
    .option('--threads <n>', 'worker threads that compute the sessions (auto: one per core, at most 4; 0: all on the main thread)', threadsArg, 'auto' as const)
    .addHelpText('after', '\nExamples:\n  lossdial serve\n  lossdial serve --port 0 --case buck-aux-48v')
    .action(async (opts: ServeCliOptions, cmd: Command) => {
      const io = ioOf(cmd);
      let server;
      try {
        server = await startServer({
          host: opts.host,
          port: opts.port,
          defaultCase: opts.case,
          maxSessions: opts.maxSessions,
          sessionThreads: opts.threads === 'auto' ? autoSessionThreads() : opts.threads,
          log: (line) => io.err(`${line}\n`),
        });
      } catch (e) {
        if (e instanceof ListenError) throw new CliError(`serve: ${e.message}`, EXIT_BAD_INPUT);
        throw e;
      }
      io.out(`lossdial live bench on ${server.url}  (case ${opts.case}; Ctrl-C to stop)\n`);
      if (!['127.0.0.1', 'localhost', '::1'].includes(opts.host))
        io.err(`note: listening on ${opts.host}, not loopback: anyone who can reach this address can run sessions\n`);
      await new Promise<void>((resolve) => {
        const stop = (): void => {
          process.off('SIGINT', stop);
          process.off('SIGTERM', stop);
          io.err('stopping…\n');
          void server.close().then(resolve);
        };
        process.on('SIGINT', stop);
        process.on('SIGTERM', stop);
      });
    });
}

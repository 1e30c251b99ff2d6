/** Running the CLI in-process (fast, output captured) or as a real process (exit codes, bin). */
import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { main } from '../../src/cli/main.ts';

export const ROOT = fileURLToPath(new URL('../..', import.meta.url));
export const DEMO = 'cases/buck-aux-48v.yaml';

export interface CliRun {
  code: number;
  out: string;
  err: string;
}

/** `main(argv)` with stdout and stderr captured; relative paths resolve against the repo root. */
export async function cli(...args: string[]): Promise<CliRun> {
  let out = '';
  let err = '';
  const cwd = process.cwd();
  process.chdir(ROOT);
  try {
    const code = await main(args, { out: (s) => void (out += s), err: (s) => void (err += s) });
    return { code, out, err };
  } finally {
    process.chdir(cwd);
  }
}

/** The real thing: `node bin/lossdial.js ...` in the repo root. */
export function spawnCli(args: readonly string[], timeoutMs = 30_000): CliRun {
  const r = spawnSync(process.execPath, ['bin/lossdial.js', ...args], {
    cwd: ROOT,
    encoding: 'utf8',
    timeout: timeoutMs,
    env: { ...process.env, NO_COLOR: '1' },
  });
  if (r.error) throw r.error;
  return { code: r.status ?? -1, out: r.stdout, err: r.stderr };
}

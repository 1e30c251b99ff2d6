/** `lossdial serve` as a user starts it: prints the URL, serves, stops on Ctrl-C; a taken port is a clear error. */
import { spawn } from 'node:child_process';
import { createServer } from 'node:net';
import { describe, expect, it } from 'vitest';
import { ROOT, cli } from '../cli/helpers.ts';

describe('lossdial serve', () => {
  it('prints the URL, serves the page and the API, and exits 0 on SIGINT', async () => {
    const child = spawn(process.execPath, ['bin/lossdial.js', 'serve', '--port', '0'], { cwd: ROOT, env: { ...process.env, NO_COLOR: '1' } });
    let out = '';
    let err = '';
    child.stderr.on('data', (d: Buffer) => (err += d.toString()));
    const url = await new Promise<string>((resolve, reject) => {
      const timer = setTimeout(() => reject(new Error(`no URL printed; stderr: ${err}`)), 30_000);
      child.stdout.on('data', (d: Buffer) => {
        out += d.toString();
        const m = /(http:\/\/127\.0\.0\.1:\d+\/)/.exec(out);
        if (m) {
          clearTimeout(timer);
          resolve(m[1]);
        }
      });
    });
    expect(out).toMatch(/lossdial live bench on http:\/\/127\.0\.0\.1:\d+\/ {2}\(case buck-cabin-warmup; Ctrl-C to stop\)/);
    expect((await fetch(url)).status).toBe(200);
    expect((await (await fetch(`${url}api/cases`)).json()).defaultCase).toBe('buck-cabin-warmup');
    const code = await new Promise<number | null>((resolve) => {
      child.on('exit', (c) => resolve(c));
      child.kill('SIGINT');
    });
    expect(code).toBe(0);
  });

  it('a taken port is a clear error, exit 2', async () => {
    const blocker = createServer();
    await new Promise<void>((r) => blocker.listen(0, '127.0.0.1', () => r()));
    const port = (blocker.address() as { port: number }).port;
    try {
      const r = await cli('serve', '--port', String(port));
      expect(r.code).toBe(2);
      expect(r.err).toMatch(new RegExp(`port ${port} on 127.0.0.1 is already in use.*--port 0`));
    } finally {
      blocker.close();
    }
  });

  it('an unknown case is a clear error, exit 2', async () => {
    const r = await cli('serve', '--port', '0', '--case', 'no-such-case');
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/no case named "no-such-case"; known cases: .*buck-cabin-warmup/);
  });

  it('a bad --threads is a clear error, exit 2', async () => {
    const r = await cli('serve', '--port', '0', '--threads', 'lots');
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/--threads must be a whole number from 0 to 64, got "lots"/);
  });
});

/**
 * README examples run as tests: every command in a ```sh/```bash/```console block that starts
 * with `npx lossdial` or `node bin/lossdial.js` is run from the repository root (through bash,
 * so pipes work) and must exit 0, or the code written after it as `# exit N`. In a console
 * example, the first line printed must also match the example's first output line, so the
 * examples cannot drift from the tool's actual output format.
 */
import { spawn } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { ROOT } from './helpers.ts';

interface Example {
  command: string;
  expectedExit: number;
  firstLine: string | undefined;
}

const PREFIXES = ['npx lossdial ', 'node bin/lossdial.js '];

export function readmeExamples(markdown: string): Example[] {
  const out: Example[] = [];
  const fence = /^```(\w*)\n([\s\S]*?)^```$/gm;
  for (const m of markdown.matchAll(fence)) {
    const lang = m[1];
    if (!['sh', 'bash', 'shell', 'console'].includes(lang)) continue;
    const lines = m[2].split('\n');
    for (let i = 0; i < lines.length; i++) {
      let line = lines[i];
      if (lang === 'console') {
        if (!line.startsWith('$ ')) continue;
        line = line.slice(2);
      }
      if (!PREFIXES.some((p) => line.startsWith(p))) continue;
      const exit = /\s#\s*exit\s+(\d+)\s*$/.exec(line);
      const command = line.replace(/\s#.*$/, '').trim();
      const next = lines[i + 1];
      const firstLine = lang === 'console' && next !== undefined && !next.startsWith('$ ') && next !== '' ? next : undefined;
      out.push({ command, expectedExit: exit ? Number(exit[1]) : 0, firstLine });
    }
  }
  return out;
}

function runShell(command: string): Promise<{ code: number | null; out: string; err: string }> {
  // `npx lossdial` resolves to this package's bin; call it directly to skip npx's start-up.
  const local = command.replace(/^npx lossdial /, 'node bin/lossdial.js ');
  return new Promise((resolve, reject) => {
    const child = spawn('bash', ['-o', 'pipefail', '-c', local], { cwd: ROOT, env: { ...process.env, NO_COLOR: '1' } });
    let out = '';
    let err = '';
    child.stdout.on('data', (d: Buffer) => (out += d.toString('utf8')));
    child.stderr.on('data', (d: Buffer) => (err += d.toString('utf8')));
    const timer = setTimeout(() => child.kill('SIGKILL'), 45_000);
    child.on('error', reject);
    child.on('close', (code) => {
      clearTimeout(timer);
      resolve({ code, out, err });
    });
  });
}

const examples = readmeExamples(readFileSync(join(ROOT, 'README.md'), 'utf8'));

describe('README examples', () => {
  it('has examples for every CLI command', () => {
    // `npx lossdial <command>` and `node bin/lossdial.js <command>`: the command is the third word.
    const used = new Set(examples.map((e) => e.command.split(/\s+/)[2]));
    for (const name of ['check', 'point', 'sweep', 'schema']) expect(used, name).toContain(name);
  });

  for (const ex of examples) {
    it.concurrent(`${ex.command} exits ${ex.expectedExit}`, async () => {
      const r = await runShell(ex.command);
      expect(r.code, r.err).toBe(ex.expectedExit);
      if (ex.firstLine !== undefined) expect((r.out || r.err).split('\n')[0]).toBe(ex.firstLine);
    });
  }
});

import { mkdirSync, mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { writeFileAtomic, writeJsonAtomic } from '../../src/io/atomic.ts';

const dir = mkdtempSync(join(tmpdir(), 'lossdial-atomic-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('atomic writes', () => {
  it('writeFileAtomic replaces the file and leaves no temporary file', async () => {
    const file = join(dir, 'a.txt');
    writeFileSync(file, 'old');
    await writeFileAtomic(file, 'new');
    expect(readFileSync(file, 'utf8')).toBe('new');
    expect(readdirSync(dir)).toEqual(['a.txt']);
  });

  it('writeJsonAtomic writes indented JSON with a final newline', async () => {
    const file = join(dir, 'b.json');
    await writeJsonAtomic(file, { x: 1 });
    expect(readFileSync(file, 'utf8')).toBe('{\n  "x": 1\n}\n');
  });

  it('a failed write leaves the target as it was and cleans up', async () => {
    const sub = mkdtempSync(join(dir, 'fail-'));
    const target = join(sub, 'is-a-dir');
    // Renaming a file over a non-empty directory fails after the temporary file is written.
    mkdirSync(target);
    writeFileSync(join(target, 'keep'), 'x');
    await expect(writeFileAtomic(target, 'data')).rejects.toThrow();
    expect(readdirSync(sub)).toEqual(['is-a-dir']);
    expect(readdirSync(target)).toEqual(['keep']);
  });

  it('rejects when the directory does not exist', async () => {
    await expect(writeFileAtomic(join(dir, 'missing', 'x.txt'), 'data')).rejects.toMatchObject({ code: 'ENOENT' });
  });
});

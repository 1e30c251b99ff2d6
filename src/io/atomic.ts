/**
 * Atomic file writes: the data goes to a temporary file in the target's own directory, is
 * flushed, then renamed over the target. A reader sees the old file or the new one, never a
 * half-written one, and a failure leaves the target untouched and no temporary file behind.
 */
import { randomBytes } from 'node:crypto';
import { open, rename, unlink } from 'node:fs/promises';
import { basename, dirname, join } from 'node:path';

export async function writeFileAtomic(path: string, data: string | Uint8Array): Promise<void> {
  const tmp = join(dirname(path), `.${basename(path)}.${process.pid}.${randomBytes(4).toString('hex')}.tmp`);
  let renamed = false;
  try {
    const fh = await open(tmp, 'wx', 0o644);
    try {
      await fh.writeFile(data);
      await fh.sync();
    } finally {
      await fh.close();
    }
    await rename(tmp, path);
    renamed = true;
  } finally {
    if (!renamed) await unlink(tmp).catch(() => undefined);
  }
}

/** JSON with two-space indentation and a final newline; non-finite numbers become null (as JSON.stringify does). */
export function toJsonText(value: unknown): string {
  return `${JSON.stringify(value, null, 2)}\n`;
}

export async function writeJsonAtomic(path: string, value: unknown): Promise<void> {
  await writeFileAtomic(path, toJsonText(value));
}

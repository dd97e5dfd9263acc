/**
 * Atomic file output: every file is written to a temporary name in its
 * final folder and renamed over the target, so a reader (or a crash) never
 * sees a half-written file.
 */
import { randomBytes } from 'node:crypto';
import { mkdir, rename, rm, writeFile } from 'node:fs/promises';
import path from 'node:path';

/** The marker in temporary file names; a rerun removes leftovers carrying it. */
export const TEMPORARY_MARKER = '.tmp-';

/** Writes `content` to `target` atomically (temporary file + rename). */
export async function writeFileAtomic(target: string, content: string | Uint8Array): Promise<void> {
  await mkdir(path.dirname(target), { recursive: true });
  const temporary = `${target}${TEMPORARY_MARKER}${process.pid}-${randomBytes(4).toString('hex')}`;
  try {
    await writeFile(temporary, content);
    await rename(temporary, target);
  } catch (error) {
    await rm(temporary, { force: true });
    throw error;
  }
}

/** JSON with two-space indentation and a final newline (stable for identical input). */
export function stableJson(value: unknown): string {
  return `${JSON.stringify(value, null, 2)}\n`;
}

/** A file-name-safe account id (accounts.csv ids are checked, but rejected rows may carry anything). */
export function isSafeAccountId(id: string): boolean {
  return /^[A-Za-z0-9._-]{1,64}$/.test(id) && id !== '.' && id !== '..';
}

/**
 * File operations of the archive that must survive a crash or a power cut:
 * files flushed to disk before the rename that publishes them, folders
 * flushed after a rename, and one lock so that two `sign`s never change the
 * archive at once.
 */
import { hostname } from 'node:os';
import { mkdir, open, readFile, readdir, rm } from 'node:fs/promises';
import path from 'node:path';
import { ArchiveError, LOCK_FILE } from './layout.ts';

/** Creates `target` (never overwrites) with `content` and flushes it to disk. */
export async function writeDurable(target: string, content: string | Uint8Array): Promise<void> {
  await mkdir(path.dirname(target), { recursive: true });
  const handle = await open(target, 'wx');
  try {
    await handle.writeFile(content);
    await handle.sync();
  } finally {
    await handle.close();
  }
}

/** Flushes a folder's entries (a rename into or out of it) to disk. */
export async function syncFolder(folder: string): Promise<void> {
  const handle = await open(folder, 'r');
  try {
    await handle.sync();
  } catch (error) {
    // Some file systems refuse fsync on a folder; the rename is still atomic there.
    if (!(error instanceof Error && 'code' in error && (error.code === 'EINVAL' || error.code === 'EISDIR' || error.code === 'EPERM'))) throw error;
  } finally {
    await handle.close();
  }
}

/** Flushes every folder under `root` (inclusive), deepest first. */
export async function syncTree(root: string): Promise<void> {
  for (const entry of await readdir(root, { withFileTypes: true })) {
    if (entry.isDirectory()) await syncTree(path.join(root, entry.name));
  }
  await syncFolder(root);
}

interface LockRecord {
  readonly pid: number;
  readonly host: string;
  readonly started: string;
}

function processIsAlive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch (error) {
    return error instanceof Error && 'code' in error && error.code === 'EPERM';
  }
}

async function readLock(lockPath: string): Promise<LockRecord | null> {
  try {
    const data = JSON.parse(await readFile(lockPath, 'utf8')) as Partial<LockRecord>;
    return typeof data.pid === 'number' && typeof data.host === 'string' ? { pid: data.pid, host: data.host, started: String(data.started) } : null;
  } catch {
    return null;
  }
}

/**
 * Takes the archive's lock (ARCHIVE/.sign.lock, created exclusively) and
 * returns its release. A lock left by a process of this machine that no
 * longer runs is stale and taken over; a live one, or one from another
 * machine, is a refusal.
 */
export async function lockArchive(archiveDir: string): Promise<() => Promise<void>> {
  const lockPath = path.join(archiveDir, LOCK_FILE);
  const record: LockRecord = { pid: process.pid, host: hostname(), started: new Date().toISOString() };
  for (let attempt = 0; attempt < 2; attempt += 1) {
    try {
      await writeDurable(lockPath, `${JSON.stringify(record)}\n`);
      return async () => { await rm(lockPath, { force: true }); };
    } catch (error) {
      if (!(error instanceof Error && 'code' in error && error.code === 'EEXIST')) throw error;
    }
    const holder = await readLock(lockPath);
    const stale = holder !== null && holder.host === record.host && !processIsAlive(holder.pid);
    if (!stale) {
      const who = holder ? `process ${holder.pid} on ${holder.host}, since ${holder.started}` : 'an unreadable lock';
      throw new ArchiveError('locked', `the archive is in use by another sign (${who}); wait for it, or if no sign is running remove ${lockPath}`);
    }
    await rm(lockPath, { force: true });
  }
  throw new ArchiveError('locked', `cannot take the archive lock ${lockPath}`);
}

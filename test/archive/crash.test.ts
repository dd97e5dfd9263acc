/**
 * Crash safety of sign (docs/archive.md, "Crash safety"): a sign stopped at
 * each step as if the process died there leaves the archive either as it was
 * or recoverable, verify says so, and the next sign finishes or discards the
 * interrupted work. The archive lock refuses a second sign while one runs.
 */
import { execFileSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import { readdir, rm, writeFile } from 'node:fs/promises';
import { hostname } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ArchiveError, signRun, verifyArchive } from '../../src/archive/index.ts';
import { signRunSteps } from '../../src/archive/sign.ts';
import { signOptions, temporaryFolder, treeHashes, writeCertificate, writeRun } from './helpers.ts';

const PASSPHRASE = 'crash-test passphrase';
const ACCOUNTS = [{ account: 'A-1001', status: 'reported' }, { account: 'A-1002', status: 'reported' }] as const;

let root: string;
let certFile: string;

beforeAll(async () => {
  root = await temporaryFolder();
  certFile = await writeCertificate(root, PASSPHRASE);
  for (const period of ['2026-Q3', '2026-Q4']) await writeRun(path.join(root, 'out'), period, ACCOUNTS);
});

afterAll(async () => {
  await rm(root, { recursive: true, force: true });
});

const options = (archiveDir: string, period: string, overrides: Parameters<typeof signOptions>[1] = {}) =>
  signOptions({ runDir: path.join(root, 'out', period), certFile, passphrase: PASSPHRASE, archiveDir }, overrides);

async function temporaryFolders(archiveDir: string): Promise<string[]> {
  return (await readdir(archiveDir)).filter((name) => name.startsWith('.tmp-sign-'));
}

describe('a sign that dies', () => {
  it('before publishing leaves the archive as it was; the next sign discards the unfinished folder', async () => {
    const archiveDir = path.join(root, 'archive-built');
    await signRunSteps(options(archiveDir, '2026-Q3'), 'built');
    expect(existsSync(path.join(archiveDir, '2026-Q3'))).toBe(false);
    const [leftover] = await temporaryFolders(archiveDir);
    expect(leftover).toMatch(/^\.tmp-sign-2026-Q3-\d+-[0-9a-f]{8}$/);

    const report = await verifyArchive({ archiveDir, period: null });
    expect(report.ok).toBe(false);
    expect(report.problems).toEqual([{ path: leftover, problem: expect.stringContaining('left by a sign that is running or was interrupted') }]);

    const result = await signRun(options(archiveDir, '2026-Q3'));
    expect(result.recovered).toEqual([`discarded ${leftover}: an interrupted sign that had filed nothing`]);
    expect(await temporaryFolders(archiveDir)).toEqual([]);
    expect(await verifyArchive({ archiveDir, period: null })).toMatchObject({ ok: true, problems: [] });
  });

  it('while superseding, between moving the old version and publishing the new one: the next sign finishes the job', async () => {
    const archiveDir = path.join(root, 'archive-moved');
    await signRun(options(archiveDir, '2026-Q3'));
    const oldVersion = await treeHashes(path.join(archiveDir, '2026-Q3'));
    await signRunSteps(options(archiveDir, '2026-Q3', { now: new Date('2026-10-06T08:00:00Z'), supersede: { reason: 'fee corrected' } }), 'moved');

    // The period's folder is gone from its place, but nothing is lost: both versions sit, complete, in the temporary folder.
    expect(existsSync(path.join(archiveDir, '2026-Q3'))).toBe(false);
    const [leftover] = await temporaryFolders(archiveDir);
    expect(await treeHashes(path.join(archiveDir, leftover!, 'superseded', '2026-10-06T08-00-00Z'))).toEqual(oldVersion);
    expect((await verifyArchive({ archiveDir, period: null })).problems.map((entry) => entry.path)).toEqual([leftover]);

    // Any later sign first finishes the interrupted one.
    const result = await signRun(options(archiveDir, '2026-Q4', { now: new Date('2027-01-05T09:00:00Z') }));
    expect(result.recovered).toEqual(['finished filing 2026-Q3: an earlier sign --supersede was interrupted after moving the old version']);
    expect(await treeHashes(path.join(archiveDir, '2026-Q3', 'superseded', '2026-10-06T08-00-00Z'))).toEqual(oldVersion);
    expect(await verifyArchive({ archiveDir, period: null })).toMatchObject({ ok: true, problems: [], checked: { periods: 2 } });
  });
});

describe('the archive lock', () => {
  it('refuses a sign while another holds the lock, naming it', async () => {
    const archiveDir = path.join(root, 'archive-locked');
    await signRun(options(archiveDir, '2026-Q3'));
    await writeFile(path.join(archiveDir, '.sign.lock'), `${JSON.stringify({ pid: process.pid, host: hostname(), started: '2026-10-06T08:00:00.000Z' })}\n`);
    const error = await signRun(options(archiveDir, '2026-Q4')).then(() => null, (thrown: unknown) => thrown);
    expect(error).toBeInstanceOf(ArchiveError);
    expect((error as ArchiveError).refusal).toBe('locked');
    expect((error as ArchiveError).message).toContain(`process ${process.pid} on ${hostname()}`);
    expect(existsSync(path.join(archiveDir, '2026-Q4'))).toBe(false);
    // verify reads past the lock: it is not archive content.
    expect((await verifyArchive({ archiveDir, period: null })).ok).toBe(true);
  });

  it('takes over a lock left by a process that no longer runs', async () => {
    const archiveDir = path.join(root, 'archive-stale');
    await signRun(options(archiveDir, '2026-Q3'));
    const deadPid = Number(execFileSync('sh', ['-c', 'sh -c "echo \\$\\$"'], { encoding: 'utf8' }).trim());
    await writeFile(path.join(archiveDir, '.sign.lock'), `${JSON.stringify({ pid: deadPid, host: hostname(), started: '2026-10-06T08:00:00.000Z' })}\n`);
    await signRun(options(archiveDir, '2026-Q4', { now: new Date('2027-01-05T09:00:00Z') }));
    expect(existsSync(path.join(archiveDir, '.sign.lock'))).toBe(false);
    expect(await verifyArchive({ archiveDir, period: null })).toMatchObject({ ok: true, checked: { periods: 2 } });
  });
});

/**
 * verify against a tampered archive: each change is reported at its path and
 * makes the archive fail (ok=false, the CLI's exit 1). A pristine archive of
 * two periods is signed once; each test tampers with its own copy.
 */
import { createHash } from 'node:crypto';
import { appendFile, cp, mkdir, readFile, rm, writeFile } from 'node:fs/promises';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { signRun, verifyArchive, type VerifyReport } from '../../src/archive/index.ts';
import { pdfsig, signOptions, temporaryFolder, writeCertificate, writeRun } from './helpers.ts';

const PASSPHRASE = 'tamper-test passphrase';
const ACCOUNTS = [{ account: 'A-1001', status: 'reported' }, { account: 'A-1002', status: 'reported' }] as const;

let root: string;
let pristine: string;
let certFile: string;
let copies = 0;

async function signPeriods(archiveDir: string, times: Readonly<Record<string, string>>): Promise<void> {
  for (const [period, time] of Object.entries(times)) {
    await signRun(signOptions({ runDir: path.join(root, 'out', period), certFile, passphrase: PASSPHRASE, archiveDir }, { now: new Date(time) }));
  }
}

beforeAll(async () => {
  root = await temporaryFolder();
  certFile = await writeCertificate(root, PASSPHRASE);
  for (const period of ['2026-Q2', '2026-Q3']) await writeRun(path.join(root, 'out'), period, ACCOUNTS);
  pristine = path.join(root, 'pristine');
  await signPeriods(pristine, { '2026-Q2': '2026-07-03T09:00:00Z', '2026-Q3': '2026-10-05T09:00:00Z' });
});

afterAll(async () => {
  await rm(root, { recursive: true, force: true });
});

/** A fresh copy of the pristine archive to tamper with. */
async function copy(): Promise<string> {
  copies += 1;
  const archiveDir = path.join(root, `copy-${copies}`);
  await cp(pristine, archiveDir, { recursive: true });
  return archiveDir;
}

function problemsAt(report: VerifyReport, where: string): string[] {
  return report.problems.filter((entry) => entry.path === where).map((entry) => entry.problem);
}

describe('verify', () => {
  it('passes the untouched archive', async () => {
    expect(await verifyArchive({ archiveDir: pristine, period: null })).toEqual({ ok: true, problems: [], checked: { files: 10, signatures: 6, periods: 2 } });
  });

  it('catches one byte changed inside a PDF\'s signed range, as pdfsig does', async () => {
    const archiveDir = await copy();
    const file = path.join(archiveDir, '2026-Q3', 'A-1001', 'statement.pdf');
    const bytes = await readFile(file);
    const text = bytes.toString('latin1');
    const at = text.indexOf('/CreationDate (D:2026') + '/CreationDate (D:'.length + 3; // the year's last digit
    const holeStart = Number(/\/ByteRange \[0 (\d+) /.exec(text)?.[1]);
    expect(at).toBeLessThan(holeStart); // inside the first signed range
    expect(String.fromCharCode(bytes[at]!)).toBe('6');
    bytes[at] = '7'.charCodeAt(0);
    await writeFile(file, bytes);

    const report = await verifyArchive({ archiveDir, period: null });
    expect(report.ok).toBe(false);
    const problems = problemsAt(report, '2026-Q3/A-1001/statement.pdf');
    expect(problems).toHaveLength(2);
    expect(problems[0]).toMatch(/^changed: sha256 /);
    expect(problems[1]).toBe('invalid PDF signature: the signed bytes were changed after signing (digest mismatch)');
    expect(report.problems).toHaveLength(2);

    const verdict = pdfsig(file);
    expect(verdict).not.toContain('Signature is Valid.');
    expect(verdict).toMatch(/Signature Validation: (Digest Mismatch|Signature is Invalid)/);
  });

  it('catches bytes appended to a PDF after signing: the signature no longer covers the whole file', async () => {
    const archiveDir = await copy();
    const file = path.join(archiveDir, '2026-Q3', 'A-1002', 'statement.pdf');
    await appendFile(file, '\n% appended after signing\n');
    const report = await verifyArchive({ archiveDir, period: null });
    const problems = problemsAt(report, '2026-Q3/A-1002/statement.pdf');
    expect(problems[1]).toMatch(/^invalid PDF signature: the signature does not cover the whole file/);
    expect(pdfsig(file)).not.toContain('Total document signed');
  });

  it('catches an edited figures.json', async () => {
    const archiveDir = await copy();
    const file = path.join(archiveDir, '2026-Q3', 'A-1002', 'figures.json');
    await writeFile(file, (await readFile(file, 'utf8')).replace('1234567.89', '1234567.98'));
    const report = await verifyArchive({ archiveDir, period: null });
    expect(report.ok).toBe(false);
    expect(report.problems).toEqual([{ path: '2026-Q3/A-1002/figures.json', problem: expect.stringMatching(/^changed: sha256 [0-9a-f]{12}…, the manifest records [0-9a-f]{12}…$/) }]);
  });

  it('catches a deleted file', async () => {
    const archiveDir = await copy();
    await rm(path.join(archiveDir, '2026-Q2', 'A-1001', 'figures.json'));
    const report = await verifyArchive({ archiveDir, period: null });
    expect(report.problems).toEqual([{ path: '2026-Q2/A-1001/figures.json', problem: 'missing: the manifest lists it' }]);
  });

  it('catches added files, in a period and in the archive', async () => {
    const archiveDir = await copy();
    await writeFile(path.join(archiveDir, '2026-Q3', 'A-1001', 'note.txt'), 'added later\n');
    await mkdir(path.join(archiveDir, '2026-Q3', 'B-7'));
    await writeFile(path.join(archiveDir, '2026-Q3', 'B-7', 'statement.pdf'), 'not filed by sign');
    await writeFile(path.join(archiveDir, 'README.txt'), 'stray');
    const report = await verifyArchive({ archiveDir, period: null });
    expect(report.problems).toEqual([
      { path: 'README.txt', problem: 'extra: not a period of the archive' },
      { path: '2026-Q3/A-1001/note.txt', problem: 'extra file: not in the manifest' },
      { path: '2026-Q3/B-7/statement.pdf', problem: 'extra file: not in the manifest' },
    ]);
  });

  it('catches an edited manifest: its signature no longer holds', async () => {
    const archiveDir = await copy();
    const file = path.join(archiveDir, '2026-Q3', 'manifest.json');
    await writeFile(file, (await readFile(file, 'utf8')).replace('"version": "0.1.0"', '"version": "0.1.1"'));
    const report = await verifyArchive({ archiveDir, period: null });
    expect(report.problems).toEqual([{ path: '2026-Q3/manifest.json', problem: 'manifest signature invalid: manifest.json or manifest.sig changed after signing' }]);
  });

  it('catches a manifest whose listed hash was changed to match a changed file (the signature still fails)', async () => {
    const archiveDir = await copy();
    const figures = path.join(archiveDir, '2026-Q3', 'A-1001', 'figures.json');
    const original = await readFile(figures, 'utf8');
    const forged = original.replace('1234567.89', '9999999.99');
    await writeFile(figures, forged);
    const manifestFile = path.join(archiveDir, '2026-Q3', 'manifest.json');
    const sha = (text: string) => createHash('sha256').update(text).digest('hex');
    await writeFile(manifestFile, (await readFile(manifestFile, 'utf8')).replace(sha(original), sha(forged)));
    const report = await verifyArchive({ archiveDir, period: null });
    expect(report.problems).toEqual([{ path: '2026-Q3/manifest.json', problem: 'manifest signature invalid: manifest.json or manifest.sig changed after signing' }]);
  });

  it('catches a previous period\'s manifest replaced by another validly signed one: a chain break', async () => {
    // An alternative 2026-Q2, signed with the same key at another time: intact on its own.
    const alternative = path.join(root, 'alternative');
    await signPeriods(alternative, { '2026-Q2': '2026-07-04T09:00:00Z' });
    expect((await verifyArchive({ archiveDir: alternative, period: null })).ok).toBe(true);
    const archiveDir = await copy();
    await rm(path.join(archiveDir, '2026-Q2'), { recursive: true });
    await cp(path.join(alternative, '2026-Q2'), path.join(archiveDir, '2026-Q2'), { recursive: true });

    const report = await verifyArchive({ archiveDir, period: null });
    expect(report.ok).toBe(false);
    expect(report.problems).toEqual([{ path: '2026-Q2/manifest.json', problem: expect.stringMatching(/^chain break: 2026-Q3\/manifest.json records sha256 [0-9a-f]{12}… for it \(or a version it superseded\), but it is [0-9a-f]{12}…: replaced\?$/) }]);
    // Checking only the later period still follows its link back.
    expect((await verifyArchive({ archiveDir, period: '2026-Q3' })).problems).toEqual(report.problems);
  });

  it('catches a whole earlier period deleted', async () => {
    const archiveDir = await copy();
    await rm(path.join(archiveDir, '2026-Q2'), { recursive: true });
    const report = await verifyArchive({ archiveDir, period: null });
    expect(report.problems).toEqual([{ path: '2026-Q3/manifest.json', problem: 'chain break: it chains to 2026-Q2, but no period is archived before it' }]);
  });

  it('catches a changed file in a superseded version, by its path under superseded/', async () => {
    const archiveDir = await copy();
    await signRun(signOptions({ runDir: path.join(root, 'out', '2026-Q3'), certFile, passphrase: PASSPHRASE, archiveDir }, { now: new Date('2026-10-06T12:00:00Z'), supersede: { reason: 'test' } }));
    expect((await verifyArchive({ archiveDir, period: null })).ok).toBe(true);
    const file = path.join(archiveDir, '2026-Q3', 'superseded', '2026-10-06T12-00-00Z', 'A-1001', 'figures.json');
    await appendFile(file, ' ');
    const report = await verifyArchive({ archiveDir, period: null });
    expect(report.problems).toEqual([{ path: '2026-Q3/superseded/2026-10-06T12-00-00Z/A-1001/figures.json', problem: expect.stringMatching(/^changed: /) }]);
  });

  it('catches a superseded version removed', async () => {
    const archiveDir = await copy();
    await signRun(signOptions({ runDir: path.join(root, 'out', '2026-Q3'), certFile, passphrase: PASSPHRASE, archiveDir }, { now: new Date('2026-10-06T12:00:00Z'), supersede: { reason: 'test' } }));
    await rm(path.join(archiveDir, '2026-Q3', 'superseded'), { recursive: true });
    const report = await verifyArchive({ archiveDir, period: null });
    expect(report.problems).toEqual([{ path: '2026-Q3/superseded/2026-10-06T12-00-00Z', problem: 'missing: 2026-Q3/manifest.json records it as the version it superseded' }]);
  });

  it('reports a period asked for that is not archived', async () => {
    const report = await verifyArchive({ archiveDir: pristine, period: '2025-Q4' });
    expect(report).toEqual({ ok: false, problems: [{ path: '2025-Q4', problem: 'missing: the period is not in the archive' }], checked: { files: 0, signatures: 0, periods: 0 } });
  });
});

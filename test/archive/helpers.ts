/**
 * Test material for the archive: a small run folder made here (run.json,
 * PDFs drawn with pdf-lib, figures.json), a certificate per test file, and
 * Poppler's pdfsig as the independent judge of PDF signatures.
 */
import { execFileSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { mkdir, mkdtemp, readFile, readdir, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { PDFDocument, StandardFonts } from 'pdf-lib';
import { createTestCertificate } from '../../src/archive/index.ts';
import type { SignOptions } from '../../src/archive/sign.ts';

export interface RunAccount {
  readonly account: string;
  readonly status: 'reported' | 'failed';
}

/** A one-page statement with some text; its dates fixed so that equal input gives equal bytes. */
export async function statementPdf(account: string, period: string): Promise<Uint8Array> {
  const document = await PDFDocument.create();
  document.setCreationDate(new Date('2026-10-01T08:00:00Z'));
  document.setModificationDate(new Date('2026-10-01T08:00:00Z'));
  const font = await document.embedFont(StandardFonts.Helvetica);
  const page = document.addPage([595.28, 841.89]);
  page.drawText(`Quarterly statement ${period}`, { x: 50, y: 780, font, size: 16 });
  page.drawText(`Account ${account}: value at end 1,234,567.89 EUR`, { x: 50, y: 750, font, size: 11 });
  return document.save();
}

/** Writes OUT/P as build would: run.json, and statement.pdf + figures.json for each reported account. */
export async function writeRun(outDir: string, period: string, accounts: readonly RunAccount[]): Promise<string> {
  const runDir = path.join(outDir, period);
  await mkdir(runDir, { recursive: true });
  for (const { account, status } of accounts) {
    if (status === 'failed') continue;
    const accountDir = path.join(runDir, 'accounts', account);
    await mkdir(accountDir, { recursive: true });
    await writeFile(path.join(accountDir, 'statement.pdf'), await statementPdf(account, period));
    await writeFile(path.join(accountDir, 'figures.json'), `${JSON.stringify({ account, period: { label: period }, value: { end: 1234567.89 } }, null, 2)}\n`);
  }
  const record = {
    period,
    book: 'book',
    started: '2026-10-01T08:00:00.000Z',
    seconds: 1,
    accounts: accounts.map(({ account, status }) => ({
      account,
      status,
      errors: status === 'failed' ? [{ file: 'prices.csv', line: 7, message: 'price of S on 2026-09-30 is missing' }] : [],
      breaches: 0,
      pdf: status === 'reported',
    })),
    timings: { load: 0, compute: 0, html: 0, pdf: 0 },
  };
  await writeFile(path.join(runDir, 'run.json'), `${JSON.stringify(record, null, 2)}\n`);
  return runDir;
}

/** A fresh temporary folder. */
export async function temporaryFolder(): Promise<string> {
  return mkdtemp(path.join(tmpdir(), 'quarterline-archive-'));
}

/**
 * A certificate file in `folder`, made once per test file; valid from
 * 2026-01-01 to 2028-01-02, so that the fixed signing times of the tests
 * (October 2026 onwards) do not depend on the clock.
 */
export async function writeCertificate(folder: string, passphrase: string, name = 'Example Wealth Test Signer', file = 'signer.p12'): Promise<string> {
  const certFile = path.join(folder, file);
  await writeFile(certFile, await createTestCertificate({ name, passphrase, notBefore: new Date('2026-01-02T00:00:00Z') }));
  return certFile;
}

/** Sign options with the test defaults; the time is fixed per call site. */
export function signOptions(base: Pick<SignOptions, 'runDir' | 'certFile' | 'passphrase' | 'archiveDir'>, overrides: Partial<SignOptions> = {}): SignOptions {
  return { accounts: null, supersede: null, now: new Date('2026-10-05T09:00:00Z'), toolVersion: '0.1.0', ...base, ...overrides };
}

/**
 * Poppler's report on a PDF's signatures. pdfsig exits 0 even for a bad
 * signature, so callers read its text: "Signature is Valid." is the verdict.
 */
export function pdfsig(file: string): string {
  try {
    return execFileSync('pdfsig', [file], { encoding: 'utf8', stdio: ['ignore', 'pipe', 'pipe'] });
  } catch (error) {
    const failed = error as { stdout?: string; stderr?: string };
    return `${failed.stdout ?? ''}${failed.stderr ?? ''}`;
  }
}

/** Every file under `root`, relative path → SHA-256: a snapshot to compare before and after. */
export async function treeHashes(root: string): Promise<Map<string, string>> {
  const hashes = new Map<string, string>();
  for (const entry of await readdir(root, { recursive: true, withFileTypes: true })) {
    if (!entry.isFile()) continue;
    const full = path.join(entry.parentPath, entry.name);
    hashes.set(path.relative(root, full).split(path.sep).join('/'), createHash('sha256').update(await readFile(full)).digest('hex'));
  }
  return hashes;
}

/**
 * sign and verify on an intact archive (spec: outputs.md, "Signing and the
 * archive"): PDF signatures judged by Poppler's pdfsig, manifest hashes and
 * signature judged by coreutils' sha256sum and OpenSSL, failed accounts never
 * signed, write-once with --supersede, the chain between periods, refusals.
 */
import { execFileSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import { mkdir, readFile, readdir, rm, writeFile } from 'node:fs/promises';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ArchiveError, signRun, verifyArchive } from '../../src/archive/index.ts';
import { checkPdfSignature } from '../../src/archive/pdf-signature.ts';
import { parseManifest, type Manifest } from '../../src/archive/manifest.ts';
import { pdfsig, signOptions, temporaryFolder, treeHashes, writeCertificate, writeRun } from './helpers.ts';

const PASSPHRASE = 'test-only passphrase 4711';
const RUN_ACCOUNTS = [
  { account: 'A-1001', status: 'reported' },
  { account: 'A-1002', status: 'reported' },
  { account: 'F-9', status: 'failed' },
] as const;

let root: string;
let certFile: string;

beforeAll(async () => {
  root = await temporaryFolder();
  certFile = await writeCertificate(root, PASSPHRASE);
});

afterAll(async () => {
  await rm(root, { recursive: true, force: true });
});

async function manifestOf(archiveDir: string, relative: string): Promise<Manifest> {
  const parsed = parseManifest(await readFile(path.join(archiveDir, relative, 'manifest.json')));
  if (!('manifest' in parsed)) throw new Error(parsed.problem);
  return parsed.manifest;
}

async function refusal(promise: Promise<unknown>): Promise<ArchiveError> {
  const error = await promise.then(() => null, (thrown: unknown) => thrown);
  expect(error).toBeInstanceOf(ArchiveError);
  return error as ArchiveError;
}

function sha256sum(file: string): string {
  return execFileSync('sha256sum', [file], { encoding: 'utf8' }).split(' ')[0]!;
}

describe('signing a run', () => {
  let archiveDir: string;
  let runDir: string;

  beforeAll(async () => {
    runDir = await writeRun(path.join(root, 'out'), '2026-Q3', RUN_ACCOUNTS);
    archiveDir = path.join(root, 'archive-basic');
  });

  it('signs every reported statement, which pdfsig reports valid, and verify passes', async () => {
    const result = await signRun(signOptions({ runDir, certFile, passphrase: PASSPHRASE, archiveDir }));
    expect(result.period).toBe('2026-Q3');
    expect(result.signed).toEqual(['A-1001', 'A-1002']);
    for (const account of result.signed) {
      const signed = path.join(archiveDir, '2026-Q3', account, 'statement.pdf');
      const report = pdfsig(signed);
      expect(report).toContain('Signature Validation: Signature is Valid.');
      expect(report).toContain('Total document signed');
      expect(report).toContain('Signer Certificate Common Name: Example Wealth Test Signer');
      expect(report).toContain('Signing Time: Oct 05 2026 09:00:00');
      expect(report).toContain('Signing Hash Algorithm: SHA-256');
      expect((await readFile(signed)).toString('latin1')).toContain('/Reason (Quarterly statement)');
      expect(checkPdfSignature(await readFile(signed)).valid).toBe(true);
    }
    const report = await verifyArchive({ archiveDir, period: null });
    expect(report).toEqual({ ok: true, problems: [], checked: { files: 5, signatures: 3, periods: 1 } });
    expect(await verifyArchive({ archiveDir, period: '2026-Q3' })).toEqual(report);
  });

  it('never signs a failed account, and records why it was left out', async () => {
    expect(existsSync(path.join(archiveDir, '2026-Q3', 'F-9'))).toBe(false);
    const manifest = await manifestOf(archiveDir, '2026-Q3');
    expect(Object.keys(manifest.files).filter((file) => file.startsWith('F-9'))).toEqual([]);
    expect(manifest.not_signed).toEqual([{ account: 'F-9', reason: 'failed in the run: price of S on 2026-09-30 is missing; failed accounts are never signed' }]);
    expect(Object.keys(manifest.accounts)).toEqual(['A-1001', 'A-1002']);
  });

  it('records in the manifest what sha256sum and OpenSSL compute independently', async () => {
    const periodDir = path.join(archiveDir, '2026-Q3');
    const manifest = await manifestOf(archiveDir, '2026-Q3');
    expect(Object.keys(manifest.files).sort()).toEqual(['A-1001/figures.json', 'A-1001/statement.pdf', 'A-1002/figures.json', 'A-1002/statement.pdf', 'signer.pem']);
    for (const [file, recorded] of Object.entries(manifest.files)) {
      expect(recorded.sha256, file).toBe(sha256sum(path.join(periodDir, file)));
      expect(recorded.bytes, file).toBe((await readFile(path.join(periodDir, file))).length);
    }
    // figures.json is filed byte for byte as the run wrote it.
    expect(await readFile(path.join(periodDir, 'A-1001', 'figures.json'))).toEqual(await readFile(path.join(runDir, 'accounts', 'A-1001', 'figures.json')));
    expect(manifest.accounts['A-1001']?.unsigned_statement_sha256).toBe(sha256sum(path.join(runDir, 'accounts', 'A-1001', 'statement.pdf')));

    // The fingerprint is SHA-256 of the certificate's DER, as `openssl x509 -fingerprint -sha256` prints it.
    const fingerprint = execFileSync('openssl', ['x509', '-in', path.join(periodDir, 'signer.pem'), '-noout', '-fingerprint', '-sha256'], { encoding: 'utf8' });
    expect(fingerprint.trim()).toBe(`sha256 Fingerprint=${manifest.signer.certificate_sha256.toUpperCase().match(/../g)!.join(':')}`);

    // manifest.sig is base64 of an RSA-SHA256 signature over the manifest bytes: OpenSSL checks it without quarterline.
    const publicKey = path.join(root, 'signer-public.pem');
    const signatureDer = path.join(root, 'manifest.sig.bin');
    await writeFile(publicKey, execFileSync('openssl', ['x509', '-in', path.join(periodDir, 'signer.pem'), '-noout', '-pubkey']));
    await writeFile(signatureDer, Buffer.from(await readFile(path.join(periodDir, 'manifest.sig'), 'utf8'), 'base64'));
    const verdict = execFileSync('openssl', ['dgst', '-sha256', '-verify', publicKey, '-signature', signatureDer, path.join(periodDir, 'manifest.json')], { encoding: 'utf8' });
    expect(verdict.trim()).toBe('Verified OK');

    expect(manifest).toMatchObject({
      format: 'quarterline-archive-manifest/1',
      period: '2026-Q3',
      signed_at: '2026-10-05T09:00:00.000Z',
      tool: { name: 'quarterline', version: '0.1.0' },
      signer: { name: 'Example Wealth Test Signer', certificate_file: 'signer.pem' },
      signature: { file: 'manifest.sig', algorithm: 'RSA-SHA256', encoding: 'base64' },
      previous: null,
      supersedes: null,
    });
  });

  it('refuses to sign a period that is archived already, and changes nothing', async () => {
    const before = await treeHashes(archiveDir);
    const error = await refusal(signRun(signOptions({ runDir, certFile, passphrase: PASSPHRASE, archiveDir }, { now: new Date('2026-10-06T09:00:00Z') })));
    expect(error.refusal).toBe('already-archived');
    expect(error.message).toContain('2026-Q3 is already archived');
    expect(error.message).toContain('--supersede --reason');
    expect(await treeHashes(archiveDir)).toEqual(before);
  });
});

describe('superseding an archived period', () => {
  let archiveDir: string;
  let runDir: string;

  beforeAll(async () => {
    runDir = await writeRun(path.join(root, 'out-supersede'), '2026-Q3', RUN_ACCOUNTS);
    archiveDir = path.join(root, 'archive-supersede');
    await signRun(signOptions({ runDir, certFile, passphrase: PASSPHRASE, archiveDir }));
  });

  it('needs a reason, and an archived version to supersede', async () => {
    const noReason = await refusal(signRun(signOptions({ runDir, certFile, passphrase: PASSPHRASE, archiveDir }, { supersede: { reason: '  ' } })));
    expect(noReason.message).toContain('--supersede needs a reason');
    const elsewhere = await refusal(signRun(signOptions({ runDir, certFile, passphrase: PASSPHRASE, archiveDir: path.join(root, 'archive-empty') }, { supersede: { reason: 'fix' } })));
    expect(elsewhere.refusal).toBe('not-archived');
  });

  it('keeps the old version whole under superseded/<time>/, records why, and verify accepts both', async () => {
    const before = await treeHashes(path.join(archiveDir, '2026-Q3'));
    const oldManifestSha256 = sha256sum(path.join(archiveDir, '2026-Q3', 'manifest.json'));
    const now = new Date('2026-10-07T14:30:00Z');
    await signRun(signOptions({ runDir, certFile, passphrase: PASSPHRASE, archiveDir }, { now, supersede: { reason: 'benchmark prices corrected' } }));

    const moved = await treeHashes(path.join(archiveDir, '2026-Q3', 'superseded', '2026-10-07T14-30-00Z'));
    expect(moved).toEqual(before);
    const manifest = await manifestOf(archiveDir, '2026-Q3');
    expect(manifest.supersedes).toEqual({
      manifest_sha256: oldManifestSha256,
      signed_at: '2026-10-05T09:00:00.000Z',
      superseded_at: '2026-10-07T14:30:00.000Z',
      path: 'superseded/2026-10-07T14-30-00Z',
      reason: 'benchmark prices corrected',
    });
    expect(pdfsig(path.join(archiveDir, '2026-Q3', 'A-1001', 'statement.pdf'))).toContain('Signing Time: Oct 07 2026 14:30:00');
    expect(await verifyArchive({ archiveDir, period: null })).toEqual({ ok: true, problems: [], checked: { files: 10, signatures: 6, periods: 1 } });
  });

  it('nests a second supersede, keeping every version', async () => {
    await signRun(signOptions({ runDir, certFile, passphrase: PASSPHRASE, archiveDir }, { now: new Date('2026-10-08T10:00:00Z'), supersede: { reason: 'client address corrected' } }));
    expect(existsSync(path.join(archiveDir, '2026-Q3', 'superseded', '2026-10-08T10-00-00Z', 'superseded', '2026-10-07T14-30-00Z', 'manifest.json'))).toBe(true);
    expect(await verifyArchive({ archiveDir, period: '2026-Q3' })).toEqual({ ok: true, problems: [], checked: { files: 15, signatures: 9, periods: 1 } });
  });
});

describe('the chain of periods', () => {
  let archiveDir: string;
  const out = () => path.join(root, 'out-chain');

  beforeAll(async () => {
    archiveDir = path.join(root, 'archive-chain');
    for (const [period, day] of [['2026-Q2', '2026-07-03'], ['2026-Q3', '2026-10-05']] as const) {
      const runDir = await writeRun(out(), period, RUN_ACCOUNTS);
      await signRun(signOptions({ runDir, certFile, passphrase: PASSPHRASE, archiveDir }, { now: new Date(`${day}T09:00:00Z`) }));
    }
  });

  it('links each period to the SHA-256 of the manifest before it; the first links to nothing', async () => {
    expect((await manifestOf(archiveDir, '2026-Q2')).previous).toBeNull();
    expect((await manifestOf(archiveDir, '2026-Q3')).previous).toEqual({ period: '2026-Q2', manifest_sha256: sha256sum(path.join(archiveDir, '2026-Q2', 'manifest.json')) });
    expect(await verifyArchive({ archiveDir, period: null })).toMatchObject({ ok: true, problems: [], checked: { periods: 2 } });
  });

  it('refuses to insert a period before one archived already', async () => {
    const runDir = await writeRun(out(), '2026-Q1', RUN_ACCOUNTS);
    const error = await refusal(signRun(signOptions({ runDir, certFile, passphrase: PASSPHRASE, archiveDir })));
    expect(error.refusal).toBe('order');
    expect(error.message).toContain('2026-Q2, 2026-Q3 are archived already');
    expect(existsSync(path.join(archiveDir, '2026-Q1'))).toBe(false);
  });

  it('keeps the chain when an earlier period is superseded: the later one links to a version it kept', async () => {
    await signRun(signOptions({ runDir: path.join(out(), '2026-Q2'), certFile, passphrase: PASSPHRASE, archiveDir }, { now: new Date('2026-10-09T09:00:00Z'), supersede: { reason: 'late dividend' } }));
    expect(await verifyArchive({ archiveDir, period: null })).toMatchObject({ ok: true, problems: [] });
    // A period signed after the supersede links to the current version.
    const runDir = await writeRun(out(), '2026-Q4', RUN_ACCOUNTS);
    await signRun(signOptions({ runDir, certFile, passphrase: PASSPHRASE, archiveDir }, { now: new Date('2027-01-05T09:00:00Z') }));
    expect((await manifestOf(archiveDir, '2026-Q4')).previous?.manifest_sha256).toBe(sha256sum(path.join(archiveDir, '2026-Q3', 'manifest.json')));
    expect(await verifyArchive({ archiveDir, period: null })).toMatchObject({ ok: true, problems: [], checked: { periods: 3 } });
  });
});

describe('what sign refuses', () => {
  it('a folder without run.json', async () => {
    const error = await refusal(signRun(signOptions({ runDir: path.join(root, 'nowhere'), certFile, passphrase: PASSPHRASE, archiveDir: path.join(root, 'archive-refused') })));
    expect(error.refusal).toBe('run');
    expect(error.message).toContain('no run.json in');
  });

  it('a reported account without statement.pdf, naming the file; nothing is written', async () => {
    const runDir = await writeRun(path.join(root, 'out-nopdf'), '2026-Q3', RUN_ACCOUNTS);
    await rm(path.join(runDir, 'accounts', 'A-1002', 'statement.pdf'));
    const archiveDir = path.join(root, 'archive-nopdf');
    const error = await refusal(signRun(signOptions({ runDir, certFile, passphrase: PASSPHRASE, archiveDir })));
    expect(error.message).toContain(path.join(runDir, 'accounts', 'A-1002', 'statement.pdf'));
    expect(existsSync(archiveDir)).toBe(false);
  });

  it('a wrong passphrase, without repeating it; nothing is written', async () => {
    const runDir = await writeRun(path.join(root, 'out-wrong'), '2026-Q3', RUN_ACCOUNTS);
    const archiveDir = path.join(root, 'archive-wrong');
    const error = await refusal(signRun(signOptions({ runDir, certFile, passphrase: 'not the passphrase', archiveDir })));
    expect(error.refusal).toBe('certificate');
    expect(error.message).toBe(`cannot open the certificate ${certFile}: the passphrase does not open it; check the environment variable named by --passphrase-env`);
    expect(error.message).not.toContain('not the passphrase');
    expect(existsSync(archiveDir)).toBe(false);
  });

  it('a signing time outside the certificate\'s validity', async () => {
    const runDir = await writeRun(path.join(root, 'out-expired'), '2026-Q3', RUN_ACCOUNTS);
    const error = await refusal(signRun(signOptions({ runDir, certFile, passphrase: PASSPHRASE, archiveDir: path.join(root, 'archive-expired') }, { now: new Date('2029-01-05T09:00:00Z') })));
    expect(error.message).toMatch(/is valid from 2026-01-01T00:00:00.000Z to 2028-01-02T00:00:00.000Z, not at the signing time 2029-01-05T09:00:00.000Z/);
  });

  it('an account that is not in the run; --accounts signs only those named', async () => {
    const runDir = await writeRun(path.join(root, 'out-select'), '2026-Q3', RUN_ACCOUNTS);
    const archiveDir = path.join(root, 'archive-select');
    const error = await refusal(signRun(signOptions({ runDir, certFile, passphrase: PASSPHRASE, archiveDir }, { accounts: ['A-1001', 'Z-1'] })));
    expect(error.message).toContain('not in the run');
    expect(error.message).toContain('Z-1');
    const result = await signRun(signOptions({ runDir, certFile, passphrase: PASSPHRASE, archiveDir }, { accounts: ['A-1002', 'F-9'] }));
    expect(result.signed).toEqual(['A-1002']);
    expect(result.skipped.map((entry) => entry.account)).toEqual(['F-9']);
    expect((await readdir(path.join(archiveDir, '2026-Q3'))).sort()).toEqual(['A-1002', 'manifest.json', 'manifest.sig', 'signer.pem']);
  });

  it('a run whose selected accounts all failed', async () => {
    const runDir = await writeRun(path.join(root, 'out-allfailed'), '2026-Q3', [{ account: 'F-9', status: 'failed' }]);
    const error = await refusal(signRun(signOptions({ runDir, certFile, passphrase: PASSPHRASE, archiveDir: path.join(root, 'archive-allfailed') })));
    expect(error.message).toContain('nothing to sign');
  });
});

describe('a certificate made with the OpenSSL recipe of docs/archive.md', () => {
  it('signs statements that pdfsig and verify accept', async () => {
    const folder = path.join(root, 'openssl-recipe');
    const env = { ...process.env, QUARTERLINE_CERT_PASSPHRASE: PASSPHRASE };
    await mkdir(folder, { recursive: true });
    execFileSync('openssl', ['req', '-x509', '-newkey', 'rsa:2048', '-sha256', '-days', '730', '-nodes', '-subj', '/CN=Example Wealth (test)',
      '-keyout', path.join(folder, 'test-key.pem'), '-out', path.join(folder, 'test-cert.pem')], { stdio: 'ignore' });
    execFileSync('openssl', ['pkcs12', '-export', '-inkey', path.join(folder, 'test-key.pem'), '-in', path.join(folder, 'test-cert.pem'),
      '-name', 'Example Wealth (test)', '-passout', 'env:QUARTERLINE_CERT_PASSPHRASE', '-out', path.join(folder, 'test-signer.p12')], { stdio: 'ignore', env });
    const runDir = await writeRun(path.join(folder, 'out'), '2026-Q3', RUN_ACCOUNTS);
    const archiveDir = path.join(folder, 'archive');
    // OpenSSL's certificate starts now: sign at the real time.
    await signRun(signOptions({ runDir, certFile: path.join(folder, 'test-signer.p12'), passphrase: PASSPHRASE, archiveDir }, { now: new Date() }));
    const report = pdfsig(path.join(archiveDir, '2026-Q3', 'A-1001', 'statement.pdf'));
    expect(report).toContain('Signature Validation: Signature is Valid.');
    expect(report).toContain('Signer Certificate Common Name: Example Wealth (test)');
    expect(await verifyArchive({ archiveDir, period: null })).toMatchObject({ ok: true, problems: [] });
  });
});

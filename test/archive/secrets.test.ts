/**
 * Key handling: no passphrase and no private key material in anything sign,
 * verify or keygen return, throw, print or write (spec: "a passphrase or key
 * never appears in output, logs or the archive"). Also keygen's file: owner
 * only, never overwritten, and readable by OpenSSL with the passphrase.
 */
import { execFileSync } from 'node:child_process';
import { readFile, readdir, rm, stat } from 'node:fs/promises';
import path from 'node:path';
import forge from 'node-forge';
import { afterAll, afterEach, beforeAll, describe, expect, it, vi } from 'vitest';
import { signRun, signSummary, verifyArchive, verifySummary, writeTestCertificate } from '../../src/archive/index.ts';
import { signOptions, temporaryFolder, writeRun } from './helpers.ts';

// Distinctive, with a non-ASCII letter so that every encoding of it is searched for.
const PASSPHRASE = 'Σ-never-print-me-7f3a91';

let root: string;
let certFile: string;
let secrets: { readonly text: string[]; readonly bytes: Buffer[] };

beforeAll(async () => {
  root = await temporaryFolder();
  certFile = path.join(root, 'firm.p12');
  await writeTestCertificate({ out: certFile, name: 'Example Wealth Test Signer', passphrase: PASSPHRASE });
  // The key material, read back independently with node-forge.
  const p12 = await readFile(certFile);
  const container = forge.pkcs12.pkcs12FromAsn1(forge.asn1.fromDer(forge.util.createBuffer(p12.toString('binary'))), false, PASSPHRASE);
  const bagType = forge.pki.oids['pkcs8ShroudedKeyBag']!;
  const key = container.getBags({ bagType })[bagType]![0]!.key as forge.pki.rsa.PrivateKey;
  const keyDer = Buffer.from(forge.asn1.toDer(forge.pki.privateKeyToAsn1(key)).getBytes(), 'binary');
  const exponent = key.d.toString(16);
  secrets = {
    text: [PASSPHRASE, keyDer.toString('base64').slice(0, 64), exponent.slice(0, 64), 'PRIVATE KEY'],
    bytes: [Buffer.from(PASSPHRASE, 'utf8'), Buffer.from(PASSPHRASE, 'utf16le'), keyDer.subarray(0, 256), p12.subarray(0, 256), Buffer.from(exponent.slice(0, 64), 'hex')],
  };
});

afterAll(async () => {
  await rm(root, { recursive: true, force: true });
});

afterEach(() => {
  vi.restoreAllMocks();
});

function expectNoSecretIn(text: string): void {
  for (const secret of secrets.text) expect(text.includes(secret), `found "${secret.slice(0, 8)}…"`).toBe(false);
}

function errorText(error: unknown): string {
  if (!(error instanceof Error)) return String(error);
  return [error.message, error.stack ?? '', String(error.cause ?? ''), JSON.stringify(error)].join('\n');
}

describe('no passphrase or key in any output', () => {
  it('holds across signing, refusals, superseding and verifying, for everything returned, thrown, printed and written', async () => {
    const printed: string[] = [];
    const capture = (chunk: unknown) => { printed.push(String(chunk)); return true; };
    vi.spyOn(process.stdout, 'write').mockImplementation(capture);
    vi.spyOn(process.stderr, 'write').mockImplementation(capture);
    for (const method of ['log', 'info', 'warn', 'error', 'debug'] as const) vi.spyOn(console, method).mockImplementation((...args: unknown[]) => { printed.push(args.map(String).join(' ')); });

    const runDir = await writeRun(path.join(root, 'out'), '2026-Q3', [{ account: 'A-1001', status: 'reported' }, { account: 'F-9', status: 'failed' }]);
    const archiveDir = path.join(root, 'archive');
    const base = { runDir, certFile, passphrase: PASSPHRASE, archiveDir };
    const outputs: string[] = [];
    // keygen's certificate starts a day before it is made: sign at the real time.
    const now = new Date();

    const signed = await signRun(signOptions(base, { now }));
    outputs.push(JSON.stringify(signed), signSummary(signed, archiveDir));
    for (const attempt of [
      () => signRun(signOptions(base, { now })), // already archived
      () => signRun(signOptions({ ...base, passphrase: `${PASSPHRASE}x` }, { now })), // wrong passphrase: must not echo it either
      () => signRun(signOptions({ ...base, certFile: runDir }, { now })), // not a file
      () => signRun(signOptions({ ...base, certFile: path.join(runDir, 'run.json') }, { now })), // not PKCS#12
    ]) {
      const error = await attempt().then(() => null, (thrown: unknown) => thrown);
      expect(error).toBeInstanceOf(Error);
      outputs.push(errorText(error));
    }
    const superseded = await signRun(signOptions(base, { now: new Date(now.getTime() + 60_000), supersede: { reason: 'test' } }));
    outputs.push(JSON.stringify(superseded));
    const report = await verifyArchive({ archiveDir, period: null });
    expect(report.ok).toBe(true);
    outputs.push(JSON.stringify(report), verifySummary(report));

    for (const text of [...outputs, ...printed]) expectNoSecretIn(text);
    expect(outputs.some((text) => text.includes('the passphrase does not open it'))).toBe(true);

    const files = (await readdir(archiveDir, { recursive: true, withFileTypes: true })).filter((entry) => entry.isFile());
    expect(files.length).toBeGreaterThan(8);
    for (const entry of files) {
      const content = await readFile(path.join(entry.parentPath, entry.name));
      expectNoSecretIn(content.toString('latin1'));
      expectNoSecretIn(content.toString('utf8'));
      for (const secret of secrets.bytes) expect(content.includes(secret), `${entry.name} holds key material`).toBe(false);
    }
  });
});

describe('keygen', () => {
  it('writes a PKCS#12 file only its owner can read, which OpenSSL opens with the passphrase', async () => {
    expect((await stat(certFile)).mode & 0o777).toBe(0o600);
    const dump = execFileSync('openssl', ['pkcs12', '-in', certFile, '-nokeys', '-passin', 'env:QUARTERLINE_TEST_PASSPHRASE'], {
      encoding: 'utf8', env: { ...process.env, QUARTERLINE_TEST_PASSPHRASE: PASSPHRASE },
    });
    expect(dump).toContain('subject=CN = Example Wealth Test Signer');
    expect(dump).toContain('issuer=CN = Example Wealth Test Signer');
  });

  it('never overwrites an existing file', async () => {
    const before = await readFile(certFile);
    await expect(writeTestCertificate({ out: certFile, name: 'Other', passphrase: 'other' })).rejects.toThrow(`${certFile} exists already; keygen never overwrites a certificate`);
    expect(await readFile(certFile)).toEqual(before);
  });
});

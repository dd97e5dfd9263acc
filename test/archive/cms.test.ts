/**
 * The building blocks of verify, checked against independent software:
 * canonical JSON against Python's json module, the CMS verifier against
 * signatures made by OpenSSL (not by the library sign uses), the DER reader
 * against an OID whose encoding RFC 5652 fixes.
 */
import { execFileSync } from 'node:child_process';
import { readFile, rm, writeFile } from 'node:fs/promises';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { verifyDetachedCms } from '../../src/archive/cms.ts';
import { objectIdentifierOf, readElement } from '../../src/archive/der.ts';
import { canonicalJson } from '../../src/archive/layout.ts';
import { checkPdfSignature } from '../../src/archive/pdf-signature.ts';
import { statementPdf, temporaryFolder } from './helpers.ts';

describe('canonicalJson', () => {
  it('matches Python\'s json.dumps(sort_keys=True, indent=2), integer-like keys included', () => {
    const value = { b: [3, { z: null, a: true }], 10: 'ten', 9: 'nine', A: {}, é: 'café', a: [], n: 1234567 };
    // python3 -c 'import json; value = {"b": [3, {"z": None, "a": True}], "10": "ten", "9": "nine", "A": {}, "é": "café", "a": [], "n": 1234567};
    //   print(repr(json.dumps(value, sort_keys=True, indent=2, ensure_ascii=False) + "\n"))'
    const python = '{\n  "10": "ten",\n  "9": "nine",\n  "A": {},\n  "a": [],\n  "b": [\n    3,\n    {\n      "a": true,\n      "z": null\n    }\n  ],\n  "n": 1234567,\n  "é": "café"\n}\n';
    expect(canonicalJson(value)).toBe(python);
    // JSON.stringify alone would put "9" before "10": the reason for writing keys by hand.
    expect(JSON.stringify({ 10: 0, 9: 0 })).toBe('{"9":0,"10":0}');
  });
});

describe('DER reader', () => {
  it('decodes the id-signedData OID (RFC 5652 section 5.1: 1.2.840.113549.1.7.2)', () => {
    const encoded = Uint8Array.from([0x06, 0x09, 0x2a, 0x86, 0x48, 0x86, 0xf7, 0x0d, 0x01, 0x07, 0x02]);
    expect(objectIdentifierOf(encoded, readElement(encoded, 0))).toBe('1.2.840.113549.1.7.2');
  });

  it('refuses an indefinite length and a length past the end', () => {
    expect(() => readElement(Uint8Array.from([0x30, 0x80, 0x00, 0x00]), 0)).toThrow('indefinite length is not DER');
    expect(() => readElement(Uint8Array.from([0x04, 0x05, 0x00]), 0)).toThrow('runs past its container');
  });
});

describe('verifyDetachedCms on signatures made by OpenSSL', () => {
  let folder: string;
  let content: Buffer;
  let signature: Buffer;

  beforeAll(async () => {
    folder = await temporaryFolder();
    const key = path.join(folder, 'key.pem');
    const certificate = path.join(folder, 'cert.pem');
    execFileSync('openssl', ['req', '-x509', '-newkey', 'rsa:2048', '-sha256', '-days', '2', '-nodes', '-subj', '/CN=OpenSSL Test Signer', '-keyout', key, '-out', certificate], { stdio: 'ignore' });
    content = Buffer.from('bytes of a document, signed detached\n');
    await writeFile(path.join(folder, 'content.bin'), content);
    // Detached (no -nodetach), binary, DER, SHA-256, with signed attributes (OpenSSL's default).
    execFileSync('openssl', ['cms', '-sign', '-binary', '-md', 'sha256', '-outform', 'DER', '-signer', certificate, '-inkey', key,
      '-in', path.join(folder, 'content.bin'), '-out', path.join(folder, 'signature.der')], { stdio: 'ignore' });
    signature = await readFile(path.join(folder, 'signature.der'));
  });

  afterAll(async () => {
    await rm(folder, { recursive: true, force: true });
  });

  it('accepts the signature over the right content, with zero padding after it as in a PDF', () => {
    const check = verifyDetachedCms(content, Buffer.concat([signature, Buffer.alloc(100)]));
    expect(check.valid).toBe(true);
    if (check.valid) expect(check.signingTime).toBeInstanceOf(Date);
  });

  it('rejects other content (digest mismatch)', () => {
    const changed = Buffer.from(content);
    changed[0] = changed[0]! ^ 1;
    expect(verifyDetachedCms(changed, signature)).toEqual({ valid: false, problem: 'the signed bytes were changed after signing (digest mismatch)' });
  });

  it('rejects a changed signature value', () => {
    const forged = Buffer.from(signature);
    forged[forged.length - 10] = forged[forged.length - 10]! ^ 0xff; // inside the RSA signature, the SignerInfo's last field
    expect(verifyDetachedCms(content, forged)).toEqual({ valid: false, problem: 'the CMS signature does not verify with the signer\'s certificate' });
  });

  it('reports bytes that are not CMS as a problem rather than throwing', () => {
    expect(verifyDetachedCms(content, Buffer.from('not a signature'))).toMatchObject({ valid: false });
  });
});

describe('checkPdfSignature', () => {
  it('says an unsigned PDF has no signature', async () => {
    expect(checkPdfSignature(await statementPdf('A-1', '2026-Q3'))).toEqual({ valid: false, problem: 'the PDF has no signature' });
  });
});

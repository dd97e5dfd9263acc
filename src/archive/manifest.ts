/**
 * The manifest of one archived version of a period: what was filed, by whom,
 * when, with which tool, and its links to the previous period (the chain) and
 * to the version it supersedes. Written as canonical JSON (layout.ts) and
 * signed with the signer's key: manifest.sig holds the base64 of an
 * RSASSA-PKCS1-v1_5 signature with SHA-256 (RFC 8017 section 8.2) over the
 * exact bytes of manifest.json.
 */
import { X509Certificate, sign as signBytes, verify as verifyBytes, type KeyObject } from 'node:crypto';
import { z } from 'zod';

export const MANIFEST_FORMAT = 'quarterline-archive-manifest/1';
export const MANIFEST_SIGNATURE_ALGORITHM = 'RSA-SHA256';

const sha256 = z.string().regex(/^[0-9a-f]{64}$/, { error: 'expected a lower-case hexadecimal SHA-256' });

const manifestSchema = z.strictObject({
  format: z.literal(MANIFEST_FORMAT),
  period: z.string(),
  signed_at: z.iso.datetime(),
  tool: z.strictObject({ name: z.string(), version: z.string() }),
  signer: z.strictObject({ name: z.string(), certificate_sha256: sha256, certificate_file: z.string() }),
  signature: z.strictObject({ file: z.string(), algorithm: z.literal(MANIFEST_SIGNATURE_ALGORITHM), encoding: z.literal('base64') }),
  files: z.record(z.string(), z.strictObject({ sha256, bytes: z.int().nonnegative() })),
  accounts: z.record(z.string(), z.strictObject({ unsigned_statement_sha256: sha256 })),
  not_signed: z.array(z.strictObject({ account: z.string(), reason: z.string() })),
  previous: z.strictObject({ period: z.string(), manifest_sha256: sha256 }).nullable(),
  supersedes: z.strictObject({
    manifest_sha256: sha256,
    signed_at: z.iso.datetime(),
    superseded_at: z.iso.datetime(),
    path: z.string(),
    reason: z.string(),
  }).nullable(),
});

/** One archived version's manifest (docs/archive.md, "Manifest"). */
export type Manifest = z.infer<typeof manifestSchema>;

/** Parses manifest bytes; a message instead of a manifest when they are not one. */
export function parseManifest(bytes: Uint8Array): { readonly manifest: Manifest } | { readonly problem: string } {
  let data: unknown;
  try {
    data = JSON.parse(Buffer.from(bytes).toString('utf8'));
  } catch {
    return { problem: 'not a manifest: the file is not JSON' };
  }
  const parsed = manifestSchema.safeParse(data);
  if (!parsed.success) {
    const first = parsed.error.issues[0];
    return { problem: `not a manifest of this format: ${first ? `${first.path.join('.') || '(top)'}: ${first.message}` : 'unreadable'}` };
  }
  return { manifest: parsed.data };
}

/** The detached signature of the manifest bytes, as written to manifest.sig (base64 and a newline). */
export function signManifest(manifestBytes: Uint8Array, privateKey: KeyObject): string {
  return `${signBytes('sha256', manifestBytes, privateKey).toString('base64')}\n`;
}

/** Whether manifest.sig's text is a valid signature of the manifest bytes by the certificate's key. */
export function manifestSignatureHolds(manifestBytes: Uint8Array, signatureText: string, certificate: X509Certificate): boolean {
  const base64 = signatureText.trim();
  if (!/^[A-Za-z0-9+/]+={0,2}$/.test(base64)) return false;
  try {
    return verifyBytes('sha256', manifestBytes, certificate.publicKey, Buffer.from(base64, 'base64'));
  } catch {
    return false;
  }
}

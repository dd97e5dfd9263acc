/**
 * The archive's names and orderings, shared by `sign` and `verify`
 * (docs/archive.md, "Layout"):
 *
 * ```
 * ARCHIVE/P/manifest.json        canonical JSON, see manifest.ts
 * ARCHIVE/P/manifest.sig         base64 signature of the manifest bytes
 * ARCHIVE/P/signer.pem           the signer's certificate
 * ARCHIVE/P/ID/statement.pdf     the signed statement
 * ARCHIVE/P/ID/figures.json      the figures, byte for byte as the run wrote them
 * ARCHIVE/P/superseded/<time>/   a whole earlier version of P (its own manifest, and its own superseded/)
 * ```
 */
import { createHash } from 'node:crypto';
import { parsePeriod } from '../analysis/periods.ts';
import { QuarterlineError } from '../errors.ts';

export const MANIFEST_FILE = 'manifest.json';
export const MANIFEST_SIGNATURE_FILE = 'manifest.sig';
export const SIGNER_CERTIFICATE_FILE = 'signer.pem';
export const SUPERSEDED_FOLDER = 'superseded';
export const STATEMENT_FILE = 'statement.pdf';
export const FIGURES_FILE = 'figures.json';
/** Held while `sign` changes the archive; not archive content. */
export const LOCK_FILE = '.sign.lock';
/** Prefix of the folder a `sign` builds a period in before renaming it into place. */
export const TEMPORARY_PREFIX = '.tmp-sign-';

/** The words of the PDF signature's /Reason entry. */
export const SIGNATURE_REASON = 'Quarterly statement';

/** Names a period folder already uses for itself; an account cannot be called so. */
const RESERVED_NAMES: ReadonlySet<string> = new Set([MANIFEST_FILE, MANIFEST_SIGNATURE_FILE, SIGNER_CERTIFICATE_FILE, SUPERSEDED_FOLDER]);

/** Why `sign` refused, or `verify` could not start. */
export type ArchiveRefusal =
  | 'run' // the run folder is unusable: no run.json, a missing statement, an unknown account
  | 'certificate' // the PKCS#12 file cannot be opened or used
  | 'already-archived'
  | 'not-archived' // --supersede for a period that is not archived
  | 'order' // a later period is archived already
  | 'locked' // another sign holds the archive
  | 'archive'; // the archive folder itself is unusable

/** A refusal of `sign` or `verify`; the message says what was found and what to do. Nothing was written. */
export class ArchiveError extends QuarterlineError {
  constructor(readonly refusal: ArchiveRefusal, message: string) {
    super(message);
  }
}

/** An account id that can name a folder of the period: the book's id rule, minus `.`, `..`, dot-names and reserved names. */
export function isArchivableAccountId(id: string): boolean {
  return /^[A-Za-z0-9._-]{1,64}$/.test(id) && !id.startsWith('.') && !RESERVED_NAMES.has(id);
}

/** Whether a folder name in the archive is a period label (YYYY-Qn, YYYY-MM or YYYY). */
export function isPeriodLabel(name: string): boolean {
  return parsePeriod(name) !== null;
}

/**
 * Order of periods in the chain: by the period's last day, then by label.
 * For labels of one form (all quarters, all months) this is the order of the
 * labels as text; it also places a year after the quarters that end it.
 */
export function comparePeriods(left: string, right: string): number {
  const leftEnd = parsePeriod(left)?.endDay ?? Number.NaN;
  const rightEnd = parsePeriod(right)?.endDay ?? Number.NaN;
  if (leftEnd !== rightEnd) return leftEnd - rightEnd;
  return compareCodeUnits(left, right);
}

/** Lower-case hexadecimal SHA-256 (NIST FIPS 180-4) of some bytes. */
export function sha256Hex(bytes: Uint8Array | string): string {
  return createHash('sha256').update(bytes).digest('hex');
}

/** The folder name of a superseded version: the superseding time, UTC, with `-` for `:` so it is a valid file name everywhere. */
export function supersededFolderName(time: Date): string {
  return time.toISOString().replace(/\.\d{3}Z$/, 'Z').replace(/:/g, '-');
}

function compareCodeUnits(left: string, right: string): number {
  return left < right ? -1 : left > right ? 1 : 0;
}

function canonicalText(value: unknown, indent: string): string {
  if (value === null || typeof value === 'boolean' || typeof value === 'string') return JSON.stringify(value);
  if (typeof value === 'number') {
    if (!Number.isFinite(value)) throw new TypeError('canonical JSON has no form for a non-finite number');
    return JSON.stringify(value);
  }
  const inner = `${indent}  `;
  if (Array.isArray(value)) {
    if (value.length === 0) return '[]';
    return `[\n${value.map((item) => `${inner}${canonicalText(item, inner)}`).join(',\n')}\n${indent}]`;
  }
  if (typeof value === 'object') {
    // Written by hand rather than by JSON.stringify: that one puts integer-like keys ("1001") first whatever their order.
    const entries = Object.entries(value as Record<string, unknown>)
      .filter(([, entry]) => entry !== undefined)
      .sort(([left], [right]) => compareCodeUnits(left, right));
    if (entries.length === 0) return '{}';
    return `{\n${entries.map(([key, entry]) => `${inner}${JSON.stringify(key)}: ${canonicalText(entry, inner)}`).join(',\n')}\n${indent}}`;
  }
  throw new TypeError(`canonical JSON has no form for a ${typeof value}`);
}

/**
 * Canonical JSON of the archive: keys sorted by UTF-16 code unit at every
 * depth, two-space indentation, `\n` line ends, one final newline, UTF-8.
 * Array order is kept (it is meaningful). Numbers are written by
 * ECMAScript's Number::toString; the manifest holds integers only.
 */
export function canonicalJson(value: unknown): string {
  return `${canonicalText(value, '')}\n`;
}

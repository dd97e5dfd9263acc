/**
 * `sign`: signs every reported statement of a run and files the period in
 * the write-once archive (docs/archive.md).
 *
 * Crash safety: the new version is built whole in ARCHIVE/.tmp-sign-…, flushed
 * to disk, and published by renaming that folder to ARCHIVE/P as the last
 * step. Superseding first renames the old ARCHIVE/P into the new folder's
 * superseded/<time>/ (one rename), then publishes (a second rename). A crash
 * before the first rename leaves the archive as it was plus a temporary
 * folder, which the next `sign` discards; a crash between the two renames
 * leaves P only in the temporary folder, complete, and the next `sign`
 * finishes the job (rolls forward). Nothing archived is ever deleted.
 */
import { X509Certificate, randomBytes } from 'node:crypto';
import { mkdir, readFile, readdir, rename, rm, stat } from 'node:fs/promises';
import path from 'node:path';
import { z } from 'zod';
import { openSigningIdentity, type SigningIdentity } from './certificate.ts';
import { syncFolder, syncTree, writeDurable, lockArchive } from './io.ts';
import { MANIFEST_FORMAT, MANIFEST_SIGNATURE_ALGORITHM, manifestSignatureHolds, parseManifest, signManifest, type Manifest } from './manifest.ts';
import { signPdf } from './pdf-signature.ts';
import {
  ArchiveError, FIGURES_FILE, MANIFEST_FILE, MANIFEST_SIGNATURE_FILE, SIGNER_CERTIFICATE_FILE, STATEMENT_FILE,
  SUPERSEDED_FOLDER, TEMPORARY_PREFIX, canonicalJson, comparePeriods, isArchivableAccountId, isPeriodLabel, sha256Hex,
  supersededFolderName,
} from './layout.ts';

export interface SignOptions {
  /** The run folder OUT/P: run.json and accounts/ID/{statement.pdf, figures.json}. */
  readonly runDir: string;
  /** The PKCS#12 file of the signer. */
  readonly certFile: string;
  readonly passphrase: string;
  readonly archiveDir: string;
  /** Only these accounts (each must be in the run); null for all. */
  readonly accounts: readonly string[] | null;
  /** Replace an archived version of the period, keeping it under superseded/, for this reason. */
  readonly supersede: { readonly reason: string } | null;
  /** The signing time: in every PDF signature and in the manifest. */
  readonly now: Date;
  /** package.json's version, recorded in the manifest and the PDF signature. */
  readonly toolVersion: string;
}

export interface SignResult {
  readonly period: string;
  /** Accounts signed and filed, in the run's order. */
  readonly signed: string[];
  /** Selected accounts not signed (failed in the run), with the reason. */
  readonly skipped: Array<{ account: string; reason: string }>;
  /** SHA-256 of the new manifest.json: worth keeping outside the archive (docs/archive.md, "What verify cannot see"). */
  readonly manifestSha256: string;
  /** What this sign found and finished or discarded of an interrupted earlier sign. */
  readonly recovered: string[];
}

/** Where a test may stop a sign as if the process died there (no clean-up runs). */
export type InterruptionPoint = 'built' | 'moved';

const runRecordSchema = z.looseObject({
  period: z.string(),
  accounts: z.array(z.looseObject({
    account: z.string(),
    status: z.enum(['reported', 'failed']),
    errors: z.array(z.looseObject({ message: z.string() })).optional(),
  })),
});
type RunRecord = z.infer<typeof runRecordSchema>;

async function readRunRecord(runDir: string): Promise<RunRecord> {
  const recordPath = path.join(runDir, 'run.json');
  let text: string;
  try {
    text = await readFile(recordPath, 'utf8');
  } catch {
    throw new ArchiveError('run', `no run.json in ${runDir}; give the run folder that build wrote, OUT/P (e.g. out/2026-Q3)`);
  }
  let data: unknown;
  try {
    data = JSON.parse(text);
  } catch {
    throw new ArchiveError('run', `${recordPath} is not JSON; rerun build for this period`);
  }
  const parsed = runRecordSchema.safeParse(data);
  if (!parsed.success) throw new ArchiveError('run', `${recordPath} is not a run record (${parsed.error.issues[0]?.path.join('.') ?? ''}: ${parsed.error.issues[0]?.message ?? ''}); rerun build for this period`);
  if (!isPeriodLabel(parsed.data.period)) throw new ArchiveError('run', `${recordPath} names the period "${parsed.data.period}", which is not YYYY-Qn, YYYY-MM or YYYY`);
  return parsed.data;
}

interface Selection {
  readonly toSign: readonly string[];
  readonly skipped: Array<{ account: string; reason: string }>;
}

function selectAccounts(record: RunRecord, wanted: readonly string[] | null, runDir: string): Selection {
  const inRun = new Set(record.accounts.map((entry) => entry.account));
  const unknown = (wanted ?? []).filter((id) => !inRun.has(id));
  if (unknown.length > 0) throw new ArchiveError('run', `not in the run ${runDir}: ${unknown.join(', ')}; check --accounts against run.json`);
  const selected = wanted === null ? record.accounts : record.accounts.filter((entry) => wanted.includes(entry.account));
  const toSign: string[] = [];
  const skipped: Array<{ account: string; reason: string }> = [];
  for (const entry of selected) {
    if (entry.status === 'failed') {
      const firstError = entry.errors?.[0]?.message;
      skipped.push({ account: entry.account, reason: `failed in the run${firstError ? `: ${firstError}` : ''}; failed accounts are never signed` });
    } else if (!isArchivableAccountId(entry.account)) {
      throw new ArchiveError('run', `the account id "${entry.account}" cannot name a folder of the archive; rename the account`);
    } else {
      toSign.push(entry.account);
    }
  }
  if (toSign.length === 0) throw new ArchiveError('run', `nothing to sign in ${runDir}: no selected account was reported`);
  return { toSign, skipped };
}

async function isFile(file: string): Promise<boolean> {
  return stat(file).then((info) => info.isFile(), () => false);
}

async function exists(target: string): Promise<boolean> {
  return stat(target).then(() => true, () => false);
}

async function requireAccountFiles(runDir: string, accounts: readonly string[]): Promise<void> {
  const missing: string[] = [];
  for (const account of accounts) {
    for (const file of [STATEMENT_FILE, FIGURES_FILE]) {
      const filePath = path.join(runDir, 'accounts', account, file);
      if (!(await isFile(filePath))) missing.push(filePath);
    }
  }
  if (missing.length > 0) {
    throw new ArchiveError('run', `a reported account has no statement to sign: ${missing.join(', ')} missing; build the period with PDFs (without --no-pdf)`);
  }
}

async function readIdentity(options: SignOptions): Promise<{ readonly p12: Uint8Array; readonly identity: SigningIdentity }> {
  let p12: Uint8Array;
  try {
    p12 = await readFile(options.certFile);
  } catch {
    throw new ArchiveError('certificate', `cannot read the certificate ${options.certFile}; give a PKCS#12 (.p12) file with --cert`);
  }
  return { p12, identity: openSigningIdentity(p12, options.passphrase, options.certFile, options.now) };
}

/** Period folders of the archive, in chain order. */
export async function archivedPeriods(archiveDir: string): Promise<string[]> {
  const entries = await readdir(archiveDir, { withFileTypes: true });
  return entries.filter((entry) => entry.isDirectory() && isPeriodLabel(entry.name)).map((entry) => entry.name).sort(comparePeriods);
}

/**
 * Finishes or discards what an interrupted sign left (run under the lock, so
 * no other sign is at work). A temporary folder whose superseded/ already
 * holds the old version, while ARCHIVE/P is absent, is published; any other
 * temporary folder never became archive content and is removed.
 */
async function recoverInterrupted(archiveDir: string): Promise<string[]> {
  const notes: string[] = [];
  for (const entry of await readdir(archiveDir, { withFileTypes: true })) {
    if (!entry.isDirectory() || !entry.name.startsWith(TEMPORARY_PREFIX)) continue;
    const temporary = path.join(archiveDir, entry.name);
    const period = /^\.tmp-sign-(.+)-\d+-[0-9a-f]{8}$/.exec(entry.name)?.[1];
    const moved = await readdir(path.join(temporary, SUPERSEDED_FOLDER)).then((names) => names.length > 0, () => false);
    if (moved && period !== undefined && isPeriodLabel(period)) {
      const target = path.join(archiveDir, period);
      if (await exists(target)) {
        throw new ArchiveError('archive', `${temporary} holds an earlier version of ${period}, but ${target} exists too; an interrupted supersede cannot be finished automatically: inspect both by hand`);
      }
      await rename(temporary, target);
      await syncFolder(archiveDir);
      notes.push(`finished filing ${period}: an earlier sign --supersede was interrupted after moving the old version`);
    } else {
      await rm(temporary, { recursive: true, force: true });
      notes.push(`discarded ${entry.name}: an interrupted sign that had filed nothing`);
    }
  }
  return notes;
}

/** The chain link to the latest archived period before `period`, after checking that period's manifest signature. */
async function previousLink(archiveDir: string, period: string): Promise<Manifest['previous']> {
  const before = (await archivedPeriods(archiveDir)).filter((label) => comparePeriods(label, period) < 0);
  const latest = before[before.length - 1];
  if (latest === undefined) return null;
  const folder = path.join(archiveDir, latest);
  const refuse = (what: string) => new ArchiveError('archive', `the archived period ${latest}, which ${period} would chain to, ${what}; run quarterline verify on the archive and resolve it first`);
  const manifestBytes = await readFile(path.join(folder, MANIFEST_FILE)).catch(() => { throw refuse('has no manifest.json'); });
  const signature = await readFile(path.join(folder, MANIFEST_SIGNATURE_FILE), 'utf8').catch(() => { throw refuse('has no manifest.sig'); });
  const certificate = await readFile(path.join(folder, SIGNER_CERTIFICATE_FILE), 'utf8').then((pem) => new X509Certificate(pem)).catch(() => { throw refuse('has no readable signer.pem'); });
  if (!manifestSignatureHolds(manifestBytes, signature, certificate)) throw refuse('has a manifest whose signature does not verify');
  return { period: latest, manifest_sha256: sha256Hex(manifestBytes) };
}

interface SupersededVersion {
  readonly manifestSha256: string;
  readonly signedAt: string;
}

async function checkArchiveState(archiveDir: string, period: string, options: SignOptions): Promise<SupersededVersion | null> {
  const periodDir = path.join(archiveDir, period);
  const archived = await exists(periodDir);
  if (archived && !options.supersede) {
    throw new ArchiveError('already-archived', `${period} is already archived in ${periodDir}; the archive is write-once. To file a corrected version, sign again with --supersede --reason "why": the archived version is kept under ${period}/${SUPERSEDED_FOLDER}/`);
  }
  if (!archived && options.supersede) {
    throw new ArchiveError('not-archived', `--supersede was given but ${period} is not archived in ${archiveDir}; sign without --supersede`);
  }
  if (!archived) {
    const later = (await archivedPeriods(archiveDir)).filter((label) => comparePeriods(label, period) > 0);
    if (later.length > 0) {
      throw new ArchiveError('order', `${later.join(', ')} ${later.length === 1 ? 'is' : 'are'} archived already and chain${later.length === 1 ? 's' : ''} to the periods before; ${period} cannot be inserted before ${later.length === 1 ? 'it' : 'them'}. Periods are archived in order`);
    }
    return null;
  }
  const manifestBytes = await readFile(path.join(periodDir, MANIFEST_FILE)).catch(() => null);
  const parsed = manifestBytes ? parseManifest(manifestBytes) : null;
  if (!manifestBytes || !parsed || !('manifest' in parsed)) {
    throw new ArchiveError('archive', `${periodDir} has no readable ${MANIFEST_FILE}; a version without one cannot be superseded: inspect it by hand`);
  }
  return { manifestSha256: sha256Hex(manifestBytes), signedAt: parsed.manifest.signed_at };
}

interface FiledFile {
  readonly sha256: string;
  readonly bytes: number;
}

async function buildVersion(options: SignOptions, period: string, selection: Selection, p12: Uint8Array, identity: SigningIdentity,
  previous: Manifest['previous'], superseded: SupersededVersion | null, temporary: string): Promise<string> {
  const files: Record<string, FiledFile> = {};
  const accounts: Record<string, { unsigned_statement_sha256: string }> = {};
  const file = async (relative: string, content: string | Uint8Array) => {
    await writeDurable(path.join(temporary, ...relative.split('/')), content);
    files[relative] = { sha256: sha256Hex(content), bytes: Buffer.byteLength(content) };
  };
  for (const account of selection.toSign) {
    const accountDir = path.join(options.runDir, 'accounts', account);
    const unsigned = await readFile(path.join(accountDir, STATEMENT_FILE));
    let signed: Uint8Array;
    try {
      signed = await signPdf(unsigned, p12, options.passphrase, { signerName: identity.signerName, signingTime: options.now, application: `quarterline ${options.toolVersion}` });
    } catch (error) {
      throw new ArchiveError('run', `cannot sign ${path.join(accountDir, STATEMENT_FILE)}: ${error instanceof Error ? error.message : String(error)}`);
    }
    const figures = await readFile(path.join(accountDir, FIGURES_FILE));
    try {
      JSON.parse(figures.toString('utf8'));
    } catch {
      throw new ArchiveError('run', `${path.join(accountDir, FIGURES_FILE)} is not JSON; rerun build for this period`);
    }
    await file(`${account}/${STATEMENT_FILE}`, signed);
    await file(`${account}/${FIGURES_FILE}`, figures);
    accounts[account] = { unsigned_statement_sha256: sha256Hex(unsigned) };
  }
  await file(SIGNER_CERTIFICATE_FILE, identity.certificatePem);
  const manifest: Manifest = {
    format: MANIFEST_FORMAT,
    period,
    signed_at: options.now.toISOString(),
    tool: { name: 'quarterline', version: options.toolVersion },
    signer: { name: identity.signerName, certificate_sha256: identity.certificateSha256, certificate_file: SIGNER_CERTIFICATE_FILE },
    signature: { file: MANIFEST_SIGNATURE_FILE, algorithm: MANIFEST_SIGNATURE_ALGORITHM, encoding: 'base64' },
    files,
    accounts,
    not_signed: selection.skipped,
    previous,
    supersedes: superseded && options.supersede ? {
      manifest_sha256: superseded.manifestSha256,
      signed_at: superseded.signedAt,
      superseded_at: options.now.toISOString(),
      path: `${SUPERSEDED_FOLDER}/${supersededFolderName(options.now)}`,
      reason: options.supersede.reason,
    } : null,
  };
  const manifestBytes = Buffer.from(canonicalJson(manifest), 'utf8');
  await writeDurable(path.join(temporary, MANIFEST_FILE), manifestBytes);
  await writeDurable(path.join(temporary, MANIFEST_SIGNATURE_FILE), signManifest(manifestBytes, identity.privateKey));
  return sha256Hex(manifestBytes);
}

/**
 * Signs the run's reported statements and files them as ARCHIVE/P; see the
 * module comment for the order of operations. `interruptAt` (tests only)
 * stops as a crash would, without any clean-up.
 */
export async function signRunSteps(options: SignOptions, interruptAt: InterruptionPoint | null): Promise<SignResult> {
  if (options.supersede && options.supersede.reason.trim() === '') {
    throw new ArchiveError('run', '--supersede needs a reason: add --reason "why the archived version is replaced"');
  }
  const record = await readRunRecord(options.runDir);
  const period = record.period;
  const selection = selectAccounts(record, options.accounts, options.runDir);
  await requireAccountFiles(options.runDir, selection.toSign);
  const { p12, identity } = await readIdentity(options);

  await mkdir(options.archiveDir, { recursive: true });
  const release = await lockArchive(options.archiveDir);
  try {
    const recovered = await recoverInterrupted(options.archiveDir);
    const superseded = await checkArchiveState(options.archiveDir, period, options);
    const previous = await previousLink(options.archiveDir, period);
    const periodDir = path.join(options.archiveDir, period);
    const temporary = path.join(options.archiveDir, `${TEMPORARY_PREFIX}${period}-${process.pid}-${randomBytes(4).toString('hex')}`);
    const result = (manifestSha256: string): SignResult => ({ period, signed: [...selection.toSign], skipped: selection.skipped, manifestSha256, recovered });

    let manifestSha256: string;
    try {
      await mkdir(temporary);
      manifestSha256 = await buildVersion(options, period, selection, p12, identity, previous, superseded, temporary);
      if (superseded) await mkdir(path.join(temporary, SUPERSEDED_FOLDER));
      await syncTree(temporary);
      await syncFolder(options.archiveDir);
    } catch (error) {
      await rm(temporary, { recursive: true, force: true });
      throw error;
    }
    if (interruptAt === 'built') return result(manifestSha256);

    const movedTo = path.join(temporary, SUPERSEDED_FOLDER, supersededFolderName(options.now));
    if (superseded) {
      try {
        await rename(periodDir, movedTo);
      } catch (error) {
        await rm(temporary, { recursive: true, force: true });
        throw error;
      }
      await syncFolder(path.dirname(movedTo));
      await syncFolder(options.archiveDir);
    }
    if (interruptAt === 'moved') return result(manifestSha256);

    try {
      await rename(temporary, periodDir);
    } catch (error) {
      if (superseded) {
        // Put the old version back; if that fails too, leave everything: the next sign finishes filing.
        try {
          await rename(movedTo, periodDir);
        } catch {
          throw error;
        }
      }
      await rm(temporary, { recursive: true, force: true });
      throw error;
    }
    await syncFolder(options.archiveDir);
    return result(manifestSha256);
  } finally {
    await release();
  }
}

/** Signs a run's reported statements and files them in the archive (docs/archive.md). */
export async function signRun(options: SignOptions): Promise<SignResult> {
  return signRunSteps(options, null);
}

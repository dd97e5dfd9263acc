/**
 * `verify`: checks an archive against its own manifests (docs/archive.md,
 * "What verify checks"). Every problem is reported by its path relative to
 * the archive folder; nothing is changed.
 */
import { X509Certificate } from 'node:crypto';
import { readFile, readdir, stat } from 'node:fs/promises';
import path from 'node:path';
import { manifestSignatureHolds, parseManifest, type Manifest } from './manifest.ts';
import { checkPdfSignature } from './pdf-signature.ts';
import {
  ArchiveError, LOCK_FILE, MANIFEST_FILE, MANIFEST_SIGNATURE_FILE, SIGNER_CERTIFICATE_FILE, STATEMENT_FILE, SUPERSEDED_FOLDER,
  TEMPORARY_PREFIX, canonicalJson, comparePeriods, isPeriodLabel, sha256Hex,
} from './layout.ts';

export interface VerifyOptions {
  readonly archiveDir: string;
  /** Only this period (its versions and its link to the period before); null for the whole archive. */
  readonly period: string | null;
}

export interface ArchiveProblem {
  /** Relative to the archive folder, with `/`, e.g. `2026-Q3/A-1001/statement.pdf`. */
  path: string;
  problem: string;
}

export interface VerifyReport {
  /** True only when no problem was found. */
  ok: boolean;
  problems: ArchiveProblem[];
  /** Files compared with a manifest entry; PDF and manifest signatures checked; periods verified. */
  checked: { files: number; signatures: number; periods: number };
}

interface Tally {
  readonly problems: ArchiveProblem[];
  files: number;
  signatures: number;
}

const SAFE_RELATIVE_PATH = /^[A-Za-z0-9_-][A-Za-z0-9._-]*(?:\/[A-Za-z0-9_-][A-Za-z0-9._-]*)*$/;
/** How deep superseded versions may nest before the archive is judged malformed. */
const MAXIMUM_VERSIONS = 1000;

function short(hash: string): string {
  return `${hash.slice(0, 12)}…`;
}

async function readOptional(file: string): Promise<Buffer | null> {
  return readFile(file).catch(() => null);
}

/** Plain files under `folder` (relative, `/`-separated), leaving out the version's own superseded/ folder. */
async function filesOf(tally: Tally, folder: string, relative: string, prefix = ''): Promise<Set<string>> {
  const found = new Set<string>();
  const entries = (await readdir(folder, { withFileTypes: true })).sort((left, right) => (left.name < right.name ? -1 : 1));
  for (const entry of entries) {
    const name = `${prefix}${entry.name}`;
    if (entry.isDirectory()) {
      if (name === SUPERSEDED_FOLDER) continue;
      for (const inner of await filesOf(tally, path.join(folder, entry.name), relative, `${name}/`)) found.add(inner);
    } else if (entry.isFile()) {
      found.add(name);
    } else {
      tally.problems.push({ path: `${relative}/${name}`, problem: 'not a plain file (a link or a device); the archive holds plain files only' });
    }
  }
  return found;
}

interface VersionCheck {
  readonly manifest: Manifest;
  readonly manifestSha256: string;
}

async function checkSignerAndSignature(tally: Tally, folder: string, relative: string, manifest: Manifest, manifestBytes: Buffer): Promise<void> {
  const pem = await readOptional(path.join(folder, SIGNER_CERTIFICATE_FILE));
  let certificate: X509Certificate | null = null;
  try {
    certificate = pem ? new X509Certificate(pem) : null;
  } catch {
    certificate = null;
  }
  if (!certificate) {
    tally.problems.push({ path: `${relative}/${SIGNER_CERTIFICATE_FILE}`, problem: `${pem ? 'not a certificate' : 'missing'}: the manifest signature cannot be checked` });
  } else if (sha256Hex(certificate.raw) !== manifest.signer.certificate_sha256) {
    tally.problems.push({ path: `${relative}/${SIGNER_CERTIFICATE_FILE}`, problem: `not the certificate the manifest names (sha256 ${short(sha256Hex(certificate.raw))}, the manifest records ${short(manifest.signer.certificate_sha256)})` });
  }
  const signature = await readOptional(path.join(folder, MANIFEST_SIGNATURE_FILE));
  if (!signature) {
    tally.problems.push({ path: `${relative}/${MANIFEST_SIGNATURE_FILE}`, problem: 'missing: the manifest is unsigned' });
  } else if (certificate) {
    tally.signatures += 1;
    if (!manifestSignatureHolds(manifestBytes, signature.toString('utf8'), certificate)) {
      tally.problems.push({ path: `${relative}/${MANIFEST_FILE}`, problem: 'manifest signature invalid: manifest.json or manifest.sig changed after signing' });
    }
  }
}

async function checkFiles(tally: Tally, folder: string, relative: string, manifest: Manifest, onDisk: ReadonlySet<string>): Promise<void> {
  for (const [file, recorded] of Object.entries(manifest.files).sort(([left], [right]) => (left < right ? -1 : 1))) {
    if (!SAFE_RELATIVE_PATH.test(file)) {
      tally.problems.push({ path: `${relative}/${MANIFEST_FILE}`, problem: `lists a path that cannot be in a period folder: "${file}"` });
      continue;
    }
    const where = `${relative}/${file}`;
    if (!onDisk.has(file)) {
      tally.problems.push({ path: where, problem: 'missing: the manifest lists it' });
      continue;
    }
    const bytes = await readFile(path.join(folder, ...file.split('/')));
    tally.files += 1;
    const actual = sha256Hex(bytes);
    if (actual !== recorded.sha256) {
      tally.problems.push({ path: where, problem: `changed: sha256 ${short(actual)}, the manifest records ${short(recorded.sha256)}` });
    }
    if (file.endsWith(`/${STATEMENT_FILE}`)) {
      tally.signatures += 1;
      const check = checkPdfSignature(bytes);
      if (!check.valid) {
        tally.problems.push({ path: where, problem: `invalid PDF signature: ${check.problem}` });
      } else if (sha256Hex(check.signerCertificateDer) !== manifest.signer.certificate_sha256) {
        tally.problems.push({ path: where, problem: `PDF signed by another certificate (sha256 ${short(sha256Hex(check.signerCertificateDer))}) than the archive's signer` });
      }
    }
  }
  for (const file of onDisk) {
    if (file === MANIFEST_FILE || file === MANIFEST_SIGNATURE_FILE || file in manifest.files) continue;
    tally.problems.push({ path: `${relative}/${file}`, problem: 'extra file: not in the manifest' });
  }
}

/**
 * Verifies one version of a period (the current one or a superseded one) and,
 * recursively, the versions under its superseded/ folder; returns its
 * manifest when that can be read.
 */
async function verifyVersion(tally: Tally, folder: string, relative: string, period: string, depth: number): Promise<VersionCheck | null> {
  const onDisk = await filesOf(tally, folder, relative);
  const manifestBytes = await readOptional(path.join(folder, MANIFEST_FILE));
  let version: VersionCheck | null = null;
  if (!manifestBytes) {
    tally.problems.push({ path: `${relative}/${MANIFEST_FILE}`, problem: 'missing: the files of this version cannot be checked' });
  } else {
    const parsed = parseManifest(manifestBytes);
    if ('problem' in parsed) {
      tally.problems.push({ path: `${relative}/${MANIFEST_FILE}`, problem: parsed.problem });
    } else {
      const manifest = parsed.manifest;
      version = { manifest, manifestSha256: sha256Hex(manifestBytes) };
      if (canonicalJson(manifest) !== manifestBytes.toString('utf8')) {
        tally.problems.push({ path: `${relative}/${MANIFEST_FILE}`, problem: 'not in canonical form: the file was rewritten after signing' });
      }
      if (manifest.period !== period) {
        tally.problems.push({ path: `${relative}/${MANIFEST_FILE}`, problem: `records the period ${manifest.period} but is filed under ${period}` });
      }
      await checkSignerAndSignature(tally, folder, relative, manifest, manifestBytes);
      await checkFiles(tally, folder, relative, manifest, onDisk);
    }
  }
  await verifySuperseded(tally, folder, relative, period, version, depth);
  return version;
}

async function verifySuperseded(tally: Tally, folder: string, relative: string, period: string, version: VersionCheck | null, depth: number): Promise<void> {
  const supersededFolder = path.join(folder, SUPERSEDED_FOLDER);
  const entries = await readdir(supersededFolder, { withFileTypes: true }).catch(() => null);
  const record = version?.manifest.supersedes ?? null;
  const recordedName = record && record.path.startsWith(`${SUPERSEDED_FOLDER}/`) ? record.path.slice(SUPERSEDED_FOLDER.length + 1) : null;
  if (record && (recordedName === null || !SAFE_RELATIVE_PATH.test(recordedName) || recordedName.includes('/'))) {
    tally.problems.push({ path: `${relative}/${MANIFEST_FILE}`, problem: `records a superseded version at "${record.path}", which is not a folder under ${SUPERSEDED_FOLDER}/` });
  }
  if (depth >= MAXIMUM_VERSIONS) {
    tally.problems.push({ path: `${relative}/${SUPERSEDED_FOLDER}`, problem: `more than ${MAXIMUM_VERSIONS} nested versions; not checked further` });
    return;
  }
  let foundRecorded = false;
  for (const entry of (entries ?? []).sort((left, right) => (left.name < right.name ? -1 : 1))) {
    const where = `${relative}/${SUPERSEDED_FOLDER}/${entry.name}`;
    if (!entry.isDirectory()) {
      tally.problems.push({ path: where, problem: 'extra file: not a superseded version' });
      continue;
    }
    const older = await verifyVersion(tally, path.join(supersededFolder, entry.name), where, period, depth + 1);
    if (entry.name !== recordedName) {
      tally.problems.push({ path: where, problem: `extra: a superseded version that ${relative}/${MANIFEST_FILE} does not record` });
      continue;
    }
    foundRecorded = true;
    if (older && record && older.manifestSha256 !== record.manifest_sha256) {
      tally.problems.push({ path: `${where}/${MANIFEST_FILE}`, problem: `not the version ${relative}/${MANIFEST_FILE} superseded (sha256 ${short(older.manifestSha256)}, recorded ${short(record.manifest_sha256)}): replaced?` });
    }
  }
  if (record && recordedName !== null && !foundRecorded) {
    tally.problems.push({ path: `${relative}/${record.path}`, problem: `missing: ${relative}/${MANIFEST_FILE} records it as the version it superseded` });
  }
}

/**
 * SHA-256 of a period's manifest.json and of every earlier version it
 * supersedes (following the recorded links while the hashes match): the
 * manifests a later period may chain to.
 */
async function manifestHistory(folder: string): Promise<{ readonly current: string; readonly all: readonly string[] } | null> {
  const hashes: string[] = [];
  let current = folder;
  for (let depth = 0; depth < MAXIMUM_VERSIONS; depth += 1) {
    const bytes = await readOptional(path.join(current, MANIFEST_FILE));
    if (!bytes) break;
    const hash = sha256Hex(bytes);
    hashes.push(hash);
    const parsed = parseManifest(bytes);
    const record = 'manifest' in parsed ? parsed.manifest.supersedes : null;
    if (!record || !SAFE_RELATIVE_PATH.test(record.path)) break;
    const next = path.join(current, ...record.path.split('/'));
    const nextBytes = await readOptional(path.join(next, MANIFEST_FILE));
    if (!nextBytes || sha256Hex(nextBytes) !== record.manifest_sha256) break;
    current = next;
  }
  const [first] = hashes;
  return first === undefined ? null : { current: first, all: hashes };
}

async function checkChainLink(tally: Tally, archiveDir: string, period: string, manifest: Manifest, before: string | undefined): Promise<void> {
  const here = `${period}/${MANIFEST_FILE}`;
  const link = manifest.previous;
  if (link === null) {
    if (before !== undefined) tally.problems.push({ path: here, problem: `chain break: it records no previous period, but ${before} is archived before it` });
    return;
  }
  if (before === undefined || link.period !== before) {
    const found = before === undefined ? 'no period is archived before it' : `the period archived before it is ${before}`;
    tally.problems.push({ path: here, problem: `chain break: it chains to ${link.period}, but ${found}` });
    return;
  }
  const history = await manifestHistory(path.join(archiveDir, before));
  if (history === null) {
    tally.problems.push({ path: `${before}/${MANIFEST_FILE}`, problem: `chain break: ${here} chains to it, but it is missing` });
  } else if (!history.all.includes(link.manifest_sha256)) {
    tally.problems.push({ path: `${before}/${MANIFEST_FILE}`, problem: `chain break: ${here} records sha256 ${short(link.manifest_sha256)} for it (or a version it superseded), but it is ${short(history.current)}: replaced?` });
  }
}

/** Verifies the whole archive, or one period of it; exit 0 only when `ok`. Throws ArchiveError when the archive folder cannot be read. */
export async function verifyArchive(options: VerifyOptions): Promise<VerifyReport> {
  const { archiveDir } = options;
  const isFolder = await stat(archiveDir).then((info) => info.isDirectory(), () => false);
  if (!isFolder) throw new ArchiveError('archive', `no archive folder at ${archiveDir}; give the folder that sign --archive wrote (default ./archive)`);
  if (options.period !== null && !isPeriodLabel(options.period)) {
    throw new ArchiveError('archive', `--period "${options.period}" is not a period; write YYYY-Qn, YYYY-MM or YYYY`);
  }
  const tally: Tally = { problems: [], files: 0, signatures: 0 };
  const entries = (await readdir(archiveDir, { withFileTypes: true })).sort((left, right) => (left.name < right.name ? -1 : 1));
  const periods = entries.filter((entry) => entry.isDirectory() && isPeriodLabel(entry.name)).map((entry) => entry.name).sort(comparePeriods);
  for (const entry of entries) {
    if (entry.name === LOCK_FILE || (entry.isDirectory() && isPeriodLabel(entry.name))) continue;
    if (entry.isDirectory() && entry.name.startsWith(TEMPORARY_PREFIX)) {
      tally.problems.push({ path: entry.name, problem: 'left by a sign that is running or was interrupted; not archive content: run sign again, which finishes or discards it' });
    } else if (options.period === null) {
      tally.problems.push({ path: entry.name, problem: 'extra: not a period of the archive' });
    }
  }
  const selected = options.period === null ? periods : periods.filter((label) => label === options.period);
  if (options.period !== null && selected.length === 0) {
    tally.problems.push({ path: options.period, problem: 'missing: the period is not in the archive' });
  }
  for (const period of selected) {
    const version = await verifyVersion(tally, path.join(archiveDir, period), period, period, 0);
    if (version) await checkChainLink(tally, archiveDir, period, version.manifest, periods[periods.indexOf(period) - 1]);
  }
  return { ok: tally.problems.length === 0, problems: tally.problems, checked: { files: tally.files, signatures: tally.signatures, periods: selected.length } };
}

/**
 * Preparing a run's e-mails: one RUN/mail/ID.eml per reported account with
 * a valid address, nothing sent.
 *
 * Inputs, each read once:
 * - RUN/run.json: the period, the book folder, the accounts and their status;
 * - from the book, only book.yaml (the firm: name, e-mail, telephone,
 *   address; read and validated by the book loader's own readers) and
 *   accounts.csv (the `email` column, split by the loader's CSV reader).
 *   The rest of the book (prices, transactions) is not needed, and a large
 *   book is not loaded for it. Addresses are taken from the book as it is
 *   now, so an address corrected after the build is used;
 * - RUN/accounts/ID/figures.json: client, adviser and period as the
 *   statement shows them;
 * - the signed statement ARCHIVE/P/ID/statement.pdf when it exists, else the
 *   run's unsigned RUN/accounts/ID/statement.pdf (the summary says which).
 *
 * A message whose .eml already exists with the same Message-ID (same
 * content, see compose.ts) is kept as it is, Date header included, so a
 * rerun after sending leaves the sent file untouched. A message whose
 * content changed (a re-signed statement, a new address) is written anew;
 * the ledger keeps the Message-ID and attachment SHA-256 of what was sent.
 */
import { readdir, readFile, rm } from 'node:fs/promises';
import path from 'node:path';
import { z } from 'zod';
import { readCsvTable } from '../book/csv.ts';
import { ACCOUNT_COLUMNS } from '../book/schemas.ts';
import { readSettings } from '../book/settings.ts';
import type { Firm } from '../book/types.ts';
import { parseYamlFile } from '../book/yaml.ts';
import { BookError } from '../errors.ts';
import { TEMPORARY_MARKER, writeFileAtomic } from '../run/files.ts';
import { checkAddress } from './address.ts';
import { composeStatementMail, loadMailTemplates, singleLine, type MailTemplates } from './compose.ts';
import { MailError } from './errors.ts';

export const MAIL_FOLDER = 'mail';

export interface PrepareOptions {
  /** The run folder OUT/P. */
  readonly runDir: string;
  /** The archive root; ARCHIVE/P/ID/statement.pdf is used when present. */
  readonly archiveDir: string;
  /** Sender address; null takes firm.email of book.yaml. */
  readonly from: string | null;
  /** The Date header of new messages; defaults to now. */
  readonly now?: () => Date;
  /** Template folder; defaults to templates/mail. */
  readonly templatesDir?: string;
}

export interface PreparedMessage {
  readonly account: string;
  /** One line, as the statement names the client. */
  readonly client: string;
  readonly address: string;
  readonly emlPath: string;
  readonly messageId: string;
  readonly subject: string;
  readonly attachmentSha256: string;
  /** `archive`: the signed statement; `run`: the run's unsigned PDF (no archived one found). */
  readonly attachmentSource: 'archive' | 'run';
  readonly attachmentPath: string;
  /** The .eml was already there with the same content and was kept. */
  readonly kept: boolean;
}

export interface AccountProblem {
  readonly account: string;
  readonly reason: string;
}

export interface PreparedRun {
  readonly runDir: string;
  readonly mailDir: string;
  readonly archiveDir: string;
  readonly period: string;
  readonly bookDir: string;
  readonly sender: string;
  /** In run.json order. */
  readonly messages: readonly PreparedMessage[];
  /** Reported accounts with no address in accounts.csv: listed, never guessed. */
  readonly withoutAddress: ReadonlyArray<{ readonly account: string; readonly client: string }>;
  /** Reported accounts whose message could not be prepared, with the reason. */
  readonly problems: readonly AccountProblem[];
  /** Accounts the run did not report (no statement). */
  readonly notReported: readonly string[];
}

const runRecordSchema = z.object({
  period: z.string().min(1),
  book: z.string().min(1),
  accounts: z.array(z.object({
    account: z.string().min(1),
    status: z.enum(['reported', 'failed']),
  })),
});

const figuresSchema = z.object({
  account: z.string(),
  client: z.string(),
  adviser: z.string().nullable().optional(),
  period: z.object({ label: z.string(), start: z.string(), end: z.string() }),
});

/** Account ids name folders; the book allows letters, digits, ".", "_" and "-", and "." or ".." would leave the folder. */
const SAFE_ACCOUNT_ID = /^[A-Za-z0-9._-]{1,64}$/;

function isSafeAccountId(id: string): boolean {
  return SAFE_ACCOUNT_ID.test(id) && id !== '.' && id !== '..';
}

async function readJson(file: string, what: string): Promise<unknown> {
  let text: string;
  try {
    text = await readFile(file, 'utf8');
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code;
    throw new MailError(`${what}: cannot read ${file} (${code === 'ENOENT' ? 'no such file' : code ?? String(error)})`, { cause: error });
  }
  try {
    return JSON.parse(text) as unknown;
  } catch (error) {
    throw new MailError(`${what}: ${file} is not valid JSON (${error instanceof Error ? error.message : String(error)})`, { cause: error });
  }
}

function describeIssues(error: z.ZodError): string {
  return error.issues.map((issue) => `${issue.path.join('.') || '(top level)'}: ${issue.message}`).join('; ');
}

async function readRunRecord(runDir: string): Promise<z.output<typeof runRecordSchema>> {
  const file = path.join(runDir, 'run.json');
  const parsed = runRecordSchema.safeParse(await readJson(file, 'the run record'));
  if (!parsed.success) {
    throw new MailError(`${file} is not a run record written by \`quarterline build\` (${describeIssues(parsed.error)}); give the run folder OUT/P`);
  }
  return parsed.data;
}

/** The firm as book.yaml describes it, read with the book loader's own validation. */
async function readFirm(bookDir: string): Promise<Firm> {
  const file = path.join(bookDir, 'book.yaml');
  let text: string;
  try {
    text = await readFile(file, 'utf8');
  } catch (error) {
    throw new MailError(`run.json names the book ${bookDir}, but ${file} cannot be read (${(error as NodeJS.ErrnoException).code ?? String(error)}); was the book moved?`, { cause: error });
  }
  const result = readSettings(parseYamlFile('book.yaml', text));
  if (!result.settings) throw new BookError(result.errors);
  return result.settings.firm;
}

interface AddressCell {
  readonly email: string;
  readonly line: number;
}

/** account id → its `email` cell and line, from accounts.csv; ids on more than one row map to every line. */
async function readAddressBook(bookDir: string): Promise<ReadonlyMap<string, readonly AddressCell[]>> {
  const file = path.join(bookDir, 'accounts.csv');
  let bytes: Uint8Array;
  try {
    bytes = await readFile(file);
  } catch (error) {
    throw new MailError(`run.json names the book ${bookDir}, but ${file} cannot be read (${(error as NodeJS.ErrnoException).code ?? String(error)}); was the book moved?`, { cause: error });
  }
  const table = readCsvTable('accounts.csv', bytes, ACCOUNT_COLUMNS);
  const cells = new Map<string, AddressCell[]>();
  for (const row of table.rows) {
    const id = (row.fields['account'] ?? '').trim();
    if (id === '') continue;
    const list = cells.get(id) ?? [];
    list.push({ email: row.fields['email'] ?? '', line: row.line });
    cells.set(id, list);
  }
  return cells;
}

async function readIfExists(file: string): Promise<Buffer | null> {
  try {
    return await readFile(file);
  } catch (error) {
    if ((error as NodeJS.ErrnoException).code === 'ENOENT') return null;
    throw error;
  }
}

/** The Message-ID header of an existing .eml, or null. */
async function existingMessageId(file: string): Promise<string | null> {
  const bytes = await readIfExists(file);
  if (!bytes) return null;
  const headerEnd = bytes.indexOf('\r\n\r\n');
  const header = bytes.subarray(0, headerEnd < 0 ? bytes.length : headerEnd).toString('utf8').replace(/\r\n[ \t]+/g, ' ');
  const match = /^Message-ID:\s*(<[^>\r\n]+>)\s*$/im.exec(header);
  return match?.[1] ?? null;
}

/** Removes temporary files left by a crash while an .eml was written. */
async function removeLeftovers(mailDir: string): Promise<void> {
  const names = await readdir(mailDir).catch(() => [] as string[]);
  await Promise.all(names.filter((name) => name.includes(TEMPORARY_MARKER)).map((name) => rm(path.join(mailDir, name), { force: true })));
}

function senderOf(from: string | null, firm: Firm): string {
  const written = from ?? firm.email;
  const source = from !== null ? '--from' : 'firm.email in book.yaml';
  if (written === null || written.trim() === '') {
    throw new MailError('there is no sender address: book.yaml has no firm.email; set it there or give --from ADDR');
  }
  const checked = checkAddress(written);
  if (!checked.valid) throw new MailError(`the sender address (${source}) is not usable: ${checked.problem}`);
  return checked.address;
}

interface AccountInputs {
  readonly runDir: string;
  readonly archivePeriodDir: string;
  readonly period: string;
  readonly addresses: ReadonlyMap<string, readonly AddressCell[]>;
}

type AccountStep =
  | { readonly kind: 'problem'; readonly reason: string }
  | { readonly kind: 'no-address'; readonly client: string }
  | {
    readonly kind: 'ready';
    readonly client: string;
    readonly adviser: string | null;
    readonly period: { label: string; start: string; end: string };
    readonly address: string;
    readonly attachment: { bytes: Buffer; source: 'archive' | 'run'; path: string };
  };

/** Everything one account's message needs, or why it cannot be prepared. */
async function gatherAccount(account: string, inputs: AccountInputs): Promise<AccountStep> {
  if (!isSafeAccountId(account)) return { kind: 'problem', reason: 'the account id is not usable as a file name' };
  const figuresFile = path.join(inputs.runDir, 'accounts', account, 'figures.json');
  let figuresValue: unknown;
  try {
    figuresValue = await readJson(figuresFile, `account ${account}`);
  } catch (error) {
    return { kind: 'problem', reason: error instanceof Error ? error.message : String(error) };
  }
  const figures = figuresSchema.safeParse(figuresValue);
  if (!figures.success) return { kind: 'problem', reason: `${figuresFile} is not a figures file of \`quarterline build\` (${describeIssues(figures.error)})` };
  if (figures.data.account !== account) {
    return { kind: 'problem', reason: `${figuresFile} belongs to account "${singleLine(figures.data.account)}", not ${account}` };
  }
  if (figures.data.period.label !== inputs.period) {
    return { kind: 'problem', reason: `${figuresFile} is for period ${singleLine(figures.data.period.label)}, not ${inputs.period}` };
  }
  const client = singleLine(figures.data.client);
  const cells = inputs.addresses.get(account) ?? [];
  if (cells.length === 0) return { kind: 'problem', reason: 'the account is no longer in accounts.csv, so it has no address' };
  if (cells.length > 1) {
    return { kind: 'problem', reason: `accounts.csv lists the account on lines ${cells.map((cell) => cell.line).join(', ')}; keep one row so the address is certain` };
  }
  const cell = cells[0]!;
  if (cell.email.trim() === '') return { kind: 'no-address', client };
  const checked = checkAddress(cell.email);
  if (!checked.valid) return { kind: 'problem', reason: `accounts.csv:${cell.line} [email]: ${checked.problem}; correct the address` };

  const archived = path.join(inputs.archivePeriodDir, account, 'statement.pdf');
  const ofRun = path.join(inputs.runDir, 'accounts', account, 'statement.pdf');
  let attachment: { bytes: Buffer; source: 'archive' | 'run'; path: string } | null = null;
  for (const [source, file] of [['archive', archived], ['run', ofRun]] as const) {
    const bytes = await readIfExists(file);
    if (bytes === null) continue;
    if (bytes.subarray(0, 5).toString('latin1') !== '%PDF-') return { kind: 'problem', reason: `${file} is not a PDF file (it does not start with %PDF-)` };
    attachment = { bytes, source, path: file };
    break;
  }
  if (!attachment) {
    return { kind: 'problem', reason: `there is no statement PDF: neither ${archived} nor ${ofRun} exists (was the run built with --no-pdf?)` };
  }
  return {
    kind: 'ready',
    client,
    adviser: figures.data.adviser ?? null,
    period: figures.data.period,
    address: checked.address,
    attachment,
  };
}

/** Prepares every message of the run and writes RUN/mail/ID.eml; sends nothing. */
export async function prepareMail(options: PrepareOptions): Promise<PreparedRun> {
  const runDir = path.resolve(options.runDir);
  const archiveDir = path.resolve(options.archiveDir);
  const record = await readRunRecord(runDir);
  const bookDir = path.resolve(runDir, record.book);
  const firm = await readFirm(bookDir);
  const sender = senderOf(options.from, firm);
  const addresses = await readAddressBook(bookDir);
  const templates: MailTemplates = loadMailTemplates(options.templatesDir);
  const mailDir = path.join(runDir, MAIL_FOLDER);
  await removeLeftovers(mailDir);
  const now = options.now ?? (() => new Date());
  const inputs: AccountInputs = { runDir, archivePeriodDir: path.join(archiveDir, record.period), period: record.period, addresses };

  const messages: PreparedMessage[] = [];
  const withoutAddress: Array<{ account: string; client: string }> = [];
  const problems: AccountProblem[] = [];
  const notReported: string[] = [];
  for (const { account, status } of record.accounts) {
    if (status !== 'reported') {
      notReported.push(account);
      continue;
    }
    const step = await gatherAccount(account, inputs);
    if (step.kind === 'problem') {
      problems.push({ account, reason: step.reason });
      continue;
    }
    if (step.kind === 'no-address') {
      withoutAddress.push({ account, client: step.client });
      continue;
    }
    const composed = await composeStatementMail({
      account,
      client: step.client,
      adviser: step.adviser,
      period: step.period,
      recipient: step.address,
      sender,
      firm: { name: firm.name, address: firm.address, email: firm.email, phone: firm.phone },
      attachment: { bytes: step.attachment.bytes, signed: step.attachment.source === 'archive' },
    }, templates, now());
    const emlPath = path.join(mailDir, `${account}.eml`);
    const kept = (await existingMessageId(emlPath)) === composed.messageId;
    if (!kept) await writeFileAtomic(emlPath, composed.bytes);
    messages.push({
      account,
      client: step.client,
      address: step.address,
      emlPath,
      messageId: composed.messageId,
      subject: composed.subject,
      attachmentSha256: composed.attachmentSha256,
      attachmentSource: step.attachment.source,
      attachmentPath: step.attachment.path,
      kept,
    });
  }
  return { runDir, mailDir, archiveDir, period: record.period, bookDir, sender, messages, withoutAddress, problems, notReported };
}

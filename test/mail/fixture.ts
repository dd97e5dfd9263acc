/**
 * Test fixtures for the mail verb: a small run folder written by hand (the
 * files `quarterline build` writes that mail reads: run.json, figures.json,
 * statement.pdf), a book holding book.yaml and accounts.csv, an archive of
 * "signed" statements, and an SMTP server on the loopback address.
 */
import { createHash } from 'node:crypto';
import { mkdir, mkdtemp, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { PDFDocument, StandardFonts } from 'pdf-lib';
import { SMTPServer, type SMTPServerAddress, type SMTPServerSession } from 'smtp-server';
import { MINIMAL_BOOK_YAML, writeBook } from '../helpers/write-book.ts';

export const PERIOD = '2026-Q3';
export const SMTP_USER = 'statements-robot';
/** Distinctive, so that a leak in any output is found by a plain search. */
export const SMTP_PASSWORD = 'Pw-9f3c1e!do-not-print';

export interface FixtureAccount {
  readonly id: string;
  readonly client: string;
  readonly email: string;
  readonly adviser?: string;
  readonly status?: 'reported' | 'failed';
  /** Write RUN/accounts/ID/statement.pdf (default true for reported accounts). */
  readonly runPdf?: boolean;
  /** Write ARCHIVE/P/ID/statement.pdf (default true for reported accounts). */
  readonly archived?: boolean;
}

export interface Fixture {
  readonly root: string;
  readonly runDir: string;
  readonly archiveDir: string;
  readonly bookDir: string;
  /** account → SHA-256 (hex) of the PDF that should be attached. */
  readonly expectedSha256: ReadonlyMap<string, string>;
}

export function sha256Hex(bytes: Uint8Array): string {
  return createHash('sha256').update(bytes).digest('hex');
}

async function tinyPdf(text: string): Promise<Uint8Array> {
  const document = await PDFDocument.create();
  const font = await document.embedFont(StandardFonts.Helvetica);
  document.addPage([595, 842]).drawText(text, { x: 50, y: 780, size: 12, font });
  return document.save({ useObjectStreams: false });
}

function csvCell(text: string): string {
  return /[",\r\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

export const FIRM_YAML = MINIMAL_BOOK_YAML.replace('firm:\n  name: Test Firm\n', 'firm:\n  name: Test Firm & Partners\n  email: statements@firm.example\n  phone: +44 20 7946 0000\n');

export async function writeFixture(accounts: readonly FixtureAccount[], options: { bookYaml?: string } = {}): Promise<Fixture> {
  const root = await mkdtemp(path.join(tmpdir(), 'quarterline-mail-'));
  const bookDir = await writeBook({
    'book.yaml': options.bookYaml ?? FIRM_YAML,
    'accounts.csv': [
      'account,client,mandate,base_currency,adviser,email',
      ...accounts.map((a) => [a.id, csvCell(a.client), 'growth', 'EUR', csvCell(a.adviser ?? ''), csvCell(a.email)].join(',')),
    ].join('\n') + '\n',
  });
  const runDir = path.join(root, 'out', PERIOD);
  const archiveDir = path.join(root, 'archive');
  await mkdir(runDir, { recursive: true });
  await writeFile(path.join(runDir, 'run.json'), JSON.stringify({
    period: PERIOD,
    book: bookDir,
    started: '2026-10-01T08:00:00.000Z',
    seconds: 1,
    accounts: accounts.map((a) => ({ account: a.id, status: a.status ?? 'reported', errors: [], breaches: 0, pdf: true })),
    timings: { load: 0, compute: 0, html: 0, pdf: 0 },
  }, null, 2));
  const expectedSha256 = new Map<string, string>();
  for (const account of accounts) {
    if ((account.status ?? 'reported') !== 'reported') continue;
    const accountDir = path.join(runDir, 'accounts', account.id);
    await mkdir(accountDir, { recursive: true });
    await writeFile(path.join(accountDir, 'figures.json'), JSON.stringify({
      account: account.id,
      client: account.client,
      mandate: 'growth',
      base_currency: 'EUR',
      adviser: account.adviser ?? null,
      period: { label: PERIOD, start: '2026-06-30', end: '2026-09-30' },
      value: { start: 1000, end: 1100, net_external_flows: 0, income: 0, fees: 0, taxes: 0 },
    }, null, 2));
    if (account.runPdf ?? true) {
      const bytes = await tinyPdf(`Run statement ${account.id}`);
      await writeFile(path.join(accountDir, 'statement.pdf'), bytes);
      expectedSha256.set(account.id, sha256Hex(bytes));
    }
    if (account.archived ?? true) {
      const bytes = await tinyPdf(`Signed statement ${account.id}`);
      await mkdir(path.join(archiveDir, PERIOD, account.id), { recursive: true });
      await writeFile(path.join(archiveDir, PERIOD, account.id, 'statement.pdf'), bytes);
      expectedSha256.set(account.id, sha256Hex(bytes));
    }
  }
  return { root, runDir, archiveDir, bookDir, expectedSha256 };
}

/** One message as the server accepted it. */
export interface Received {
  readonly from: string;
  readonly to: readonly string[];
  readonly raw: Buffer;
  readonly secure: boolean;
}

export type Reply = { readonly code: number; readonly message: string } | null;

export interface ServerHooks {
  /** Called for each MAIL FROM with the number of messages accepted so far; a reply refuses it. */
  readonly onMailFrom?: (accepted: number) => Reply;
  /** Called for each RCPT TO; a reply refuses the recipient. */
  readonly onRcptTo?: (address: string) => Reply;
  /** Called when a message has been received in full, before the reply; a reply refuses it, `drop` closes the connection without one. */
  readonly onMessage?: (raw: Buffer) => Reply | 'drop';
  /** Implicit TLS (smtps) instead of STARTTLS. */
  readonly secure?: boolean;
}

export interface TestServer {
  readonly port: number;
  readonly url: string;
  readonly received: Received[];
  /** Transaction starts (MAIL FROM) with their time, milliseconds since the server started. */
  readonly mailFromTimes: number[];
  readonly authFailures: number;
  close(): Promise<void>;
}

function smtpError(reply: NonNullable<Reply>): Error & { responseCode: number } {
  return Object.assign(new Error(reply.message), { responseCode: reply.code });
}

/** An SMTP server on 127.0.0.1 and a free port, login required (SMTP_USER / SMTP_PASSWORD), STARTTLS offered with smtp-server's built-in self-signed certificate. */
export async function startServer(hooks: ServerHooks = {}): Promise<TestServer> {
  const received: Received[] = [];
  const mailFromTimes: number[] = [];
  const started = performance.now();
  let authFailures = 0;
  const server = new SMTPServer({
    secure: hooks.secure ?? false,
    authOptional: false,
    authMethods: ['PLAIN', 'LOGIN'],
    disableReverseLookup: true,
    logger: false,
    onAuth(auth, _session, callback) {
      if (auth.username === SMTP_USER && auth.password === SMTP_PASSWORD) return callback(null, { user: SMTP_USER });
      authFailures += 1;
      return callback(smtpError({ code: 535, message: 'Authentication credentials invalid' }));
    },
    onMailFrom(_address: SMTPServerAddress, _session: SMTPServerSession, callback) {
      mailFromTimes.push(performance.now() - started);
      const reply = hooks.onMailFrom?.(received.length) ?? null;
      return reply ? callback(smtpError(reply)) : callback();
    },
    onRcptTo(address: SMTPServerAddress, _session: SMTPServerSession, callback) {
      const reply = hooks.onRcptTo?.(address.address) ?? null;
      return reply ? callback(smtpError(reply)) : callback();
    },
    onData(stream, session, callback) {
      const chunks: Buffer[] = [];
      stream.on('data', (chunk: Buffer) => chunks.push(chunk));
      stream.on('end', () => {
        const raw = Buffer.concat(chunks);
        const reply = hooks.onMessage?.(raw) ?? null;
        if (reply === 'drop') {
          for (const connection of server.connections) if (connection.session.id === session.id) connection._socket.destroy();
          return;
        }
        if (reply) return callback(smtpError(reply));
        received.push({
          from: session.envelope.mailFrom ? session.envelope.mailFrom.address : '',
          to: session.envelope.rcptTo.map((rcpt) => rcpt.address),
          raw,
          secure: session.secure,
        });
        return callback(null, `OK queued as Q${received.length}`);
      });
    },
  });
  server.on('error', () => { /* a client that vanished (killed on purpose) */ });
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', () => resolve()));
  const address = server.server.address();
  if (address === null || typeof address === 'string') throw new Error('the test server has no port');
  return {
    port: address.port,
    url: `${hooks.secure ? 'smtps' : 'smtp'}://127.0.0.1:${address.port}`,
    received,
    mailFromTimes,
    get authFailures() { return authFailures; },
    close: () => new Promise<void>((resolve) => server.close(() => resolve())),
  };
}

/** How many accepted messages went to each recipient. */
export function countByRecipient(received: readonly Received[]): Map<string, number> {
  const counts = new Map<string, number>();
  for (const message of received) for (const to of message.to) counts.set(to, (counts.get(to) ?? 0) + 1);
  return counts;
}

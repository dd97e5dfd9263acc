/**
 * Delivering prepared messages over SMTP, each at most once.
 *
 * Order of work:
 * 1. check the options (URL, credentials, rate, --resend ids) before
 *    anything is sent;
 * 2. take the run's send lock (RUN/mail/send.lock): two senders on one run
 *    could both send a message the ledger does not show yet;
 * 3. read the ledger: skip what was sent, hold back what is `unknown`
 *    (unless named with --resend), send the rest in run order;
 * 4. per message, at most `ratePerSecond` transaction starts a second;
 *    `attempt` → transaction → `committing` → reply → `sent`, `deferred`
 *    (retry after the next delay), `failed` or `unknown` (ledger.ts);
 * 5. a failure that would repeat for every message (login refused, TLS
 *    failed, sender refused, server unreachable after the retries) stops the
 *    run; the messages not tried are reported as failed with that reason.
 * The bytes sent are those of RUN/mail/ID.eml, as prepared.
 */
import { mkdir, open, readFile, rm } from 'node:fs/promises';
import path from 'node:path';
import { UsageError } from '../errors.ts';
import { MailError } from './errors.ts';
import { deliveryStates, LEDGER_FILE, openLedger, readLedger, type LedgerEvent, type LedgerWriter } from './ledger.ts';
import type { PreparedMessage, PreparedRun } from './prepare.ts';
import {
  openSession, parseSmtpUrl, redact, secretsOf, SmtpConnectError,
  type SmtpCredentials, type SmtpFailure, type SmtpSession, type SmtpSessionOptions, type SmtpTlsOptions,
} from './smtp.ts';
import { summaryOfPrepared, type MailSummary, type SentEntry, type FailedEntry, type SkippedEntry, type UnknownEntry } from './summary.ts';

/** Waits before the 2nd, 3rd and 4th attempt of a temporarily refused message: 1 s, 2 s, 4 s. */
export const DEFAULT_RETRY_DELAYS_MS: readonly number[] = Object.freeze([1000, 2000, 4000]);

export const LOCK_FILE = 'send.lock';

export interface SendOptions {
  /** smtp://HOST[:PORT] or smtps://HOST[:PORT], without credentials. */
  readonly smtpUrl: string;
  /** From QUARTERLINE_SMTP_USER / QUARTERLINE_SMTP_PASSWORD; both or neither. */
  readonly user: string | null;
  readonly password: string | null;
  /** At most this many SMTP transactions start per second (> 0; fractions allowed). */
  readonly ratePerSecond: number;
  /** Account ids to send even when the ledger shows them sent or unknown. */
  readonly resend: readonly string[];
  /** Waits between attempts of one message; attempts = 1 + its length. */
  readonly retryDelaysMs?: readonly number[];
  readonly tls?: SmtpTlsOptions;
  /** One line per delivery event, for progress output. */
  readonly log?: (line: string) => void;
  /** For tests: how to wait. */
  readonly sleep?: (milliseconds: number) => Promise<void>;
  /** For tests: the clock of the rate limit, milliseconds. */
  readonly now?: () => number;
  /** Connection and greeting time-out, milliseconds (default 60 s). */
  readonly timeoutMs?: number;
}

const realSleep = (milliseconds: number): Promise<void> => new Promise((resolve) => setTimeout(resolve, milliseconds));

function checkedCredentials(user: string | null, password: string | null): SmtpCredentials | null {
  const hasUser = user !== null && user !== '';
  const hasPassword = password !== null && password !== '';
  if (hasUser !== hasPassword) {
    throw new UsageError(`QUARTERLINE_SMTP_${hasUser ? 'PASSWORD' : 'USER'} is not set but QUARTERLINE_SMTP_${hasUser ? 'USER' : 'PASSWORD'} is; set both for a server that needs a login, or neither`);
  }
  return hasUser && hasPassword ? { user: user!, password: password! } : null;
}

function checkOptions(prepared: PreparedRun, options: SendOptions): { session: SmtpSessionOptions; retryDelays: readonly number[] } {
  const endpoint = parseSmtpUrl(options.smtpUrl);
  const credentials = checkedCredentials(options.user, options.password);
  if (!Number.isFinite(options.ratePerSecond) || options.ratePerSecond <= 0) {
    throw new UsageError(`--rate must be a number of messages per second above 0, e.g. 2 or 0.5; got ${options.ratePerSecond}`);
  }
  const retryDelays = options.retryDelaysMs ?? DEFAULT_RETRY_DELAYS_MS;
  if (retryDelays.some((delay) => !Number.isFinite(delay) || delay < 0)) throw new UsageError('retry delays must be milliseconds of at least 0');
  const preparedIds = new Set(prepared.messages.map((message) => message.account));
  const unknownIds = options.resend.filter((id) => !preparedIds.has(id));
  if (unknownIds.length > 0) {
    throw new UsageError(`--resend ${unknownIds.join(', ')}: no message is prepared for ${unknownIds.length === 1 ? 'this account' : 'these accounts'} in ${prepared.runDir} (not reported, no address, or a problem listed by \`quarterline mail\`)`);
  }
  const session: SmtpSessionOptions = {
    endpoint,
    credentials,
    tls: options.tls ?? {},
    ...(options.timeoutMs !== undefined ? { timeoutMs: options.timeoutMs } : {}),
  };
  // Checks the TLS options against the host now, before anything is sent.
  if (session.tls.allowSelfSignedOnLoopback && !endpoint.loopback) {
    throw new UsageError(`a self-signed certificate is accepted only from a test server on this machine (127.0.0.1, ::1, localhost), not from ${endpoint.display}`);
  }
  return { session, retryDelays };
}

function processIsAlive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch (error) {
    return (error as NodeJS.ErrnoException).code === 'EPERM';
  }
}

/** Takes RUN/mail/send.lock; a lock whose process is gone (a crash) is taken over. Returns its release. */
async function takeSendLock(mailDir: string): Promise<() => Promise<void>> {
  const file = path.join(mailDir, LOCK_FILE);
  await mkdir(mailDir, { recursive: true });
  for (let tries = 0; tries < 2; tries++) {
    try {
      const handle = await open(file, 'wx');
      await handle.writeFile(`${process.pid}\n`);
      await handle.sync();
      await handle.close();
      return async () => { await rm(file, { force: true }); };
    } catch (error) {
      if ((error as NodeJS.ErrnoException).code !== 'EEXIST') throw error;
      const pid = Number((await readFile(file, 'utf8').catch(() => '')).trim());
      if (Number.isInteger(pid) && pid > 0 && processIsAlive(pid)) {
        throw new MailError(`another \`quarterline mail --send\` (process ${pid}) is sending this run's messages; wait for it to finish (the lock is ${file})`);
      }
      await rm(file, { force: true });
    }
  }
  throw new MailError(`the send lock ${file} could not be taken; remove it if no other \`quarterline mail --send\` is running`);
}

/** Spaces transaction starts at least 1/rate seconds apart. */
function rateLimiter(ratePerSecond: number, sleep: (milliseconds: number) => Promise<void>, now: () => number): () => Promise<void> {
  const interval = 1000 / ratePerSecond;
  let lastStart = -Infinity;
  return async () => {
    const wait = lastStart + interval - now();
    if (wait > 0) await sleep(wait);
    lastStart = now();
  };
}

type MessageResult =
  | { readonly kind: 'sent'; readonly entry: SentEntry }
  | { readonly kind: 'failed'; readonly entry: FailedEntry }
  | { readonly kind: 'unknown'; readonly entry: UnknownEntry }
  /** A failure that would repeat for every message: stop. */
  | { readonly kind: 'stop'; readonly entry: FailedEntry; readonly reason: string };

interface Delivery {
  readonly ledger: LedgerWriter;
  readonly sessionOptions: SmtpSessionOptions;
  readonly retryDelays: readonly number[];
  readonly sleep: (milliseconds: number) => Promise<void>;
  readonly nextStart: () => Promise<void>;
  readonly log: (line: string) => void;
  readonly secrets: readonly string[];
  /** The envelope sender (MAIL FROM). */
  readonly sender: string;
  session: SmtpSession | null;
}

function eventOf(message: PreparedMessage, status: LedgerEvent['status'], attempt: number, reply: string | null, reason?: string): LedgerEvent {
  return {
    time: new Date().toISOString(),
    status,
    account: message.account,
    address: message.address,
    message_id: message.messageId,
    attachment_sha256: message.attachmentSha256,
    attempt,
    reply,
    ...(reason !== undefined ? { reason } : {}),
  };
}

function failureText(failure: SmtpFailure): string {
  return failure.reply && !failure.reason.includes(failure.reply) ? `${failure.reason} (${failure.reply})` : failure.reason;
}

/** One message, with retries; every step on the ledger before the next. */
async function deliverOne(message: PreparedMessage, bytes: Uint8Array, delivery: Delivery): Promise<MessageResult> {
  const attempts = delivery.retryDelays.length + 1;
  let lastFailure: SmtpFailure | null = null;
  for (let attempt = 1; attempt <= attempts; attempt++) {
    if (attempt > 1) await delivery.sleep(delivery.retryDelays[attempt - 2]!);
    if (!delivery.session || !delivery.session.usable()) {
      delivery.session = null;
      try {
        delivery.session = await openSession(delivery.sessionOptions);
      } catch (error) {
        if (!(error instanceof SmtpConnectError)) throw error;
        lastFailure = error.failure;
        // A refused greeting or login, or a TLS failure, would be the same on every try.
        if (error.failure.kind !== 'temporary') break;
        delivery.log(`could not connect for ${message.account} (attempt ${attempt} of ${attempts}): ${failureText(error.failure)}`);
        continue;
      }
    }
    const session = delivery.session;
    // The rate counts transaction starts, measured after any connection set-up.
    await delivery.nextStart();
    await delivery.ledger.append(eventOf(message, 'attempt', attempt, null));
    const outcome = await session.transact({ from: delivery.sender, to: message.address }, bytes, () => delivery.ledger.append(eventOf(message, 'committing', attempt, null)))
      .catch(async (error: unknown) => {
        delivery.session = null;
        throw new MailError(`the ledger could not be written while ${message.account} was being sent, so the message was not completed and the run stopped: ${error instanceof Error ? error.message : String(error)}`, { cause: error });
      });
    if (outcome.delivered) {
      await delivery.ledger.append(eventOf(message, 'sent', attempt, outcome.reply));
      delivery.log(`sent ${message.account} to ${message.address}: ${outcome.reply}`);
      return { kind: 'sent', entry: { account: message.account, address: message.address, messageId: message.messageId, reply: outcome.reply, attempts: attempt } };
    }
    const failure = outcome.failure;
    lastFailure = failure;
    if (failure.kind === 'ambiguous') {
      await delivery.ledger.append(eventOf(message, 'unknown', attempt, failure.reply, failure.reason));
      delivery.log(`unknown ${message.account}: ${failureText(failure)}`);
      return { kind: 'unknown', entry: { account: message.account, address: message.address, messageId: message.messageId, since: new Date().toISOString(), reason: failure.reason } };
    }
    if (failure.kind === 'temporary' && attempt < attempts) {
      await delivery.ledger.append(eventOf(message, 'deferred', attempt, failure.reply, failure.reason));
      delivery.log(`deferred ${message.account} (attempt ${attempt} of ${attempts}, next in ${delivery.retryDelays[attempt - 1]} ms): ${failureText(failure)}`);
      continue;
    }
    const reason = failure.kind === 'temporary' ? `temporary failure, gave up after ${attempts} attempts: ${failureText(failure)}` : failureText(failure);
    await delivery.ledger.append(eventOf(message, 'failed', attempt, failure.reply, reason));
    delivery.log(`failed ${message.account}: ${reason}`);
    const entry = { account: message.account, address: message.address, reason };
    return failure.kind === 'fatal' ? { kind: 'stop', entry, reason } : { kind: 'failed', entry };
  }
  // Only connection failures reach this point: nothing of this message reached the server.
  const failure = lastFailure!;
  const reason = failure.kind !== 'temporary'
    ? failureText(failure)
    : `the server ${delivery.sessionOptions.endpoint.display} could not be reached after ${attempts} attempts: ${failureText(failure)}`;
  return { kind: 'stop', entry: { account: message.account, address: message.address, reason }, reason };
}

/**
 * Delivers the prepared messages (see the top of this module). Throws
 * UsageError for bad options and MailError when the run cannot start or
 * the ledger cannot be written; everything else is in the summary.
 */
export async function sendMail(prepared: PreparedRun, options: SendOptions): Promise<MailSummary> {
  const { session: sessionOptions, retryDelays } = checkOptions(prepared, options);
  const secrets = secretsOf(sessionOptions.credentials);
  const sleep = options.sleep ?? realSleep;
  const log = (line: string): void => options.log?.(redact(line, secrets));
  const resend = new Set(options.resend);
  const base = summaryOfPrepared(prepared);

  const ledgerFile = path.join(prepared.mailDir, LEDGER_FILE);
  const releaseLock = await takeSendLock(prepared.mailDir);
  const sent: SentEntry[] = [];
  const skipped: SkippedEntry[] = [];
  const unknown: UnknownEntry[] = [];
  const failed: FailedEntry[] = [];
  let stopped: string | null = null;
  try {
    const contents = await readLedger(ledgerFile);
    const states = deliveryStates(contents.events);
    const queue: PreparedMessage[] = [];
    for (const message of prepared.messages) {
      const state = states.get(message.account);
      if (resend.has(message.account) || !state || state.state === 'not-delivered') {
        queue.push(message);
      } else if (state.state === 'sent') {
        const changed = state.last.attachment_sha256 !== message.attachmentSha256 || state.last.address !== message.address;
        skipped.push({
          account: message.account,
          address: state.last.address,
          sentAt: state.last.time,
          messageId: state.last.message_id,
          note: changed ? 'the statement or address has changed since; use --resend to send the current message' : null,
        });
      } else {
        unknown.push({
          account: message.account,
          address: state.last.address,
          messageId: state.last.message_id,
          since: state.last.time,
          reason: 'an earlier send stopped after the message went to the server and before its reply',
        });
      }
    }
    if (queue.length > 0) {
      const ledger = await openLedger(ledgerFile, contents);
      const delivery: Delivery = {
        ledger, sessionOptions, retryDelays, sleep, log, secrets, sender: prepared.sender,
        nextStart: rateLimiter(options.ratePerSecond, sleep, options.now ?? (() => performance.now())),
        session: null,
      };
      try {
        for (const [index, message] of queue.entries()) {
          const bytes = await readFile(message.emlPath).catch((error: unknown) => {
            throw new MailError(`${message.emlPath} cannot be read (${(error as NodeJS.ErrnoException).code ?? String(error)}); it was prepared moments ago: was the run folder changed meanwhile? Nothing more was sent`, { cause: error });
          });
          const result = await deliverOne(message, bytes, delivery);
          if (result.kind === 'sent') sent.push(result.entry);
          else if (result.kind === 'unknown') unknown.push(result.entry);
          else failed.push(result.entry);
          if (result.kind === 'stop') {
            stopped = result.reason;
            for (const rest of queue.slice(index + 1)) {
              failed.push({ account: rest.account, address: rest.address, reason: `not tried: the run stopped (${result.reason})` });
            }
            break;
          }
        }
      } finally {
        delivery.session?.close();
        await ledger.close();
      }
    }
  } finally {
    await releaseLock();
  }
  return {
    ...base,
    sendRequested: true,
    server: sessionOptions.endpoint.display,
    sent,
    skipped,
    unknown,
    failed: [...base.failed, ...failed],
    stopped,
  };
}

/**
 * The delivery ledger RUN/mail/sent.jsonl: append-only, one JSON object a
 * line, each line forced to disk (fsync) before the step it records is taken
 * further. It is the only memory of what left the machine.
 *
 * One delivery attempt writes, in order:
 * - `attempt`    before the SMTP transaction starts (MAIL FROM);
 * - `committing` after the whole message has gone to the server and before
 *   the end-of-data marker (CRLF . CRLF) is released: until that marker
 *   arrives, an SMTP server must not deliver the message (RFC 5321, section
 *   3.8: a connection closed early cancels the pending transaction as RSET
 *   would), so a crash before this line cannot have delivered anything;
 * - then exactly one of `sent` (2xx reply to the end of data), `deferred`
 *   (4xx or a lost connection before the end of data: retried), `failed`
 *   (5xx, or the retries ran out) or `unknown` (the connection was lost after
 *   the end-of-data marker, before a reply).
 *
 * Reading it back, an account is
 * - `sent` when any `sent` line names it;
 * - `unknown` when its last attempt reached `committing` (or `unknown`)
 *   without a reply: the server may or may not have taken the message, so it
 *   is never sent again automatically (docs/mail.md explains why);
 * - otherwise not delivered, and a rerun sends it.
 */
import { open, readFile, type FileHandle } from 'node:fs/promises';
import path from 'node:path';
import { z } from 'zod';
import { MailError } from './errors.ts';

export const LEDGER_FILE = 'sent.jsonl';

export const LEDGER_STATUSES = ['attempt', 'committing', 'deferred', 'sent', 'failed', 'unknown'] as const;
export type LedgerStatus = (typeof LEDGER_STATUSES)[number];

const ledgerEventSchema = z.object({
  time: z.string(),
  status: z.enum(LEDGER_STATUSES),
  account: z.string().min(1),
  address: z.string(),
  message_id: z.string(),
  attachment_sha256: z.string().regex(/^[0-9a-f]{64}$/),
  /** 1-based attempt within one `mail --send`. */
  attempt: z.number().int().positive(),
  /** The server's reply (one line, passwords removed), or null when there was none. */
  reply: z.string().nullable(),
  reason: z.string().optional(),
});

export type LedgerEvent = z.output<typeof ledgerEventSchema>;

/** What the ledger says about one account. */
export type DeliveryState =
  | { readonly state: 'sent'; readonly last: LedgerEvent }
  | { readonly state: 'unknown'; readonly last: LedgerEvent }
  | { readonly state: 'not-delivered'; readonly last: LedgerEvent | null };

export interface LedgerContents {
  readonly events: readonly LedgerEvent[];
  /** A last line cut short by a crash while it was written; it is ignored (see `readLedger`). */
  readonly tornLastLine: boolean;
}

/**
 * Reads the ledger; a missing file is an empty ledger. A damaged line stops
 * the run (MailError naming the line), except a last line without its line
 * end that does not parse: that is a write cut short by a crash, and
 * ignoring it is safe, because every line is on disk before the step it
 * records goes further (a torn `committing` means the end of data was never
 * sent; a torn `sent` leaves the account `unknown`, never resent).
 */
export async function readLedger(file: string): Promise<LedgerContents> {
  let text: string;
  try {
    const handle = await open(file, 'r');
    try {
      text = await handle.readFile('utf8');
    } finally {
      await handle.close();
    }
  } catch (error) {
    if ((error as NodeJS.ErrnoException).code === 'ENOENT') return { events: [], tornLastLine: false };
    throw new MailError(`the ledger ${file} cannot be read (${(error as NodeJS.ErrnoException).code ?? String(error)}); nothing was sent`, { cause: error });
  }
  const lines = text.split('\n');
  const endsWithLineEnd = text.endsWith('\n');
  if (endsWithLineEnd) lines.pop();
  const events: LedgerEvent[] = [];
  let tornLastLine = false;
  for (const [index, line] of lines.entries()) {
    if (line.trim() === '') continue;
    const isLast = index === lines.length - 1;
    let parsed: unknown;
    try {
      parsed = JSON.parse(line);
    } catch {
      parsed = undefined;
    }
    const result = ledgerEventSchema.safeParse(parsed);
    if (result.success) {
      events.push(result.data);
    } else if (isLast && !endsWithLineEnd) {
      tornLastLine = true;
    } else {
      throw new MailError(`${file}:${index + 1}: found a line that is not a ledger entry, expected one JSON object with time, status, account, address, message_id, attachment_sha256, attempt and reply; `
        + 'the ledger is damaged, so nothing was sent: restore it from a backup or repair that line by hand');
    }
  }
  return { events, tornLastLine };
}

/** Folds the ledger into one state per account (see the top of this module). */
export function deliveryStates(events: readonly LedgerEvent[]): ReadonlyMap<string, DeliveryState> {
  const lastSent = new Map<string, LedgerEvent>();
  const last = new Map<string, LedgerEvent>();
  for (const event of events) {
    last.set(event.account, event);
    if (event.status === 'sent') lastSent.set(event.account, event);
  }
  const states = new Map<string, DeliveryState>();
  for (const [account, event] of last) {
    const sent = lastSent.get(account);
    if (sent) states.set(account, { state: 'sent', last: sent });
    else if (event.status === 'committing' || event.status === 'unknown') states.set(account, { state: 'unknown', last: event });
    else states.set(account, { state: 'not-delivered', last: event });
  }
  return states;
}

/** Appends events to the ledger, each on disk before `append` resolves. */
export interface LedgerWriter {
  append(event: LedgerEvent): Promise<void>;
  close(): Promise<void>;
}

async function writeAll(handle: FileHandle, bytes: Buffer): Promise<void> {
  let offset = 0;
  while (offset < bytes.length) {
    const { bytesWritten } = await handle.write(bytes, offset, bytes.length - offset);
    offset += bytesWritten;
  }
}

/**
 * Opens the ledger for appending (flag 'a': every write goes to the end).
 * When the file is new, its folder is synced too, so the file itself
 * survives a crash. A torn last line (see `readLedger`) was never a whole
 * record: it is cut off first, the only change ever made to earlier bytes,
 * so the ledger stays a sequence of whole lines.
 */
export async function openLedger(file: string, contents: LedgerContents): Promise<LedgerWriter> {
  const handle = await open(file, 'a');
  let needsLineEnd = false;
  try {
    const { size } = await handle.stat();
    if (size === 0) {
      const folder = await open(path.dirname(file), 'r');
      try {
        await folder.sync();
      } finally {
        await folder.close();
      }
    } else {
      const bytes = await readFile(file);
      const wholeLines = bytes.lastIndexOf(0x0a) + 1;
      if (contents.tornLastLine) {
        await handle.truncate(wholeLines);
        await handle.sync();
      } else {
        needsLineEnd = wholeLines !== bytes.length;
      }
    }
  } catch (error) {
    await handle.close();
    throw error;
  }
  return {
    async append(event) {
      const line = `${needsLineEnd ? '\n' : ''}${JSON.stringify(ledgerEventSchema.parse(event))}\n`;
      needsLineEnd = false;
      await writeAll(handle, Buffer.from(line, 'utf8'));
      await handle.sync();
    },
    async close() {
      await handle.close();
    },
  };
}

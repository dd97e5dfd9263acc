/**
 * The end of a mail run in words: what was prepared, sent, skipped, held
 * back and why, what failed and why, which accounts have no address.
 */
import path from 'node:path';
import type { AccountProblem, PreparedMessage, PreparedRun } from './prepare.ts';

export interface SentEntry {
  readonly account: string;
  readonly address: string;
  readonly messageId: string;
  /** The server's reply to the end of data. */
  readonly reply: string;
  readonly attempts: number;
}

export interface SkippedEntry {
  readonly account: string;
  readonly address: string;
  /** When the ledger recorded it as sent. */
  readonly sentAt: string;
  readonly messageId: string;
  /** Set when the prepared message differs from the one sent (new statement or address). */
  readonly note: string | null;
}

export interface UnknownEntry {
  readonly account: string;
  readonly address: string;
  readonly messageId: string;
  readonly since: string;
  readonly reason: string;
}

export interface FailedEntry {
  readonly account: string;
  /** Null when the message could not even be prepared. */
  readonly address: string | null;
  readonly reason: string;
}

export interface MailSummary {
  readonly period: string;
  readonly runDir: string;
  readonly mailDir: string;
  /** False for a run that only prepared the messages. */
  readonly sendRequested: boolean;
  /** `smtp://host:port` when sending. */
  readonly server: string | null;
  readonly prepared: readonly PreparedMessage[];
  readonly withoutAddress: ReadonlyArray<{ readonly account: string; readonly client: string }>;
  readonly notReported: readonly string[];
  readonly sent: readonly SentEntry[];
  readonly skipped: readonly SkippedEntry[];
  readonly unknown: readonly UnknownEntry[];
  /** Messages that could not be prepared, then deliveries that failed. */
  readonly failed: readonly FailedEntry[];
  /** Why sending stopped before the end, or null. */
  readonly stopped: string | null;
}

function problemEntry(problem: AccountProblem): FailedEntry {
  return { account: problem.account, address: null, reason: problem.reason };
}

/** The summary of a run that prepares only (no --send). */
export function summaryOfPrepared(prepared: PreparedRun): MailSummary {
  return {
    period: prepared.period,
    runDir: prepared.runDir,
    mailDir: prepared.mailDir,
    sendRequested: false,
    server: null,
    prepared: prepared.messages,
    withoutAddress: prepared.withoutAddress,
    notReported: prepared.notReported,
    sent: [],
    skipped: [],
    unknown: [],
    failed: prepared.problems.map(problemEntry),
    stopped: null,
  };
}

/** 1 when a message failed or its fate is unknown, else 0 (accounts without an address do not count). */
export function mailExitCode(summary: MailSummary): 0 | 1 {
  return summary.failed.length > 0 || summary.unknown.length > 0 ? 1 : 0;
}

function plural(count: number, one: string, many = `${one}s`): string {
  return `${count} ${count === 1 ? one : many}`;
}

function relative(file: string): string {
  const shown = path.relative(process.cwd(), file);
  return shown === '' || shown.startsWith('..') ? file : shown;
}

/** The closing report, several lines, ending in one summary line. */
export function formatMailSummary(summary: MailSummary): string {
  const lines: string[] = [];
  const fromArchive = summary.prepared.filter((message) => message.attachmentSource === 'archive').length;
  const fromRun = summary.prepared.filter((message) => message.attachmentSource === 'run');
  lines.push(`Mail for ${summary.period}: ${plural(summary.prepared.length, 'message')} prepared in ${relative(summary.mailDir)}`
    + (summary.prepared.length > 0 ? ` (${fromArchive} with the signed statement from the archive, ${fromRun.length} with the run's unsigned PDF)` : ''));
  if (fromRun.length > 0) {
    lines.push(`  unsigned PDF attached (no signed statement in the archive): ${fromRun.map((message) => message.account).join(', ')}`);
  }
  if (summary.withoutAddress.length > 0) {
    lines.push(`  no e-mail address in accounts.csv (${summary.withoutAddress.length}; send these by other means):`);
    for (const entry of summary.withoutAddress) lines.push(`    ${entry.account}  ${entry.client}`);
  }
  if (summary.notReported.length > 0) {
    lines.push(`  not reported in the run, so no statement to send (${summary.notReported.length}): ${summary.notReported.join(', ')}`);
  }
  if (summary.sendRequested) {
    lines.push(`  sent via ${summary.server ?? 'the server'}: ${summary.sent.length}`);
    for (const entry of summary.sent) {
      lines.push(`    ${entry.account}  ${entry.address}${entry.attempts > 1 ? ` (after ${entry.attempts} attempts)` : ''}  ${entry.reply}`);
    }
    if (summary.skipped.length > 0) {
      lines.push(`  skipped, already sent (${summary.skipped.length}; --resend ID sends one again):`);
      for (const entry of summary.skipped) {
        lines.push(`    ${entry.account}  ${entry.address}  sent ${entry.sentAt}${entry.note ? `; ${entry.note}` : ''}`);
      }
    }
  }
  if (summary.unknown.length > 0) {
    lines.push(`  unknown, not sent again (${summary.unknown.length}): check the server's log for the Message-ID; if the message did not arrive, send it with --resend ID`);
    for (const entry of summary.unknown) lines.push(`    ${entry.account}  ${entry.address}  ${entry.messageId}  since ${entry.since}: ${entry.reason}`);
  }
  if (summary.failed.length > 0) {
    lines.push(`  failed (${summary.failed.length}):`);
    for (const entry of summary.failed) lines.push(`    ${entry.account}${entry.address ? `  ${entry.address}` : ''}: ${entry.reason}`);
  }
  if (summary.stopped) lines.push(`  sending stopped early: ${summary.stopped}`);

  const pending = summary.prepared.length - summary.skipped.length - summary.unknown.length;
  if (summary.prepared.length === 0) {
    lines.push(summary.withoutAddress.length > 0 || summary.failed.length > 0
      ? 'Nothing to send: no account of the run has a usable e-mail address and a statement.'
      : 'Nothing to send: the run has no reported account.');
  } else if (summary.sendRequested && pending === 0 && summary.failed.length === 0) {
    lines.push(summary.unknown.length > 0
      ? 'Nothing sent: every prepared message is either sent already or unknown (see above).'
      : 'Nothing to send: every prepared message is already in the ledger (use --resend ID to send one again).');
  } else if (!summary.sendRequested) {
    lines.push('Nothing was sent; add --send --smtp URL to deliver.');
  }
  lines.push([
    `prepared ${summary.prepared.length}`,
    ...(summary.sendRequested ? [`sent ${summary.sent.length}`, `skipped ${summary.skipped.length} (already sent)`] : []),
    ...(summary.unknown.length > 0 ? [`unknown ${summary.unknown.length}`] : []),
    `failed ${summary.failed.length}`,
    `without address ${summary.withoutAddress.length}`,
  ].join(', '));
  return `${lines.join('\n')}\n`;
}

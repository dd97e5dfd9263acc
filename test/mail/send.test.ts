/**
 * Delivery against a real SMTP server (smtp-server) on 127.0.0.1, login
 * required, STARTTLS offered: each message exactly once, its attachment the
 * archived (signed) statement, the ledger honoured on reruns, refusals and
 * retries, the rate limit, and no password in any output.
 */
import { readdir, readFile } from 'node:fs/promises';
import path from 'node:path';
import { simpleParser } from 'mailparser';
import { afterEach, describe, expect, it } from 'vitest';
import { formatMailSummary, mailExitCode, prepareMail, readLedger, sendMail, type SendOptions } from '../../src/mail/index.ts';
import {
  countByRecipient, type Fixture, type FixtureAccount, type ServerHooks, sha256Hex, SMTP_PASSWORD, SMTP_USER, startServer, type TestServer, writeFixture,
} from './fixture.ts';

const ACCOUNTS: readonly FixtureAccount[] = [
  { id: 'A-1001', client: 'Eleanor Whitcombe', email: 'eleanor@client.example', adviser: 'Tobias Renner' },
  { id: 'A-1002', client: 'Margarethe Öberg-Lind', email: 'margarethe@client.example' },
  // No signed statement in the archive: the run's PDF goes out, and the summary says so.
  { id: 'A-1003', client: "Declan O'Rourke", email: 'declan@client.example', archived: false },
  { id: 'A-1004', client: 'No Address Ltd', email: '' },
  { id: 'A-1005', client: 'Failed In Run', email: 'failed@client.example', status: 'failed' },
];
const WITH_ADDRESS = ['A-1001', 'A-1002', 'A-1003'];

let servers: TestServer[] = [];
afterEach(async () => {
  await Promise.all(servers.map((server) => server.close()));
  servers = [];
});

async function server(hooks: ServerHooks = {}): Promise<TestServer> {
  const started = await startServer(hooks);
  servers.push(started);
  return started;
}

function options(smtp: TestServer, extra: Partial<SendOptions> = {}): SendOptions {
  return {
    smtpUrl: smtp.url,
    user: SMTP_USER,
    password: SMTP_PASSWORD,
    ratePerSecond: 1000,
    resend: [],
    retryDelaysMs: [5, 10, 20],
    tls: { allowSelfSignedOnLoopback: true },
    ...extra,
  };
}

async function sendAll(fixture: Fixture, smtp: TestServer, extra: Partial<SendOptions> = {}) {
  const prepared = await prepareMail({ runDir: fixture.runDir, archiveDir: fixture.archiveDir, from: null });
  const log: string[] = [];
  const summary = await sendMail(prepared, options(smtp, { log: (line) => log.push(line), ...extra }));
  return { prepared, summary, log, text: formatMailSummary(summary) };
}

describe('mail --send', () => {
  it('delivers one valid MIME message per account with an address, attaching the archived PDF (else the run\'s)', async () => {
    const fixture = await writeFixture(ACCOUNTS);
    const smtp = await server();
    const { summary, text } = await sendAll(fixture, smtp);

    expect(summary.sent.map((entry) => entry.account)).toEqual(WITH_ADDRESS);
    expect(summary.failed).toEqual([]);
    expect(mailExitCode(summary)).toBe(0);
    expect(Object.fromEntries(countByRecipient(smtp.received))).toEqual({
      'eleanor@client.example': 1, 'margarethe@client.example': 1, 'declan@client.example': 1,
    });
    expect(smtp.received.every((message) => message.secure)).toBe(true); // STARTTLS was used
    expect(smtp.received.every((message) => message.from === 'statements@firm.example')).toBe(true);

    for (const message of smtp.received) {
      const parsed = await simpleParser(message.raw);
      const account = ACCOUNTS.find((a) => a.email === message.to[0])!;
      expect(parsed.subject).toBe('Your statement for 2026-Q3 (1 July 2026 to 30 September 2026)');
      expect(parsed.text).toContain(`Dear ${account.client},`);
      expect(parsed.text).toContain('Past performance is not a reliable guide to future results.');
      expect(parsed.text).toContain('not personal advice');
      expect(parsed.html).toContain('estimates from a model');
      expect(parsed.attachments).toHaveLength(1);
      const attachment = parsed.attachments[0]!;
      expect(attachment.contentType).toBe('application/pdf');
      expect(attachment.filename).toBe(`statement-2026-Q3-${account.id}.pdf`);
      expect(sha256Hex(attachment.content)).toBe(fixture.expectedSha256.get(account.id));
      // The message on the wire is the prepared .eml, byte for byte (less SMTP's dot-stuffing, which mailparser undoes).
      expect(sha256Hex(message.raw)).toBe(sha256Hex(await readFile(path.join(fixture.runDir, 'mail', `${account.id}.eml`))));
      expect(parsed.text!.includes('digital signature')).toBe(account.archived !== false);
    }

    expect(summary.prepared.find((m) => m.account === 'A-1003')?.attachmentSource).toBe('run');
    expect(text).toContain("unsigned PDF attached (no signed statement in the archive): A-1003");
    expect(text).toMatch(/no e-mail address in accounts\.csv \(1; send these by other means\):\n\s+A-1004\s+No Address Ltd/);
    expect(text).toContain('not reported in the run, so no statement to send (1): A-1005');
    expect(text).toContain('prepared 3, sent 3, skipped 0 (already sent), failed 0, without address 1');

    const ledger = await readLedger(path.join(fixture.runDir, 'mail', 'sent.jsonl'));
    expect(ledger.events.map((event) => `${event.account}:${event.status}`)).toEqual(
      WITH_ADDRESS.flatMap((id) => [`${id}:attempt`, `${id}:committing`, `${id}:sent`]),
    );
    const sentEvent = ledger.events.find((event) => event.account === 'A-1001' && event.status === 'sent')!;
    expect(sentEvent).toMatchObject({
      address: 'eleanor@client.example',
      attachment_sha256: fixture.expectedSha256.get('A-1001'),
      reply: expect.stringMatching(/^250 /),
    });
    expect(sentEvent.message_id).toBe((await simpleParser(smtp.received[0]!.raw)).messageId);
  });

  it('sends nothing on a rerun, and exactly one message with --resend ID', async () => {
    const fixture = await writeFixture(ACCOUNTS);
    const smtp = await server();
    await sendAll(fixture, smtp);
    expect(smtp.received).toHaveLength(3);

    const rerun = await sendAll(fixture, smtp);
    expect(smtp.received).toHaveLength(3);
    expect(rerun.summary.sent).toEqual([]);
    expect(rerun.summary.skipped.map((entry) => entry.account)).toEqual(WITH_ADDRESS);
    expect(rerun.text).toContain('Nothing to send: every prepared message is already in the ledger');
    expect(mailExitCode(rerun.summary)).toBe(0);

    const resend = await sendAll(fixture, smtp, { resend: ['A-1002'] });
    expect(smtp.received).toHaveLength(4);
    expect(smtp.received[3]!.to).toEqual(['margarethe@client.example']);
    expect(resend.summary.sent.map((entry) => entry.account)).toEqual(['A-1002']);
    expect(resend.summary.skipped.map((entry) => entry.account)).toEqual(['A-1001', 'A-1003']);
  });

  it('refuses --resend of an account with no prepared message, before sending anything', async () => {
    const fixture = await writeFixture(ACCOUNTS);
    const smtp = await server();
    await expect(sendAll(fixture, smtp, { resend: ['A-1004'] })).rejects.toThrow('--resend A-1004: no message is prepared for this account');
    expect(smtp.mailFromTimes).toHaveLength(0);
  });

  it('records a recipient refused with 5xx as failed, delivers the others, and exits 1', async () => {
    const fixture = await writeFixture(ACCOUNTS);
    const smtp = await server({
      onRcptTo: (address) => (address === 'margarethe@client.example' ? { code: 550, message: 'Mailbox unavailable' } : null),
    });
    const { summary, text } = await sendAll(fixture, smtp);

    expect(summary.sent.map((entry) => entry.account)).toEqual(['A-1001', 'A-1003']);
    expect(summary.failed).toHaveLength(1);
    expect(summary.failed[0]).toMatchObject({ account: 'A-1002', address: 'margarethe@client.example' });
    expect(summary.failed[0]!.reason).toContain('550 Mailbox unavailable');
    expect(mailExitCode(summary)).toBe(1);
    expect(text).toMatch(/failed \(1\):\n\s+A-1002\s+margarethe@client\.example: .*550 Mailbox unavailable/);
    // A permanent refusal is not retried.
    expect(smtp.mailFromTimes).toHaveLength(3);

    const ledger = await readLedger(path.join(fixture.runDir, 'mail', 'sent.jsonl'));
    const failed = ledger.events.filter((event) => event.account === 'A-1002');
    expect(failed.map((event) => event.status)).toEqual(['attempt', 'failed']);
    expect(failed[1]!.reply).toMatch(/^550 /);
  });

  it('retries a temporary refusal (4xx once) with back-off, then delivers', async () => {
    const fixture = await writeFixture(ACCOUNTS);
    let refusals = 0;
    const smtp = await server({
      onRcptTo: (address) => (address === 'eleanor@client.example' && refusals++ === 0 ? { code: 451, message: 'Try again later' } : null),
    });
    const sleeps: number[] = [];
    const { summary } = await sendAll(fixture, smtp, { sleep: async (ms) => { sleeps.push(ms); } });

    expect(summary.sent.map((entry) => [entry.account, entry.attempts])).toEqual([['A-1001', 2], ['A-1002', 1], ['A-1003', 1]]);
    expect(summary.failed).toEqual([]);
    expect(Object.fromEntries(countByRecipient(smtp.received))['eleanor@client.example']).toBe(1);
    expect(sleeps).toContain(5); // the first retry delay
    const ledger = await readLedger(path.join(fixture.runDir, 'mail', 'sent.jsonl'));
    expect(ledger.events.filter((event) => event.account === 'A-1001').map((event) => event.status))
      .toEqual(['attempt', 'deferred', 'attempt', 'committing', 'sent']);
  });

  it('gives up on a message after the last retry of a temporary refusal and goes on', async () => {
    const fixture = await writeFixture(ACCOUNTS);
    const smtp = await server({
      onMessage: (raw) => (raw.includes('eleanor@client.example') ? { code: 452, message: 'Insufficient storage' } : null),
    });
    const { summary } = await sendAll(fixture, smtp, { retryDelaysMs: [1, 2] });
    expect(summary.failed).toHaveLength(1);
    expect(summary.failed[0]!.reason).toMatch(/^temporary failure, gave up after 3 attempts: .*452 Insufficient storage/);
    expect(summary.sent.map((entry) => entry.account)).toEqual(['A-1002', 'A-1003']);
    // A rerun tries the failed message again (it was never delivered) and nothing else.
    const rerun = await sendAll(fixture, smtp, { retryDelaysMs: [1, 2] });
    expect(rerun.summary.skipped.map((entry) => entry.account)).toEqual(['A-1002', 'A-1003']);
    expect(rerun.summary.failed.map((entry) => entry.account)).toEqual(['A-1001']);
  });

  it('starts at most --rate transactions a second', async () => {
    const fixture = await writeFixture(ACCOUNTS);
    const smtp = await server();
    await sendAll(fixture, smtp, { ratePerSecond: 10 });
    expect(smtp.mailFromTimes).toHaveLength(3);
    // 10 a second = starts at least 100 ms apart at the sender, 200 ms from the first to the
    // third. Seen at the server, the first start can arrive late by the time the event loop
    // (shared with the sender) was busy, which shortens the span; on a loaded machine that
    // can be tens of milliseconds, so only 120 ms are required here. Without the limit the
    // span is under 10 ms. The exact waits are checked with a clock of the test's own below.
    expect(smtp.mailFromTimes[2]! - smtp.mailFromTimes[0]!).toBeGreaterThanOrEqual(120);
  });

  it('waits exactly 1/rate between transaction starts (a stopped clock of the test\'s own)', async () => {
    const fixture = await writeFixture(ACCOUNTS);
    const smtp = await server();
    const sleeps: number[] = [];
    let clock = 5_000;
    await sendAll(fixture, smtp, { ratePerSecond: 4, now: () => clock, sleep: async (ms) => { sleeps.push(ms); clock += ms; } });
    expect(smtp.received).toHaveLength(3);
    expect(sleeps).toEqual([250, 250]);
  });

  it('stops at a refused login without retrying, names no password, and sends nothing', async () => {
    const fixture = await writeFixture(ACCOUNTS);
    const smtp = await server();
    const wrongPassword = 'Wrong-pw-7Qx!';
    const { summary, text, log } = await sendAll(fixture, smtp, { password: wrongPassword });
    expect(smtp.received).toHaveLength(0);
    expect(smtp.authFailures).toBe(1);
    expect(summary.stopped).toContain('the server refused the login');
    expect(summary.failed.map((entry) => entry.account)).toEqual(['A-1001', 'A-1002', 'A-1003']);
    expect(mailExitCode(summary)).toBe(1);
    const everything = [text, ...log, await readFile(path.join(fixture.runDir, 'mail', 'sent.jsonl'), 'utf8').catch(() => '')].join('\n');
    expect(everything).not.toContain(wrongPassword);
    expect(everything).not.toContain(Buffer.from(wrongPassword).toString('base64'));
  });

  it('delivers over smtps:// (TLS from the start)', async () => {
    const fixture = await writeFixture(ACCOUNTS.slice(0, 1));
    const smtp = await server({ secure: true });
    const { summary } = await sendAll(fixture, smtp);
    expect(summary.sent).toHaveLength(1);
    expect(smtp.received[0]!.secure).toBe(true);
  });

  it('refuses a certificate it cannot verify (the test server\'s self-signed one) unless asked for explicitly, without retrying', async () => {
    const fixture = await writeFixture(ACCOUNTS.slice(0, 1));
    const smtp = await server();
    const { summary } = await sendAll(fixture, smtp, { tls: {} });
    expect(smtp.received).toHaveLength(0);
    expect(summary.stopped).toMatch(/^TLS failed: .*certificate/);
    expect(smtp.mailFromTimes).toHaveLength(0);
    expect(mailExitCode(summary)).toBe(1);
  });

  it('holds back a message whose reply never came (unknown), and --resend sends it once', async () => {
    const fixture = await writeFixture(ACCOUNTS);
    let held = false;
    const smtp = await server({
      // The first time A-1002's message is complete, the server drops the connection without a reply.
      onMessage: (raw) => {
        if (!held && raw.includes('margarethe@client.example')) {
          held = true;
          return 'drop';
        }
        return null;
      },
    });
    const prepared = await prepareMail({ runDir: fixture.runDir, archiveDir: fixture.archiveDir, from: null });
    const summary = await sendMail(prepared, options(smtp));
    expect(summary.sent.map((entry) => entry.account)).toEqual(['A-1001', 'A-1003']);
    expect(summary.unknown.map((entry) => entry.account)).toEqual(['A-1002']);
    expect(mailExitCode(summary)).toBe(1);

    const rerun = await sendAll(fixture, smtp);
    expect(rerun.summary.sent).toEqual([]);
    expect(rerun.summary.unknown.map((entry) => entry.account)).toEqual(['A-1002']);
    expect(rerun.text).toContain("unknown, not sent again (1): check the server's log for the Message-ID");

    const resend = await sendAll(fixture, smtp, { resend: ['A-1002'] });
    expect(resend.summary.sent.map((entry) => entry.account)).toEqual(['A-1002']);
    expect(Object.fromEntries(countByRecipient(smtp.received))).toEqual({
      'eleanor@client.example': 1, 'margarethe@client.example': 1, 'declan@client.example': 1,
    });
    expect(mailExitCode(resend.summary)).toBe(0);
  }, 20_000);

  it('says so when there is nothing to send', async () => {
    const fixture = await writeFixture([{ id: 'B-1', client: 'Nobody', email: '' }]);
    const smtp = await server();
    const { summary, text } = await sendAll(fixture, smtp);
    expect(summary.prepared).toEqual([]);
    expect(text).toContain('Nothing to send: no account of the run has a usable e-mail address and a statement.');
    expect(smtp.mailFromTimes).toHaveLength(0);
    expect(await readdir(path.join(fixture.runDir, 'mail')).catch(() => [])).not.toContain('sent.jsonl');
  });
});

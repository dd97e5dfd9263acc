/**
 * The ledger: how events fold into one state per account, a torn last line,
 * a damaged line, and appending after a torn line.
 */
import { mkdtemp, readFile, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { deliveryStates, openLedger, readLedger, type LedgerEvent, type LedgerStatus } from '../../src/mail/ledger.ts';

function event(account: string, status: LedgerStatus, attempt = 1): LedgerEvent {
  return {
    time: `2026-10-01T09:00:0${attempt}.000Z`,
    status,
    account,
    address: `${account.toLowerCase()}@client.example`,
    message_id: `<ql.${account}@firm.example>`,
    attachment_sha256: 'a'.repeat(64),
    attempt,
    reply: status === 'sent' ? '250 OK' : null,
  };
}

function statesOf(events: LedgerEvent[]): Record<string, string> {
  return Object.fromEntries([...deliveryStates(events)].map(([account, state]) => [account, state.state]));
}

describe('deliveryStates', () => {
  it('reads each attempt\'s last step: before the end of data → not delivered; after it without a reply → unknown; sent → sent', () => {
    expect(statesOf([
      event('A', 'attempt'), event('A', 'committing'), event('A', 'sent'),
      event('B', 'attempt'), // killed before the message was complete: nothing can have been delivered
      event('C', 'attempt'), event('C', 'committing'), // killed after the end of data, before the reply
      event('D', 'attempt'), event('D', 'deferred'), event('D', 'attempt', 2), event('D', 'failed', 2),
      event('E', 'attempt'), event('E', 'committing'), event('E', 'unknown'),
      event('F', 'attempt'), event('F', 'deferred'),
    ])).toEqual({ A: 'sent', B: 'not-delivered', C: 'unknown', D: 'not-delivered', E: 'unknown', F: 'not-delivered' });
  });

  it('keeps an account sent when a later --resend of it was cut off', () => {
    expect(statesOf([event('A', 'attempt'), event('A', 'committing'), event('A', 'sent'), event('A', 'attempt', 1), event('A', 'committing', 1)]))
      .toEqual({ A: 'sent' });
  });
});

describe('the ledger file', () => {
  it('ignores a torn last line, and cuts it off before the next event is appended', async () => {
    const file = path.join(await mkdtemp(path.join(tmpdir(), 'quarterline-ledger-')), 'sent.jsonl');
    const whole = `${JSON.stringify(event('A', 'attempt'))}\n`;
    await writeFile(file, `${whole}${JSON.stringify(event('A', 'committing')).slice(0, 40)}`);
    const contents = await readLedger(file);
    expect(contents.tornLastLine).toBe(true);
    expect(contents.events.map((e) => e.status)).toEqual(['attempt']);

    const writer = await openLedger(file, contents);
    await writer.append(event('B', 'attempt'));
    await writer.close();
    const text = await readFile(file, 'utf8');
    expect(text).toBe(`${whole}${JSON.stringify(event('B', 'attempt'))}\n`);
    expect((await readLedger(file)).events.map((e) => `${e.account}:${e.status}`)).toEqual(['A:attempt', 'B:attempt']);
  });

  it('refuses a damaged line that is not the last, naming file and line', async () => {
    const file = path.join(await mkdtemp(path.join(tmpdir(), 'quarterline-ledger-')), 'sent.jsonl');
    await writeFile(file, `${JSON.stringify(event('A', 'attempt'))}\nnot json\n${JSON.stringify(event('A', 'committing'))}\n`);
    await expect(readLedger(file)).rejects.toThrow(`${file}:2: found a line that is not a ledger entry`);
  });

  it('treats a missing file as an empty ledger', async () => {
    const file = path.join(await mkdtemp(path.join(tmpdir(), 'quarterline-ledger-')), 'sent.jsonl');
    expect(await readLedger(file)).toEqual({ events: [], tornLastLine: false });
  });
});

describe('appending', () => {
  it('ends a whole last line that lacks its line end before the next event', async () => {
    const file = path.join(await mkdtemp(path.join(tmpdir(), 'quarterline-ledger-')), 'sent.jsonl');
    await writeFile(file, JSON.stringify(event('A', 'sent')));
    const contents = await readLedger(file);
    expect(contents.tornLastLine).toBe(false);
    const writer = await openLedger(file, contents);
    await writer.append(event('B', 'attempt'));
    await writer.close();
    expect(await readFile(file, 'utf8')).toBe(`${JSON.stringify(event('A', 'sent'))}\n${JSON.stringify(event('B', 'attempt'))}\n`);
  });
});

/**
 * The prepared messages: valid MIME (read back with mailparser), book text
 * inert in the HTML part and encoded in the headers, a Message-ID that
 * depends on the content only, .eml files kept when unchanged.
 */
import { readFile, stat, writeFile } from 'node:fs/promises';
import path from 'node:path';
import { simpleParser } from 'mailparser';
import { describe, expect, it } from 'vitest';
import { headerName, isolatedText, singleLine } from '../../src/mail/compose.ts';
import { formatMailSummary, mailExitCode, prepareMail, summaryOfPrepared } from '../../src/mail/index.ts';
import { FIRM_YAML, sha256Hex, writeFixture } from './fixture.ts';

const RLO = '\u202E';
const HOSTILE_CLIENT = `<script>alert("x")</script> O'Brien & "Quoted" ${RLO}fdp.exe שלום\r\nBcc: thief@attacker.example`;
const HOSTILE_ADVISER = '<img src=x onerror=alert(1)> Mallory, <mallory@attacker.example>';

describe('prepared messages', () => {
  it('keep a hostile client name inert in the HTML part and encoded in the headers', async () => {
    const fixture = await writeFixture([{ id: 'H-1', client: HOSTILE_CLIENT, email: 'victim@client.example', adviser: HOSTILE_ADVISER }]);
    const prepared = await prepareMail({ runDir: fixture.runDir, archiveDir: fixture.archiveDir, from: null });
    const raw = await readFile(prepared.messages[0]!.emlPath);
    const headerBlock = raw.subarray(0, raw.indexOf('\r\n\r\n')).toString('latin1');

    // Headers: 7-bit only, no raw markup, no injected header or recipient.
    expect(headerBlock).toMatch(/^[\x20-\x7e\r\n\t]*$/);
    expect(headerBlock).not.toContain('<script>');
    expect(headerBlock).not.toMatch(/^Bcc:/im);
    const parsed = await simpleParser(raw);
    expect(parsed.headers.has('bcc')).toBe(false);
    const to = Array.isArray(parsed.to) ? parsed.to : [parsed.to!];
    expect(to.flatMap((group) => group.value.map((mailbox) => mailbox.address))).toEqual(['victim@client.example']);
    // The display name decodes to the client's name on one line, without the direction override.
    expect(to[0]!.value[0]!.name).toBe(`<script>alert("x")</script> O'Brien & "Quoted" fdp.exe שלום Bcc: thief@attacker.example`);

    // HTML: escaped, isolated, no element from the book.
    const html = parsed.html as string;
    expect(html).not.toContain('<script');
    expect(html).not.toContain('<img');
    expect(html).toContain(`<bdi>&lt;script&gt;alert(&quot;x&quot;)&lt;/script&gt; O&#39;Brien &amp; &quot;Quoted&quot; ${RLO}fdp.exe שלום Bcc: thief@attacker.example</bdi>`);
    expect(html).toContain('<bdi>&lt;img src=x onerror=alert(1)&gt; Mallory, &lt;mallory@attacker.example&gt;</bdi>');
    // Every direction override sits inside a <bdi> element.
    for (const match of html.matchAll(new RegExp(RLO, 'g'))) {
      const before = html.slice(0, match.index);
      expect(before.lastIndexOf('<bdi>')).toBeGreaterThan(before.lastIndexOf('</bdi>'));
    }

    // Text: the name as written, on one line, wrapped in isolates (FSI … PDI) because of the override.
    expect(parsed.text).toContain(`Dear \u2068<script>alert("x")</script> O'Brien & "Quoted" ${RLO}fdp.exe שלום Bcc: thief@attacker.example\u2069,`);
    expect(parsed.attachments.map((attachment) => sha256Hex(attachment.content))).toEqual([fixture.expectedSha256.get('H-1')]);
  });

  it('derive the Message-ID from the content, and keep an unchanged .eml as it is', async () => {
    const fixture = await writeFixture([{ id: 'M-1', client: 'Ada Example', email: 'ada@client.example' }]);
    const first = await prepareMail({ runDir: fixture.runDir, archiveDir: fixture.archiveDir, from: null, now: () => new Date('2026-10-01T09:00:00Z') });
    const file = first.messages[0]!.emlPath;
    const firstBytes = await readFile(file);
    const firstTime = (await stat(file)).mtimeMs;
    const second = await prepareMail({ runDir: fixture.runDir, archiveDir: fixture.archiveDir, from: null, now: () => new Date('2026-10-02T09:00:00Z') });
    expect(second.messages[0]!.messageId).toBe(first.messages[0]!.messageId);
    expect(second.messages[0]!.kept).toBe(true);
    expect(await readFile(file)).toEqual(firstBytes);
    expect((await stat(file)).mtimeMs).toBe(firstTime);

    // A new statement (re-signed) gives a new Message-ID and a new file.
    await writeFile(path.join(fixture.archiveDir, '2026-Q3', 'M-1', 'statement.pdf'), Buffer.concat([await readFile(path.join(fixture.archiveDir, '2026-Q3', 'M-1', 'statement.pdf')), Buffer.from('\n% re-signed\n')]));
    const third = await prepareMail({ runDir: fixture.runDir, archiveDir: fixture.archiveDir, from: null });
    expect(third.messages[0]!.messageId).not.toBe(first.messages[0]!.messageId);
    expect(third.messages[0]!.kept).toBe(false);
    expect((await simpleParser(await readFile(file))).messageId).toBe(third.messages[0]!.messageId);
  });

  it('take the sender from --from over book.yaml, and refuse a run without one', async () => {
    const fixture = await writeFixture([{ id: 'S-1', client: 'Ada Example', email: 'ada@client.example' }]);
    const prepared = await prepareMail({ runDir: fixture.runDir, archiveDir: fixture.archiveDir, from: 'reports@other.example' });
    const parsed = await simpleParser(await readFile(prepared.messages[0]!.emlPath));
    expect(parsed.from?.value[0]).toEqual({ name: 'Test Firm & Partners', address: 'reports@other.example' });
    expect(prepared.messages[0]!.messageId).toMatch(/@other\.example>$/);
    // Contact details in the body stay the firm's.
    expect(parsed.text).toContain('You can reach us at statements@firm.example or by telephone on +44 20 7946 0000.');

    await expect(prepareMail({ runDir: fixture.runDir, archiveDir: fixture.archiveDir, from: 'not an address' }))
      .rejects.toThrow('the sender address (--from) is not usable: the address has no "@"');
    const noFirmEmail = await writeFixture([{ id: 'S-2', client: 'Ada Example', email: 'ada@client.example' }], {
      bookYaml: FIRM_YAML.replace('  email: statements@firm.example\n', ''),
    });
    await expect(prepareMail({ runDir: noFirmEmail.runDir, archiveDir: noFirmEmail.archiveDir, from: null }))
      .rejects.toThrow('there is no sender address: book.yaml has no firm.email; set it there or give --from ADDR');
  });

  it('list invalid addresses and missing statements as failed, accounts without an address apart, before anything is sent', async () => {
    const fixture = await writeFixture([
      { id: 'V-1', client: 'Good', email: 'good@client.example' },
      { id: 'V-2', client: 'Two Addresses', email: 'a@client.example, b@client.example' },
      { id: 'V-3', client: 'Display Name', email: 'Eve <eve@client.example>' },
      { id: 'V-4', client: 'No Pdf', email: 'nopdf@client.example', runPdf: false, archived: false },
      { id: 'V-5', client: 'Nobody', email: '   ' },
    ]);
    const prepared = await prepareMail({ runDir: fixture.runDir, archiveDir: fixture.archiveDir, from: null });
    expect(prepared.messages.map((message) => message.account)).toEqual(['V-1']);
    expect(prepared.withoutAddress).toEqual([{ account: 'V-5', client: 'Nobody' }]);
    expect(prepared.problems).toEqual([
      { account: 'V-2', reason: 'accounts.csv:3 [email]: the part before the "@" is not a plain name (only letters, digits and !#$%&\'*+/=?^_`{|}~- in parts joined by single dots; no spaces, quotes, commas or angle brackets); correct the address' },
      { account: 'V-3', reason: expect.stringMatching(/^accounts\.csv:4 \[email\]: the part before the "@" is not a plain name/) },
      { account: 'V-4', reason: expect.stringMatching(/^there is no statement PDF: neither .*V-4.statement\.pdf nor .*V-4.statement\.pdf exists \(was the run built with --no-pdf\?\)$/) },
    ]);
    const summary = summaryOfPrepared(prepared);
    expect(mailExitCode(summary)).toBe(1);
    const text = formatMailSummary(summary);
    expect(text).toContain('failed (3):');
    expect(text).toContain('Nothing was sent; add --send --smtp URL to deliver.');
    expect(text).toContain('prepared 1, failed 3, without address 1');
  });
});

describe('untrusted text helpers', () => {
  it('put text on one line, strip direction controls from header names, isolate right-to-left text', () => {
    expect(singleLine(' a\r\nb\t\u0000c \u0085 d ')).toBe('a b c d');
    expect(headerName(`x${RLO}y\u2066z\u200F`)).toBe('xyz');
    expect(isolatedText('Plain Name')).toBe('Plain Name');
    expect(isolatedText('שלום')).toBe('\u2068שלום\u2069');
    expect(isolatedText(`a${RLO}b`)).toBe(`\u2068a${RLO}b\u2069`);
  });
});

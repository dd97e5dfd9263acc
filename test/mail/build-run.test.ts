/**
 * Mail reads what `quarterline build` really writes: a run folder built
 * from a tiny book (without PDFs), a statement.pdf added by hand, then
 * prepared; the message names the period of the run's figures.json.
 */
import { writeFile } from 'node:fs/promises';
import { mkdtemp, readFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { simpleParser } from 'mailparser';
import { PDFDocument } from 'pdf-lib';
import { describe, expect, it } from 'vitest';
import { main } from '../../src/cli.ts';
import { prepareMail } from '../../src/mail/index.ts';
import { silentProgress } from '../../src/run/progress.ts';
import { writeBook } from '../helpers/write-book.ts';
import { FIRM_YAML, sha256Hex } from './fixture.ts';

const BOOK = {
  'book.yaml': FIRM_YAML,
  'accounts.csv': 'account,client,mandate,base_currency,adviser,email\nGOOD,Ada Example,growth,EUR,Tobias Renner,ada@client.example\nQUIET,Quiet Client,growth,EUR,,\n',
  'instruments.csv': 'instrument,name,asset_class,currency,kind,multiplier,proxy\nS,Test Share,equity,EUR,security,,\nIDX,Test Equity Index,equity,EUR,index,,\nCIX,Test Cash Index,cash,EUR,index,,\n',
  'prices.csv': 'date,instrument,price\n2026-06-30,S,100\n2026-09-30,S,110\n2026-06-30,IDX,100\n2026-09-30,IDX,104\n2026-06-30,CIX,100\n2026-09-30,CIX,100.5\n',
  'transactions.csv': 'account,date,type,instrument,quantity,price,fees,amount,currency,note\nGOOD,2026-07-01,deposit,,,,,1000,,\nGOOD,2026-07-01,buy,S,5,100,0,,,\nQUIET,2026-07-01,deposit,,,,,500,,\n',
};

describe('mail on a run written by quarterline build', () => {
  it('prepares the message from run.json, figures.json and the book', async () => {
    const bookDir = await writeBook(BOOK);
    const out = await mkdtemp(path.join(tmpdir(), 'quarterline-out-'));
    const code = await main(['build', bookDir, '--period', '2026-Q3', '--out', out, '--no-pdf'], { out: () => {}, err: () => {}, progress: () => silentProgress });
    expect(code).toBe(0);
    const runDir = path.join(out, '2026-Q3');
    const pdf = await (await PDFDocument.create()).save();
    await writeFile(path.join(runDir, 'accounts', 'GOOD', 'statement.pdf'), pdf);
    await writeFile(path.join(runDir, 'accounts', 'QUIET', 'statement.pdf'), pdf);

    const prepared = await prepareMail({ runDir, archiveDir: path.join(out, 'no-archive'), from: null });
    expect(prepared.messages.map((message) => [message.account, message.address, message.attachmentSource])).toEqual([['GOOD', 'ada@client.example', 'run']]);
    expect(prepared.withoutAddress).toEqual([{ account: 'QUIET', client: 'Quiet Client' }]);
    expect(prepared.sender).toBe('statements@firm.example');
    const parsed = await simpleParser(await readFile(prepared.messages[0]!.emlPath));
    expect(parsed.subject).toBe('Your statement for 2026-Q3 (1 July 2026 to 30 September 2026)');
    expect(parsed.text).toContain('your adviser, Tobias Renner, will be glad');
    expect(sha256Hex(parsed.attachments[0]!.content)).toBe(sha256Hex(pdf));
  });
});

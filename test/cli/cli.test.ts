/**
 * The command line: exit codes (docs/spec/outputs.md "Exit status"), nothing
 * written when the run cannot start, one bad account not stopping the
 * others, and book text never trusted as HTML.
 */
import { existsSync } from 'node:fs';
import { mkdtemp, readFile, readdir } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { main } from '../../src/cli.ts';
import { silentProgress } from '../../src/run/progress.ts';
import { TEST_INSTRUMENTS, writeBook } from '../helpers/write-book.ts';

async function run(argv: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = '';
  let err = '';
  const code = await main(argv, { out: (text) => { out += text; }, err: (text) => { err += text; }, progress: () => silentProgress });
  return { code, out, err };
}

const INSTRUMENTS = TEST_INSTRUMENTS;
const PRICES = `date,instrument,price
2026-06-30,S,100
2026-09-30,S,110
2026-06-30,IDX,100
2026-09-30,IDX,104
2026-06-30,CIX,100
2026-09-30,CIX,100.5
`;
const HOSTILE = '<script>alert("x")</script> & "Quoted" \u202Eevil\u202C ' + 'x'.repeat(150);

function accounts(): string {
  return [
    'account,client,mandate,base_currency,adviser,email,inception,locale',
    `GOOD,"${HOSTILE.replace(/"/g, '""')}",growth,EUR,,,,`,
    'BAD,Client With A Bad Row,growth,EUR,,,,',
  ].join('\n') + '\n';
}
const TRANSACTIONS = `account,date,type,instrument,quantity,price,fees,amount,currency,note
GOOD,2026-07-01,deposit,,,,,1000,,
GOOD,2026-07-01,buy,S,5,100,0,,,
BAD,2026-07-01,deposit,,,,,1000,,
BAD,2026-07-02,buy,S,-5,100,0,,,
`;

describe('quarterline build', () => {
  it('exits 2 on bad arguments and writes nothing', async () => {
    const out = await mkdtemp(path.join(tmpdir(), 'quarterline-out-'));
    const result = await run(['build', 'no-such-book', '--period', '2026-Q5', '--out', out]);
    expect(result.code).toBe(2);
    expect(result.err).toContain('--period "2026-Q5" is not a period');
    expect(await readdir(out)).toEqual([]);
  });

  it('exits 2 with file:line when book.yaml is invalid, and writes nothing', async () => {
    const dir = await writeBook({
      'book.yaml': 'firm:\n  name: Test\nasset_classes:\n  equity:\n    proxy: IDX\n',
      'accounts.csv': accounts(), 'instruments.csv': INSTRUMENTS, 'prices.csv': PRICES, 'transactions.csv': TRANSACTIONS,
    });
    const out = path.join(await mkdtemp(path.join(tmpdir(), 'quarterline-out-')), 'out');
    const result = await run(['build', dir, '--period', '2026-Q3', '--out', out, '--no-pdf']);
    expect(result.code).toBe(2);
    expect(result.err).toMatch(/book\.yaml(:\d+)?/);
    expect(result.err).toContain('cash');
    expect(result.err).not.toMatch(/\n\s+at /); // no stack trace
    expect(existsSync(out)).toBe(false);
  });

  it('reports the good account, fails the bad one with file:line, exits 1, and keeps hostile text inert', async () => {
    const dir = await writeBook({ 'accounts.csv': accounts(), 'instruments.csv': INSTRUMENTS, 'prices.csv': PRICES, 'transactions.csv': TRANSACTIONS });
    const out = await mkdtemp(path.join(tmpdir(), 'quarterline-out-'));
    const result = await run(['build', dir, '--period', '2026-Q3', '--out', out, '--no-pdf']);
    expect(result.code).toBe(1);
    expect(result.err).toContain('failed BAD: transactions.csv:5');

    const record = JSON.parse(await readFile(path.join(out, '2026-Q3', 'run.json'), 'utf8'));
    expect(record.accounts.map((a: { account: string; status: string }) => [a.account, a.status])).toEqual([['BAD', 'failed'], ['GOOD', 'reported']]);
    expect(record.accounts[0].errors[0]).toMatchObject({ file: 'transactions.csv', line: 5 });

    const figures = JSON.parse(await readFile(path.join(out, '2026-Q3', 'accounts', 'GOOD', 'figures.json'), 'utf8'));
    expect(figures.client).toBe(HOSTILE);
    expect(existsSync(path.join(out, '2026-Q3', 'accounts', 'BAD'))).toBe(false);

    const overview = await readFile(path.join(out, '2026-Q3', 'index.html'), 'utf8');
    expect(overview).not.toContain('<script>');
    expect(overview).toContain('&lt;script&gt;alert(&quot;x&quot;)&lt;/script&gt; &amp; &quot;Quoted&quot;');
  });

  it('produces byte-identical figures.json on a rerun', async () => {
    const dir = await writeBook({ 'accounts.csv': accounts(), 'instruments.csv': INSTRUMENTS, 'prices.csv': PRICES, 'transactions.csv': TRANSACTIONS });
    const first = await mkdtemp(path.join(tmpdir(), 'quarterline-out-'));
    const second = await mkdtemp(path.join(tmpdir(), 'quarterline-out-'));
    await run(['build', dir, '--period', '2026-Q3', '--out', first, '--no-pdf']);
    await run(['build', dir, '--period', '2026-Q3', '--out', second, '--no-pdf']);
    const read = (root: string) => readFile(path.join(root, '2026-Q3', 'accounts', 'GOOD', 'figures.json'), 'utf8');
    expect(await read(second)).toBe(await read(first));
  });
});

describe('quarterline check', () => {
  it('prints errors per account and exits 1 when an account fails', async () => {
    const dir = await writeBook({ 'accounts.csv': accounts(), 'instruments.csv': INSTRUMENTS, 'prices.csv': PRICES, 'transactions.csv': TRANSACTIONS });
    const result = await run(['check', dir, '--period', '2026-Q3']);
    expect(result.code).toBe(1);
    expect(result.out).toMatch(/BAD\s+FAILED/);
    expect(result.out).toContain('transactions.csv:5');
    expect(result.out).toContain('1 reported, 1 failed');
  });

  it('prints --help and exits 0', async () => {
    const result = await run(['--help']);
    expect(result.code).toBe(0);
    expect(result.out).toContain('build');
    expect(result.out).toContain('check');
  });
});

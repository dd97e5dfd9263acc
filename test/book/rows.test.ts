/**
 * Row errors in the CSV files: each is scoped so that one bad account (or
 * instrument, or currency) never stops the others; instruments.csv errors
 * stop the run because every account depends on the master.
 */
import { afterAll, describe, expect, it } from 'vitest';
import { loadBook } from '../../src/book/load.ts';
import type { Book } from '../../src/book/types.ts';
import type { Diagnostic } from '../../src/errors.ts';
import { bookErrorOf, bookWith, HEADERS, MINIMAL_INSTRUMENTS, removeScratchBooks } from './book-fixture.ts';

afterAll(removeScratchBooks);

const accountScope = (account: string) => ({ kind: 'account', account }) as const;

function error(scope: Diagnostic['scope'], file: string, line: number, column: string, message: string): Diagnostic {
  return { severity: 'error', scope, file, line, column, message };
}

describe('accounts.csv', () => {
  const rows = [
    'A-001,Ada Lovelace,balanced,GBP,,,,', //                        2
    'bad id!,Bob,balanced,GBP,,,,', //                               3
    'A-003,Cleo,growth,GBP,,,,', //                                  4
    'A-004,Dan,balanced,gbp,,,,', //                                 5
    'A-005,Eve,balanced,GBP,,,2024-02-30,', //                       6
    'A-006,Fay,balanced,GBP,,fay-at-example,,', //                   7
    'A-002,Gus,cautious,GBP,,,,', //                                 8
    'A-002,Gus again,cautious,GBP,,,,', //                           9
    'A-009,<script>alert("x")</script> & Søn,balanced,GBP,,,,', //   10
  ];
  let loaded: Promise<Book> | undefined;
  /** Loaded once for the tests below. */
  const load = (): Promise<Book> => (loaded ??= loadBook(bookWith({ 'accounts.csv': `${HEADERS.accounts}${rows.join('\n')}\n` })));

  it('reports each bad row in its account\'s scope', async () => {
    const book = await load();
    expect(book.diagnostics).toEqual([
      error(accountScope('bad id!'), 'accounts.csv', 3, 'account', 'found "bad id!", expected an account id of 1 to 64 letters, digits, ".", "_" or "-" (it is used in file names); change the id'),
      error(accountScope('A-003'), 'accounts.csv', 4, 'mandate', 'found "growth", expected a mandate id of mandates.yaml (balanced, cautious); correct it or add the mandate'),
      error(accountScope('A-004'), 'accounts.csv', 5, 'base_currency', 'found "gbp", expected an ISO 4217 currency code in capitals; write GBP'),
      error(accountScope('A-005'), 'accounts.csv', 6, 'inception', 'found "2024-02-30", expected a real calendar date; check the month and the day'),
      error(accountScope('A-006'), 'accounts.csv', 7, 'email', 'found "fay-at-example", expected one e-mail address such as name@example.org; correct it or leave the cell empty'),
      error(accountScope('A-002'), 'accounts.csv', 9, 'account', 'found the account id "A-002" again (first on line 8), expected each account once; merge the rows or give one of them another id'),
    ]);
  });

  it('rejects the bad accounts, both rows of a duplicate included, and keeps the others', async () => {
    const book = await load();
    expect(book.rejectedAccounts).toEqual(['bad id!', 'A-003', 'A-004', 'A-005', 'A-006', 'A-002']);
    expect(book.accounts.map((account) => account.id)).toEqual(['A-001', 'A-009']);
    // The rejected A-002's transactions are not loaded, and not reported again.
    expect([...book.transactions.keys()]).toEqual(['A-001', 'A-009']);
  });

  it('loads a client name with markup verbatim', async () => {
    const book = await load();
    expect(book.accounts[1]!.client).toBe('<script>alert("x")</script> & Søn');
  });

  it('keeps leading and trailing spaces of a client name but trims ids and codes', async () => {
    const book = await loadBook(bookWith({ 'accounts.csv': `${HEADERS.accounts} A-001 ,  Ada Lovelace ,balanced, GBP ,,,,\n` }));
    expect(book.accounts[0]).toMatchObject({ id: 'A-001', client: '  Ada Lovelace ', baseCurrency: 'GBP' });
  });

  it('stops the run for a row without an account id, which cannot be scoped', async () => {
    const diagnostics = await bookErrorOf(bookWith({ 'accounts.csv': `${HEADERS.accounts},Nobody,balanced,GBP,,,,\n` }));
    expect(diagnostics).toEqual([error({ kind: 'book' }, 'accounts.csv', 2, 'account',
      'found an empty cell, expected an account id; a row that belongs to nothing could belong to anything, so fill it in or delete the row')]);
  });
});

describe('transactions.csv', () => {
  const transactionsWith = async (...rows: string[]) =>
    loadBook(bookWith({ 'transactions.csv': `${HEADERS.transactions}A-001,2024-01-02,deposit,,,,,100000,,\n${rows.join('\n')}\n` }));

  it('refuses a negative quantity and says which number to write', async () => {
    const book = await transactionsWith('A-001,2024-01-05,sell,WEQF,-5,10,,,,');
    expect(book.diagnostics).toEqual([error(accountScope('A-001'), 'transactions.csv', 3, 'quantity',
      'found "-5", expected a non-negative quantity; the type gives the direction, so write 5 for a sell')]);
    expect(book.transactions.get('A-001')!.map((row) => row.line)).toEqual([2]);
  });

  it('refuses a buy whose amount is not quantity × price × multiplier + fees within 0.01', async () => {
    // 5000 × 10 × 1 + 12.5; 20000 × 98.5 × 0.01 + 2 (bond quoted in percent); 100 × 10 × 1 − 5:
    // python3 -c "print(5000*10*1+12.5, 20000*98.5*0.01+2, 100*10*1-5)"  →  50012.5 19702.0 995
    const book = await transactionsWith(
      'A-001,2024-01-05,buy,WEQF,5000,10,12.5,50000,,', //   3: off by 12.5
      'A-001,2024-01-05,buy,WEQF,5000,10,12.5,50012.51,,', // 4: off by exactly 0.01, accepted
      'A-001,2024-01-05,buy,UST30,20000,98.5,2,19702,,', //  5: multiplier 0.01 applied
      'A-001,2024-01-05,sell,WEQF,100,10,5,1005,,', //       6: a sell subtracts fees: 995
    );
    expect(book.diagnostics).toEqual([
      error(accountScope('A-001'), 'transactions.csv', 3, 'amount',
        'found "50000", expected quantity × price × multiplier + fees = 50012.5 (within 0.01); correct the amount, quantity, price or fees, or leave the amount empty'),
      error(accountScope('A-001'), 'transactions.csv', 6, 'amount',
        'found "1005", expected quantity × price × multiplier − fees = 995 (within 0.01); correct the amount, quantity, price or fees, or leave the amount empty'),
    ]);
    expect(book.transactions.get('A-001')!.map((row) => row.line)).toEqual([2, 4, 5]);
  });

  it('rejects an account that is not in accounts.csv, once for all its rows', async () => {
    const book = await transactionsWith('ZZ-9,2024-01-05,deposit,,,,,10,,', 'ZZ-9,2024-01-06,deposit,,,,,10,,');
    expect(book.rejectedAccounts).toEqual(['ZZ-9']);
    expect(book.diagnostics).toEqual([error(accountScope('ZZ-9'), 'transactions.csv', 3, 'account',
      'found the account "ZZ-9" (2 rows, the first here), expected an account of accounts.csv; add the account to accounts.csv or correct the id')]);
    expect(book.transactions.has('ZZ-9')).toBe(false);
  });

  it('refuses unknown instruments, indices as holdings, bad dates, bad types and missing fields', async () => {
    const book = await transactionsWith(
      'A-001,2024-01-05,buy,NOPE,5,10,,,,', //        3
      'A-001,2024-01-05,buy,EQIDX,5,10,,,,', //       4
      'A-001,2024-13-05,deposit,,,,,5,,', //          5
      'A-001,05/01/2024,deposit,,,,,5,,', //          6
      'A-001,2024-01-05,Deposit,,,,,5,,', //          7
      'A-001,2024-01-05,buy,WEQF,,10,,,,', //         8
      'A-001,2024-01-05,withdrawal,,,,,,,', //        9
      'A-001,2024-01-05,transfer_in,WEQF,,,,,,', //  10
      'A-001,2024-01-05,fee,,,,,"1,250.00",,', //    11
      'A-001,2024-01-05,dividend,WEQF,,,,12,usd,', // 12
    );
    const scope = accountScope('A-001');
    expect(book.diagnostics).toEqual([
      error(scope, 'transactions.csv', 3, 'instrument', 'found "NOPE", expected an instrument id of instruments.csv; add the instrument or correct the id'),
      error(scope, 'transactions.csv', 4, 'instrument', 'found "EQIDX", expected a security or fund, but instruments.csv:2 is an index, which can be a benchmark or proxy but never a holding; use the fund or security that tracks it'),
      error(scope, 'transactions.csv', 5, 'date', 'found "2024-13-05", expected a real calendar date; check the month and the day'),
      error(scope, 'transactions.csv', 6, 'date', 'found "05/01/2024", expected a date as YYYY-MM-DD; write it e.g. as 2024-03-31'),
      error(scope, 'transactions.csv', 7, 'type', 'found "Deposit", expected one of deposit, withdrawal, transfer_in, transfer_out, buy, sell, dividend, interest, fee, tax (lower-case); correct the type'),
      error(scope, 'transactions.csv', 8, 'quantity', 'found an empty cell, expected a value: a buy needs instrument, quantity, price; fill it in'),
      error(scope, 'transactions.csv', 9, 'amount', 'found an empty cell, expected a value: a withdrawal needs amount; fill it in'),
      error(scope, 'transactions.csv', 10, 'quantity', 'found an empty cell, expected a value: a transfer_in needs instrument, quantity; fill it in'),
      error(scope, 'transactions.csv', 11, 'amount', 'found "1,250.00", expected a non-negative amount; remove the thousands separators: write 1250.00'),
      error(scope, 'transactions.csv', 12, 'currency', 'found "usd", expected an ISO 4217 currency code in capitals; write USD'),
    ]);
    expect(book.transactions.get('A-001')!.map((row) => row.line)).toEqual([2]);
    expect(book.rejectedAccounts).toEqual([]);
  });

  it('warns about values a type does not use, and keeps the row', async () => {
    const book = await transactionsWith('A-001,2024-01-05,deposit,WEQF,3,,,5,,');
    expect(book.diagnostics).toEqual([
      { severity: 'warning', scope: accountScope('A-001'), file: 'transactions.csv', line: 3, column: 'instrument', message: 'found "WEQF", expected nothing: a deposit does not use instrument, so the value is ignored; remove it or check the type' },
      { severity: 'warning', scope: accountScope('A-001'), file: 'transactions.csv', line: 3, column: 'quantity', message: 'found "3", expected nothing: a deposit does not use quantity, so the value is ignored; remove it or check the type' },
    ]);
    expect(book.transactions.get('A-001')![1]).toMatchObject({ type: 'deposit', instrument: null, quantity: 0, amount: 5 });
  });

  it('uses a currency given on the row, and sorts each account by day, then line', async () => {
    const book = await transactionsWith('A-001,2024-01-01,dividend,WEQF,,,,12,USD,late entry', 'A-001,2024-01-01,interest,,,,,1,,');
    expect(book.transactions.get('A-001')!.map((row) => [row.line, row.currency])).toEqual([[3, 'USD'], [4, 'GBP'], [2, 'GBP']]);
  });

  it('loads transactions without the optional fees, currency and note columns', async () => {
    const book = await loadBook(bookWith({ 'transactions.csv': 'account,date,type,instrument,quantity,price,amount\nA-001,2024-01-02,buy,WEQF,10,10,\n' }));
    expect(book.transactions.get('A-001')).toEqual([expect.objectContaining({ fees: 0, amount: null, currency: 'GBP', note: '' })]);
  });
});

describe('prices.csv', () => {
  it('scopes each bad row to its instrument and keeps the first of two prices on one day', async () => {
    const prices = [
      '2024-01-02,EQIDX,1000', //  2
      '2024-01-02,EQIDX,1001', //  3
      '2024-01-03,EQIDX,0', //     4
      '2024-01-04,EQIDX,abc', //   5
      '2024/01/05,EQIDX,1', //     6
      '2024-01-02,NOPE,5', //      7
      '2024-01-06,WEQF,1e400', //  8
      '2024-01-07,WEQF,1,5', //    9
      '2024-01-08,WEQF,10.5', //  10
    ];
    const book = await loadBook(bookWith({ 'prices.csv': `${HEADERS.prices}${prices.join('\n')}\n` }));
    const instrument = (id: string) => ({ kind: 'instrument', instrument: id }) as const;
    expect(book.diagnostics).toEqual([
      error(instrument('EQIDX'), 'prices.csv', 3, 'date', 'found a second price of "EQIDX" for 2024-01-02 (first on line 2), expected one price per instrument and date; delete the wrong row'),
      error(instrument('EQIDX'), 'prices.csv', 4, 'price', 'found "0", expected a positive price; a price of zero or below cannot value a position, so correct it or remove the row'),
      error(instrument('EQIDX'), 'prices.csv', 5, 'price', 'found "abc", expected a positive price; write a plain decimal number such as 1234.5'),
      error(instrument('EQIDX'), 'prices.csv', 6, 'date', 'found "2024/01/05", expected a date as YYYY-MM-DD; write it e.g. as 2024-03-31'),
      error(instrument('NOPE'), 'prices.csv', 7, 'instrument', 'found "NOPE", expected an instrument id of instruments.csv; add the instrument or correct the id'),
      error(instrument('WEQF'), 'prices.csv', 8, 'price', 'found "1e400", expected a positive price of ordinary size; check the number'),
      { severity: 'error', scope: instrument('WEQF'), file: 'prices.csv', line: 9, message: 'found 4 fields, expected 3 as in the header; put any value containing a comma in double quotes, and remove stray commas' },
    ]);
    expect(book.prices.get('EQIDX')!.values).toEqual(Float64Array.from([1000]));
    expect(book.prices.get('WEQF')!.lines).toEqual(Int32Array.from([10]));
    expect(book.prices.has('NOPE')).toBe(false);
  });
});

describe('fx.csv', () => {
  it('scopes each bad row to its from-currency and names both codes', async () => {
    const rates = [
      '2024-01-02,USD,GBP,0.79', //  2
      '2024-01-02,USD,GBP,0.80', //  3
      '2024-01-03,USD,GBP,-1', //    4
      '2024-01-03,USD,USD,1', //     5
      '2024-01-03,usd,GBP,1', //     6
      '2024-01-04,EUR,GBP,', //      7
      '2024-01-04,GBP,USD,1.27', //  8
    ];
    const book = await loadBook(bookWith({ 'fx.csv': `${HEADERS.fx}${rates.join('\n')}\n` }));
    const currency = (code: string) => ({ kind: 'currency', currency: code }) as const;
    expect(book.diagnostics).toEqual([
      error(currency('USD'), 'fx.csv', 3, 'date', 'found a second USD/GBP rate for 2024-01-02 (first on line 2), expected one rate per pair and date; delete the wrong row'),
      error(currency('USD'), 'fx.csv', 4, 'rate', 'found "-1" for USD/GBP, expected a positive rate; write how many units of "to" one unit of "from" is worth, or remove the row'),
      error(currency('USD'), 'fx.csv', 5, 'to', 'found "USD" for USD/USD, expected two different currencies; remove the row'),
      error(currency('usd'), 'fx.csv', 6, 'from', 'found "usd" for usd/GBP, expected an ISO 4217 currency code in capitals; write USD'),
      error(currency('EUR'), 'fx.csv', 7, 'rate', 'found an empty cell for EUR/GBP, expected a positive rate; write a plain decimal number such as 1234.5'),
    ]);
    // Quoted pairs only: GBP/USD is kept as quoted, never derived from USD/GBP here.
    expect([...book.fx.keys()]).toEqual(['USD/GBP', 'GBP/USD']);
    expect(book.fx.get('USD/GBP')!.values).toEqual(Float64Array.from([0.79]));
  });
});

describe('holdings.csv', () => {
  it('scopes each bad row to its account and rejects unknown accounts', async () => {
    const holdings = [
      'A-001,2024-01-31,WEQF,5000', //  2
      'A-001,2024-01-31,WEQF,1', //     3
      'A-001,2024-01-31,EQIDX,1', //    4
      'QQ,2024-01-31,WEQF,1', //        5
      'A-002,2024-01-31,UST30,x', //    6
      'A-002,2024-01-31,UST30,-3', //   7
    ];
    const book = await loadBook(bookWith({ 'holdings.csv': `${HEADERS.holdings}${holdings.join('\n')}\n` }));
    expect(book.diagnostics).toEqual([
      error(accountScope('A-001'), 'holdings.csv', 3, 'instrument', 'found a second row for "WEQF" on the same date (first on line 2), expected one quantity per account, date and instrument; add the quantities into one row'),
      error(accountScope('A-001'), 'holdings.csv', 4, 'instrument', 'found "EQIDX", expected a security or fund, but instruments.csv:2 is an index, which can be a benchmark or proxy but never a holding; use the fund or security that tracks it'),
      error(accountScope('QQ'), 'holdings.csv', 5, 'account', 'found the account "QQ" (this row), expected an account of accounts.csv; add the account to accounts.csv or correct the id'),
      error(accountScope('A-002'), 'holdings.csv', 6, 'quantity', 'found "x", expected a quantity; write a plain decimal number such as 1234.5'),
    ]);
    expect(book.rejectedAccounts).toEqual(['QQ']);
    // A custodian's negative quantity is data for reconciliation, not a loading error.
    expect(book.holdings.get('A-002')!.map((row) => row.quantity)).toEqual([-3]);
  });
});

describe('instruments.csv', () => {
  it('stops the run for any bad row, since every account depends on the master', async () => {
    const instruments = `${MINIMAL_INSTRUMENTS}GOLD,Gold,gold,USD,security,,\nBAD,Bad,equity,GB,Fund,0,WEQF\nWEQF,Duplicate,equity,GBP,fund,,\n`;
    const diagnostics = await bookErrorOf(bookWith({ 'instruments.csv': instruments }));
    const book = { kind: 'book' } as const;
    expect(diagnostics).toEqual([
      error(book, 'instruments.csv', 7, 'asset_class', 'found "gold", expected an asset class of book.yaml (equity, bonds, cash); correct it or add the class to book.yaml'),
      error(book, 'instruments.csv', 8, 'currency', 'found "GB", expected an ISO 4217 currency code of three capital letters, e.g. GBP; correct the code'),
      error(book, 'instruments.csv', 8, 'kind', 'found "Fund", expected security, fund or index in lower case; write fund'),
      error(book, 'instruments.csv', 8, 'multiplier', 'found "0", expected a positive multiplier; leave it empty for 1, write 0.01 for bonds quoted in percent of nominal'),
      error(book, 'instruments.csv', 9, 'instrument', 'found the instrument id "WEQF" again (first on line 5), expected each instrument once; delete one row or give it another id'),
      error(book, 'instruments.csv', 8, 'proxy', 'found "WEQF", expected an index (the proxy of an instrument), but instruments.csv:5 has kind fund; use an index or change its kind'),
    ]);
  });
});

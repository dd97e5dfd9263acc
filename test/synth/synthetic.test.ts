import { mkdtempSync, readFileSync, readdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { loadBook } from '../../src/book/load.ts';
import { dayOf, isoDate } from '../../src/dates.ts';
import { UsageError, formatDiagnostic } from '../../src/errors.ts';
import { lastQuarterEndBefore, writeSyntheticBook } from '../../src/synth/synthetic.ts';
import { type BookFiles, type Replay, readBook, replayBook } from './book-replay.ts';

const scratch = mkdtempSync(path.join(tmpdir(), 'quarterline-synth-'));
afterAll(() => rmSync(scratch, { recursive: true, force: true }));

const OPTIONS = { accounts: 40, instruments: 60, years: 2, end: '2025-12-31', seed: 3 } as const;
const folder = (name: string): string => path.join(scratch, name);
const sameFiles = (left: string, right: string): Record<string, boolean> =>
  Object.fromEntries(readdirSync(left).sort().map((file) => [file, readFileSync(path.join(left, file)).equals(readFileSync(path.join(right, file)))]));

let result: Awaited<ReturnType<typeof writeSyntheticBook>>;
let book: BookFiles;
let replay: Replay;

beforeAll(async () => {
  result = await writeSyntheticBook(folder('a'), OPTIONS);
  book = readBook(folder('a'));
  replay = replayBook(book);
});

describe('writeSyntheticBook determinism', () => {
  it('writes byte-identical files for the same seed and different ones for another seed', async () => {
    await writeSyntheticBook(folder('b'), OPTIONS);
    const same = sameFiles(folder('a'), folder('b'));
    expect(Object.keys(same)).toEqual(['accounts.csv', 'book.yaml', 'fx.csv', 'holdings.csv', 'instruments.csv', 'mandates.yaml', 'prices.csv', 'transactions.csv']);
    expect(Object.values(same).every(Boolean)).toBe(true);
    await writeSyntheticBook(folder('c'), { ...OPTIONS, seed: 4 });
    const other = sameFiles(folder('a'), folder('c'));
    expect(other['prices.csv']).toBe(false);
    expect(other['fx.csv']).toBe(false);
    expect(other['transactions.csv']).toBe(false);
  });

  it('keeps account i and the market the same whatever the number of accounts', async () => {
    await writeSyntheticBook(folder('small'), { ...OPTIONS, accounts: 12 });
    expect(readFileSync(path.join(folder('small'), 'prices.csv')).equals(readFileSync(path.join(folder('a'), 'prices.csv')))).toBe(true);
    const small = readBook(folder('small'));
    const firstTwelve = book.transactions.rows.filter((row) => Number(row['account']!.slice(4)) <= 12);
    expect(small.transactions.rows).toEqual(firstTwelve);
  });
});

describe('a synthetic book', () => {
  it('reports the rows it wrote per CSV file', () => {
    expect(result.files).toEqual({
      'instruments.csv': book.instruments.rows.length,
      'prices.csv': book.prices.rows.length,
      'fx.csv': book.fx.rows.length,
      'accounts.csv': 40,
      'transactions.csv': book.transactions.rows.length,
      'holdings.csv': book.holdings.rows.length,
    });
    expect(book.instruments.rows.filter((row) => row['kind'] !== 'index').length).toBe(60);
  });

  it('has the book format’s columns and replays without a broken rule', () => {
    expect(book.transactions.header).toEqual(['account', 'date', 'type', 'instrument', 'quantity', 'price', 'fees', 'amount', 'currency', 'note']);
    expect(book.holdings.header).toEqual(['account', 'date', 'instrument', 'quantity']);
    expect(book.accounts.header).toEqual(['account', 'client', 'mandate', 'base_currency', 'adviser', 'email', 'inception', 'locale']);
    expect(book.instruments.header).toEqual(['instrument', 'name', 'asset_class', 'currency', 'kind', 'multiplier', 'proxy']);
    expect(replay.violations).toEqual([]);
  });

  it('loads with the book loader without a diagnostic', async () => {
    const loaded = await loadBook(folder('a'));
    expect(loaded.diagnostics.map(formatDiagnostic)).toEqual([]);
  });

  it('covers the history asked for on weekdays, in four currencies', () => {
    const dates = [...new Set(book.prices.rows.map((row) => row['date']!))].sort();
    // Two years back from 2025-12-31 is 2023-12-31, a Sunday (calendar): the first weekday is 2024-01-01.
    expect(dates[0]).toBe('2024-01-01');
    expect(dates[dates.length - 1]).toBe('2025-12-31');
    expect(new Set(book.fx.rows.map((row) => `${row['from']}/${row['to']}`))).toEqual(new Set(['EUR/USD', 'EUR/GBP', 'EUR/CHF']));
    expect(new Set(book.instruments.rows.map((row) => row['currency']))).toEqual(new Set(['EUR', 'USD', 'GBP', 'CHF']));
  });

  it('holds about 30 positions per account and books every kind of flow', () => {
    const perAccount = new Map<string, number>();
    for (const row of book.holdings.rows) perAccount.set(row['account']!, (perAccount.get(row['account']!) ?? 0) + 1);
    const average = [...perAccount.values()].reduce((sum, count) => sum + count, 0) / perAccount.size;
    expect(average).toBeGreaterThan(20);
    expect(average).toBeLessThan(40);
    const types = new Set(book.transactions.rows.map((row) => row['type']));
    for (const type of ['deposit', 'buy', 'sell', 'dividend', 'interest', 'fee', 'tax']) expect(types.has(type), type).toBe(true);
  });

  it('has stale prices, a couple of holdings breaks, and a few deliberate mandate breaches', () => {
    const end = '2025-12-31';
    const held = new Set(book.holdings.rows.map((row) => row['instrument']!));
    expect([...held].some((id) => replay.prices.get(id)!.lastDate! < end)).toBe(true);
    let breaks = 0;
    let overweightEquity = 0;
    const mandates = book.mandatesYaml as Record<string, Record<string, any>>;
    for (const row of book.accounts.rows) {
      const state = replay.stateAt(row['account']!, end);
      const reported = book.holdings.rows.filter((holding) => holding['account'] === row['account']);
      for (const holding of reported) if (Math.abs((state.positions.get(holding['instrument']!) ?? 0) - Number(holding['quantity'])) > 1e-6) breaks++;
      const value = replay.value(state, end);
      if ((value.byClass.get('equity') ?? 0) / value.total > mandates[row['mandate']!]!['allocation']['equity'][1] + 0.1) overweightEquity++;
    }
    expect(breaks).toBe(2);
    expect(overweightEquity).toBeGreaterThanOrEqual(1);
    expect(overweightEquity).toBeLessThan(book.accounts.rows.length / 4);
  });
});

describe('writeSyntheticBook options', () => {
  it('refuses sizes and dates it cannot honour, naming the option', async () => {
    await expect(writeSyntheticBook(folder('bad'), { accounts: 0 })).rejects.toThrow(new UsageError('synth: accounts must be a whole number from 1 to 1000000, got 0'));
    await expect(writeSyntheticBook(folder('bad'), { accounts: 1, instruments: 5 })).rejects.toThrow('synth: instruments must be a whole number from 10 to 100000, got 5');
    await expect(writeSyntheticBook(folder('bad'), { accounts: 1, years: 2.5 })).rejects.toThrow('synth: years must be a whole number from 1 to 50, got 2.5');
    await expect(writeSyntheticBook(folder('bad'), { accounts: 1, end: '2025-02-30' })).rejects.toThrow('synth: end must be a date written YYYY-MM-DD, got "2025-02-30"');
  });

  it('lastQuarterEndBefore gives the calendar quarter end strictly before a day', () => {
    expect(isoDate(lastQuarterEndBefore(dayOf(2026, 12, 1)))).toBe('2026-09-30');
    expect(isoDate(lastQuarterEndBefore(dayOf(2026, 10, 1)))).toBe('2026-09-30');
    expect(isoDate(lastQuarterEndBefore(dayOf(2026, 9, 30)))).toBe('2026-06-30');
    expect(isoDate(lastQuarterEndBefore(dayOf(2026, 1, 15)))).toBe('2025-12-31');
  });
});

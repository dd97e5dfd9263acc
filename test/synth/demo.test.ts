import { mkdtempSync, readFileSync, readdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { loadBook } from '../../src/book/load.ts';
import { formatDiagnostic } from '../../src/errors.ts';
import { writeDemoBook } from '../../src/synth/demo.ts';
import { type BookFiles, type Replay, type Row, readBook, replayBook } from './book-replay.ts';

const DEMO = path.resolve(import.meta.dirname, '../../data/demo');
const PERIOD_START = '2026-07-01';
const PERIOD_END = '2026-09-30';

// Column names and order of the book format (book.md).
const HEADERS: Record<string, readonly string[]> = {
  'accounts.csv': ['account', 'client', 'mandate', 'base_currency', 'adviser', 'email', 'inception', 'locale'],
  'instruments.csv': ['instrument', 'name', 'asset_class', 'currency', 'kind', 'multiplier', 'proxy'],
  'prices.csv': ['date', 'instrument', 'price'],
  'fx.csv': ['date', 'from', 'to', 'rate'],
  'transactions.csv': ['account', 'date', 'type', 'instrument', 'quantity', 'price', 'fees', 'amount', 'currency', 'note'],
  'holdings.csv': ['account', 'date', 'instrument', 'quantity'],
};

let book: BookFiles;
let replay: Replay;
const scratch = mkdtempSync(path.join(tmpdir(), 'quarterline-demo-'));

beforeAll(() => {
  book = readBook(DEMO);
  replay = replayBook(book);
});
afterAll(() => rmSync(scratch, { recursive: true, force: true }));

const rowsOf = (account: string): Row[] => book.transactions.rows.filter((row) => row['account'] === account);
const isWeekday = (date: string): boolean => {
  const weekday = new Date(`${date}T00:00:00Z`).getUTCDay();
  return weekday !== 0 && weekday !== 6;
};
const daysBetween = (from: string, to: string): number => (Date.parse(`${to}T00:00:00Z`) - Date.parse(`${from}T00:00:00Z`)) / 86_400_000;

describe('the demo book files', () => {
  it('are exactly what the seeded generator writes (committed files are current and generation is deterministic)', async () => {
    await writeDemoBook(scratch);
    const committed = readdirSync(DEMO).sort();
    expect(readdirSync(scratch).sort()).toEqual(committed);
    for (const file of committed) {
      expect(readFileSync(path.join(scratch, file)).equals(readFileSync(path.join(DEMO, file))), file).toBe(true);
    }
  });

  it('have the header columns of the book format', () => {
    const files: Record<string, { header: readonly string[] }> = {
      'accounts.csv': book.accounts, 'instruments.csv': book.instruments, 'prices.csv': book.prices,
      'fx.csv': book.fx, 'transactions.csv': book.transactions, 'holdings.csv': book.holdings,
    };
    for (const [file, expected] of Object.entries(HEADERS)) expect(files[file]!.header, file).toEqual(expected);
  });

  it('replay without a broken rule: known instruments, trades at the day’s price, amounts consistent, no oversold position, no negative cash', () => {
    expect(replay.violations).toEqual([]);
    expect(book.transactions.rows.every((row) => row['quantity'] === '' || Number(row['quantity']) > 0)).toBe(true);
  });

  it('load with the book loader without a diagnostic', async () => {
    const loaded = await loadBook(DEMO);
    expect(loaded.diagnostics.map(formatDiagnostic)).toEqual([]);
    expect(loaded.accounts.length).toBe(book.accounts.rows.length);
  });
});

describe('the demo firm, mandates and instruments', () => {
  it('book.yaml: an invented firm at example.org, en-GB, a cash index as risk-free rate, four asset classes with proxies and assumptions, cautions', () => {
    const settings = book.bookYaml as Record<string, any>;
    expect(settings['firm'].email).toMatch(/@example\.org$/);
    expect(settings['firm'].regulatory_note).toMatch(/invented|fictitious/);
    expect(settings['locale']).toBe('en-GB');
    expect(settings['stale_after_days']).toBe(7);
    const classes = settings['asset_classes'] as Record<string, { proxy: string; expected_return: number }>;
    expect(Object.keys(classes)).toEqual(expect.arrayContaining(['cash', 'bonds', 'equity']));
    expect(Object.keys(classes).length).toBeGreaterThanOrEqual(4);
    for (const [id, assetClass] of Object.entries(classes)) {
      const proxy = replay.instruments.get(assetClass.proxy);
      expect(proxy?.kind, id).toBe('index');
      expect(proxy?.assetClass, id).toBe(id);
      expect(assetClass.expected_return).toBeGreaterThan(0);
    }
    expect(classes['cash']!.expected_return).toBeLessThan(classes['bonds']!.expected_return);
    expect(classes['bonds']!.expected_return).toBeLessThan(classes['equity']!.expected_return);
    const riskFree = replay.instruments.get(settings['risk_free']);
    expect(riskFree).toMatchObject({ kind: 'index', assetClass: 'cash' });
    expect(settings['cautions'].length).toBeGreaterThanOrEqual(3);
    expect(settings['cautions'].length).toBeLessThanOrEqual(5);
  });

  it('mandates.yaml: four mandates with index benchmarks summing to 1 and every shortfall basis', () => {
    const mandates = book.mandatesYaml as Record<string, Record<string, any>>;
    expect(Object.keys(mandates).length).toBe(4);
    const bases = new Set<string>();
    for (const [id, mandate] of Object.entries(mandates)) {
      const weights = Object.entries(mandate['benchmark'] as Record<string, number>);
      expect(weights.length, id).toBeGreaterThanOrEqual(2);
      expect(weights.length, id).toBeLessThanOrEqual(4);
      expect(Math.abs(weights.reduce((sum, [, weight]) => sum + weight, 0) - 1), id).toBeLessThan(1e-9);
      for (const [index] of weights) expect(replay.instruments.get(index)?.kind, `${id} ${index}`).toBe('index');
      expect(mandate['risk_aversion']).toBeGreaterThanOrEqual(2);
      expect(mandate['risk_aversion']).toBeLessThanOrEqual(10);
      for (const rule of mandate['shortfall']) bases.add(rule.basis);
    }
    expect([...bases].sort()).toEqual(['average', 'cumulative', 'every_year']);
    for (const key of ['max_position', 'max_volatility', 'max_tracking_error']) {
      expect(Object.values(mandates).some((mandate) => mandate[key] !== undefined), key).toBe(true);
    }
  });

  it('instruments: about 40 holdable in EUR, USD, GBP and CHF, bonds quoted in percent near par, priced on weekdays over the whole history', () => {
    const holdable = book.instruments.rows.filter((row) => row['kind'] !== 'index');
    expect(holdable.length).toBeGreaterThanOrEqual(35);
    expect(new Set(holdable.map((row) => row['currency']))).toEqual(new Set(['EUR', 'USD', 'GBP', 'CHF']));
    const bonds = holdable.filter((row) => row['multiplier'] === '0.01');
    expect(bonds.length).toBeGreaterThanOrEqual(5);
    const bondPrices = bonds.flatMap((bond) => [...replay.prices.get(bond['instrument']!)!.exact.values()]);
    expect(Math.min(...bondPrices)).toBeGreaterThan(80);
    expect(Math.max(...bondPrices)).toBeLessThan(120);
    for (const row of book.instruments.rows) expect(replay.prices.has(row['instrument']!), row['instrument']).toBe(true);
    for (const row of book.instruments.rows.filter((instrument) => instrument['kind'] === 'index')) {
      const series = replay.prices.get(row['instrument']!)!;
      expect(series.firstDate).toBe('2020-07-01');
      expect(series.lastDate).toBe(PERIOD_END);
    }
    expect(book.prices.rows.every((row) => isWeekday(row['date']!))).toBe(true);
  });

  it('fx.csv: EUR/USD, EUR/GBP and EUR/CHF only, every weekday', () => {
    const pairs = new Set(book.fx.rows.map((row) => `${row['from']}/${row['to']}`));
    expect([...pairs].sort()).toEqual(['EUR/CHF', 'EUR/GBP', 'EUR/USD']);
    // python3 -c "import numpy as np; print(np.busday_count('2020-07-01','2026-10-01'))"  -> 1631
    expect(book.fx.rows.length).toBe(3 * 1631);
  });
});

describe('the demo accounts exercise every scenario element', () => {
  const accountRow = (id: string): Row => book.accounts.rows.find((row) => row['account'] === id)!;
  const firstFlowDate = (account: string): string =>
    rowsOf(account).find((row) => ['deposit', 'withdrawal', 'transfer_in', 'transfer_out'].includes(row['type']!))!['date']!;

  it('clients: mostly EUR, at least one GBP and one USD base, a non-ASCII name, an apostrophe, one without e-mail', () => {
    const accounts = book.accounts.rows;
    expect(accounts.length).toBeGreaterThanOrEqual(10);
    const bases = accounts.map((row) => row['base_currency']);
    expect(bases.filter((base) => base === 'EUR').length).toBeGreaterThan(accounts.length / 2);
    expect(bases).toContain('GBP');
    expect(bases).toContain('USD');
    expect(accounts.some((row) => /[^\x00-\x7f]/.test(row['client']!))).toBe(true);
    expect(accounts.some((row) => row['client']!.includes("'"))).toBe(true);
    expect(accounts.filter((row) => row['email'] === '').length).toBe(1);
    for (const row of accounts.filter((account) => account['email'] !== '')) expect(row['email']).toMatch(/^[^@\s]+@example\.org$/);
  });

  it('inceptions from mid-2020 (five-year windows exist) to an account opened inside 2026-Q3', () => {
    const firsts = book.accounts.rows.map((row) => firstFlowDate(row['account']!));
    expect(firsts.some((date) => date <= '2021-09-30')).toBe(true);
    const openedInPeriod = firsts.filter((date) => date >= PERIOD_START && date <= PERIOD_END);
    expect(openedInPeriod).toEqual(['2026-08-10']);
  });

  it('a withdrawal in 2026-Q3 of about 40 % of the account', () => {
    const withdrawals = book.transactions.rows.filter((row) => row['type'] === 'withdrawal' && row['date']! >= PERIOD_START);
    expect(withdrawals.length).toBeGreaterThanOrEqual(1);
    const large = withdrawals.find((row) => {
      const dayBefore = replay.stateAt(row['account']!, '2026-08-17');
      const share = Number(row['amount']) / replay.value(dayBefore, '2026-08-17').total;
      return share > 0.35 && share < 0.45;
    });
    expect(large?.['account']).toBe('TF-1007');
  });

  it('a transfer_in of securities', () => {
    expect(book.transactions.rows.filter((row) => row['type'] === 'transfer_in').length).toBeGreaterThanOrEqual(2);
  });

  it('a management fee for every account on the quarter end, and withholding tax on the day of each taxed dividend', () => {
    for (const row of book.accounts.rows) {
      expect(rowsOf(row['account']!).some((transaction) => transaction['type'] === 'fee' && transaction['date'] === PERIOD_END), row['account']).toBe(true);
    }
    const taxes = book.transactions.rows.filter((row) => row['type'] === 'tax');
    expect(taxes.length).toBeGreaterThan(10);
    for (const tax of taxes) {
      const dividend = book.transactions.rows.find((row) =>
        row['type'] === 'dividend' && row['account'] === tax['account'] && row['date'] === tax['date'] &&
        row['instrument'] === tax['instrument'] && row['currency'] === tax['currency']);
      expect(dividend, JSON.stringify(tax)).toBeDefined();
      expect(Number(tax['amount'])).toBeLessThan(Number(dividend!['amount']));
    }
  });

  it('US-dollar dividends on a euro account, and bond coupons inside 2026-Q3', () => {
    expect(book.transactions.rows.some((row) =>
      row['type'] === 'dividend' && row['currency'] === 'USD' && accountRow(row['account']!)['base_currency'] === 'EUR')).toBe(true);
    const coupons = book.transactions.rows.filter((row) => row['type'] === 'interest' && row['date']! >= PERIOD_START);
    expect(coupons.length).toBeGreaterThan(0);
    expect(coupons.every((row) => replay.instruments.get(row['instrument']!)!.multiplier === 0.01)).toBe(true);
  });

  it('buys and sells with commissions, some giving amount and some not', () => {
    const trades = book.transactions.rows.filter((row) => row['type'] === 'buy' || row['type'] === 'sell');
    expect(trades.every((row) => Number(row['fees']) > 0)).toBe(true);
    expect(trades.some((row) => row['type'] === 'sell' && row['date']! >= PERIOD_START)).toBe(true);
    const withAmount = trades.filter((row) => row['amount'] !== '').length;
    expect(withAmount).toBeGreaterThan(trades.length * 0.2);
    expect(withAmount).toBeLessThan(trades.length * 0.8);
  });

  it('a stale price: one held instrument last priced about three weeks before the period end, every other held one priced on it', () => {
    const held = new Set(book.holdings.rows.map((row) => row['instrument']!));
    const stale = [...held].filter((id) => replay.prices.get(id)!.lastDate !== PERIOD_END);
    expect(stale.length).toBe(1);
    const age = daysBetween(replay.prices.get(stale[0]!)!.lastDate!, PERIOD_END);
    expect(age).toBeGreaterThanOrEqual(15);
    expect(age).toBeLessThanOrEqual(30);
  });

  it('holdings.csv at the period end matches the transactions except one deliberate break', () => {
    expect(new Set(book.holdings.rows.map((row) => row['date']))).toEqual(new Set([PERIOD_END]));
    const breaks: string[] = [];
    for (const account of book.accounts.rows.map((row) => row['account']!)) {
      const derived = replay.stateAt(account, PERIOD_END).positions;
      const reported = new Map(book.holdings.rows.filter((row) => row['account'] === account).map((row) => [row['instrument']!, Number(row['quantity'])]));
      for (const id of new Set([...derived.keys(), ...reported.keys()])) {
        if (Math.abs((derived.get(id) ?? 0) - (reported.get(id) ?? 0)) > 1e-6) breaks.push(`${account} ${id} ${(derived.get(id) ?? 0) - (reported.get(id) ?? 0)}`);
      }
    }
    expect(breaks).toEqual(['TF-1011 EQ-CORVANE 25']);
    const percentQuoted = book.holdings.rows.filter((row) => replay.instruments.get(row['instrument']!)!.multiplier === 0.01);
    expect(percentQuoted.length).toBeGreaterThan(0);
  });

  it('mandate breaches only where intended: TF-1003 far overweight equity, TF-1010 one position above the limit', () => {
    const mandates = book.mandatesYaml as Record<string, Record<string, any>>;
    const breaches: string[] = [];
    for (const row of book.accounts.rows) {
      const mandate = mandates[row['mandate']!]!;
      const value = replay.value(replay.stateAt(row['account']!, PERIOD_END), PERIOD_END);
      for (const [assetClass, [low, high]] of Object.entries(mandate['allocation'] as Record<string, [number, number]>)) {
        const weight = (value.byClass.get(assetClass) ?? 0) / value.total;
        if (weight < low || weight > high) breaches.push(`${row['account']} allocation.${assetClass}`);
      }
      const largest = Math.max(...value.byInstrument.values()) / value.total;
      if (mandate['max_position'] !== undefined && largest > mandate['max_position']) breaches.push(`${row['account']} max_position`);
    }
    expect(breaches).toEqual(['TF-1003 allocation.bonds', 'TF-1003 allocation.equity', 'TF-1003 max_position', 'TF-1010 max_position']);
    const equityShare = (() => {
      const value = replay.value(replay.stateAt('TF-1003', PERIOD_END), PERIOD_END);
      return value.byClass.get('equity')! / value.total;
    })();
    expect(equityShare).toBeGreaterThan(0.6);
  });
});

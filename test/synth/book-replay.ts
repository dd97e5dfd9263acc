/**
 * Test helper: reads a written book folder back from its files (csv-parse,
 * yaml) and replays every account from transactions.csv under the book
 * format's rules, independently of the generator's own ledger. It records
 * every rule a generated book must keep, so tests can assert the list of
 * violations is empty.
 */
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { parse as parseCsv } from 'csv-parse/sync';
import { parse as parseYaml } from 'yaml';

export type Row = Readonly<Record<string, string>>;

export interface CsvFile {
  readonly header: readonly string[];
  readonly rows: readonly Row[];
}

export function readCsv(file: string): CsvFile {
  const text = readFileSync(file, 'utf8');
  const records = parseCsv(text, { relaxQuotes: false }) as string[][];
  const [header, ...body] = records;
  if (!header) throw new Error(`${file} is empty`);
  return {
    header,
    rows: body.map((record) => Object.fromEntries(header.map((column, index) => [column, record[index] ?? '']))),
  };
}

export function readYaml(file: string): Record<string, unknown> {
  return parseYaml(readFileSync(file, 'utf8')) as Record<string, unknown>;
}

export interface BookFiles {
  readonly bookYaml: Record<string, unknown>;
  readonly mandatesYaml: Record<string, unknown>;
  readonly accounts: CsvFile;
  readonly instruments: CsvFile;
  readonly prices: CsvFile;
  readonly fx: CsvFile;
  readonly transactions: CsvFile;
  readonly holdings: CsvFile;
}

export function readBook(dir: string): BookFiles {
  return {
    bookYaml: readYaml(path.join(dir, 'book.yaml')),
    mandatesYaml: readYaml(path.join(dir, 'mandates.yaml')),
    accounts: readCsv(path.join(dir, 'accounts.csv')),
    instruments: readCsv(path.join(dir, 'instruments.csv')),
    prices: readCsv(path.join(dir, 'prices.csv')),
    fx: readCsv(path.join(dir, 'fx.csv')),
    transactions: readCsv(path.join(dir, 'transactions.csv')),
    holdings: readCsv(path.join(dir, 'holdings.csv')),
  };
}

interface InstrumentRow {
  readonly id: string;
  readonly assetClass: string;
  readonly currency: string;
  readonly kind: string;
  readonly multiplier: number;
}

/** A dated series with "latest on or before" lookup. */
class DatedSeries {
  private readonly dates: string[] = [];
  private readonly values: number[] = [];
  readonly exact = new Map<string, number>();
  add(date: string, value: number): void {
    this.dates.push(date);
    this.values.push(value);
    this.exact.set(date, value);
  }
  sort(): void {
    const order = this.dates.map((_, index) => index).sort((left, right) => (this.dates[left]! < this.dates[right]! ? -1 : 1));
    const dates = order.map((index) => this.dates[index]!);
    const values = order.map((index) => this.values[index]!);
    this.dates.splice(0, this.dates.length, ...dates);
    this.values.splice(0, this.values.length, ...values);
  }
  /** Latest value on or before `date` and its date, or null. */
  onOrBefore(date: string): { value: number; date: string } | null {
    let low = 0;
    let high = this.dates.length - 1;
    let found = -1;
    while (low <= high) {
      const middle = (low + high) >> 1;
      if (this.dates[middle]! <= date) {
        found = middle;
        low = middle + 1;
      } else high = middle - 1;
    }
    return found < 0 ? null : { value: this.values[found]!, date: this.dates[found]! };
  }
  get firstDate(): string | undefined {
    return this.dates[0];
  }
  get lastDate(): string | undefined {
    return this.dates[this.dates.length - 1];
  }
}

export interface AccountState {
  readonly baseCurrency: string;
  readonly mandate: string;
  readonly positions: Map<string, number>;
  readonly cash: Map<string, number>;
}

export interface Replay {
  readonly violations: string[];
  readonly instruments: ReadonlyMap<string, InstrumentRow>;
  readonly prices: ReadonlyMap<string, DatedSeries>;
  /** State of every account after all its transactions up to and including `asOf` (default: all). */
  stateAt(account: string, asOf: string): AccountState;
  /** Value in base currency of a state at a date, and the value per asset class and per instrument. */
  value(state: AccountState, date: string): { total: number; byClass: Map<string, number>; byInstrument: Map<string, number> };
  fxRate(from: string, to: string, date: string): number;
}

const NUMBER = /^\d+(\.\d+)?$/;

/** Replays a book read back from its files; fills `violations` with every broken rule found. */
export function replayBook(book: BookFiles): Replay {
  const violations: string[] = [];
  const instruments = new Map<string, InstrumentRow>();
  for (const row of book.instruments.rows) {
    instruments.set(row['instrument']!, {
      id: row['instrument']!,
      assetClass: row['asset_class']!,
      currency: row['currency']!,
      kind: row['kind']!,
      multiplier: row['multiplier'] === '' ? 1 : Number(row['multiplier']),
    });
  }
  const prices = new Map<string, DatedSeries>();
  for (const row of book.prices.rows) {
    const id = row['instrument']!;
    if (!instruments.has(id)) violations.push(`prices.csv: unknown instrument ${id}`);
    let series = prices.get(id);
    if (!series) prices.set(id, (series = new DatedSeries()));
    series.add(row['date']!, Number(row['price']));
  }
  for (const series of prices.values()) series.sort();
  const eurQuotes = new Map<string, DatedSeries>();
  for (const row of book.fx.rows) {
    if (row['from'] !== 'EUR') violations.push(`fx.csv: quote not from EUR: ${row['from']}/${row['to']}`);
    let series = eurQuotes.get(row['to']!);
    if (!series) eurQuotes.set(row['to']!, (series = new DatedSeries()));
    series.add(row['date']!, Number(row['rate']));
  }
  for (const series of eurQuotes.values()) series.sort();
  const eurTo = (currency: string, date: string): number => {
    if (currency === 'EUR') return 1;
    const quote = eurQuotes.get(currency)?.onOrBefore(date);
    if (!quote) throw new Error(`no EUR/${currency} on or before ${date}`);
    return quote.value;
  };
  const fxRate = (from: string, to: string, date: string): number => eurTo(to, date) / eurTo(from, date);

  const accounts = new Map(book.accounts.rows.map((row) => [row['account']!, row]));
  const transactionsByAccount = new Map<string, { row: Row; line: number }[]>();
  book.transactions.rows.forEach((row, index) => {
    const account = row['account']!;
    if (!accounts.has(account)) violations.push(`transactions.csv:${index + 2}: unknown account ${account}`);
    const list = transactionsByAccount.get(account) ?? [];
    list.push({ row, line: index + 2 });
    transactionsByAccount.set(account, list);
  });
  for (const list of transactionsByAccount.values()) {
    for (let index = 1; index < list.length; index++) {
      if (list[index]!.row['date']! < list[index - 1]!.row['date']!) violations.push(`transactions.csv:${list[index]!.line}: dates of ${list[index]!.row['account']} not ascending`);
    }
  }

  const replayAccount = (account: string, asOf: string | null, collect: boolean): AccountState => {
    const accountRow = accounts.get(account);
    if (!accountRow) throw new Error(`unknown account ${account}`);
    const base = accountRow['base_currency']!;
    const positions = new Map<string, number>();
    const cash = new Map<string, number>();
    const list = transactionsByAccount.get(account) ?? [];
    const problem = (line: number, message: string): void => {
      if (collect) violations.push(`transactions.csv:${line}: ${message}`);
    };
    const closeDay = (date: string | undefined): void => {
      if (!collect || date === undefined) return;
      for (const [currency, balance] of cash) if (balance < 0) problem(0, `${account} ${currency} cash ${balance.toFixed(2)} at the close of ${date}`);
    };
    let currentDate: string | undefined;
    for (const { row, line } of list) {
      const date = row['date']!;
      if (asOf !== null && date > asOf) break;
      if (date !== currentDate) {
        closeDay(currentDate);
        currentDate = date;
      }
      const type = row['type']!;
      for (const column of ['quantity', 'price', 'fees', 'amount']) {
        const text = row[column]!;
        if (text !== '' && !NUMBER.test(text)) problem(line, `${column} "${text}" is not a non-negative plain decimal`);
      }
      const instrumentId = row['instrument']!;
      const instrument = instrumentId === '' ? null : instruments.get(instrumentId) ?? null;
      if (instrumentId !== '' && !instrument) problem(line, `unknown instrument ${instrumentId}`);
      const quantity = Number(row['quantity'] || 0);
      const price = Number(row['price'] || 0);
      const fees = Number(row['fees'] || 0);
      const amount = row['amount'] === '' ? null : Number(row['amount']);
      const currency = row['currency'] || (['buy', 'sell', 'transfer_in', 'transfer_out'].includes(type) ? instrument?.currency ?? '' : base);
      const addCash = (delta: number): void => {
        cash.set(currency, (cash.get(currency) ?? 0) + delta);
      };
      const move = (delta: number): void => {
        if (!instrument) return;
        if (instrument.kind === 'index') problem(line, `${type} of the index ${instrument.id}`);
        const after = (positions.get(instrument.id) ?? 0) + delta;
        if (after < -1e-9) problem(line, `${type} of ${quantity} ${instrument.id} exceeds the holding`);
        if (Math.abs(after) <= 1e-9) positions.delete(instrument.id);
        else positions.set(instrument.id, after);
      };
      switch (type) {
        case 'deposit':
        case 'dividend':
        case 'interest':
          if (amount === null || !(amount > 0)) problem(line, `${type} needs a positive amount`);
          addCash(amount ?? 0);
          break;
        case 'withdrawal':
        case 'fee':
        case 'tax':
          if (amount === null || !(amount > 0)) problem(line, `${type} needs a positive amount`);
          addCash(-(amount ?? 0));
          break;
        case 'transfer_in':
        case 'transfer_out': {
          if (!instrument || !(quantity > 0)) problem(line, `${type} needs an instrument and a positive quantity`);
          if (instrument && !prices.get(instrument.id)?.exact.has(date)) problem(line, `${type} of ${instrument.id} on a day without a price`);
          move(type === 'transfer_in' ? quantity : -quantity);
          break;
        }
        case 'buy':
        case 'sell': {
          if (!instrument || !(quantity > 0) || !(price > 0)) {
            problem(line, `${type} needs an instrument, a positive quantity and a price`);
            break;
          }
          const published = prices.get(instrument.id)?.exact.get(date);
          if (published !== price) problem(line, `${type} of ${instrument.id} at ${price}, prices.csv has ${published} on ${date}`);
          const gross = quantity * price * instrument.multiplier;
          const effect = type === 'buy' ? gross + fees : gross - fees;
          if (amount !== null && Math.abs(amount - effect) > 0.01) problem(line, `${type} amount ${amount} differs from ${effect.toFixed(4)}`);
          if (type === 'sell' && effect < 0) problem(line, 'sale proceeds below zero');
          move(type === 'buy' ? quantity : -quantity);
          addCash(type === 'buy' ? -effect : effect);
          break;
        }
        default:
          problem(line, `unknown type ${type}`);
      }
    }
    closeDay(currentDate);
    return { baseCurrency: base, mandate: accountRow['mandate']!, positions, cash };
  };

  for (const account of accounts.keys()) replayAccount(account, null, true);

  const value = (state: AccountState, date: string) => {
    const byClass = new Map<string, number>();
    const byInstrument = new Map<string, number>();
    let total = 0;
    for (const [id, quantity] of state.positions) {
      const instrument = instruments.get(id)!;
      const price = prices.get(id)?.onOrBefore(date);
      if (!price) throw new Error(`${id} held without a price on or before ${date}`);
      const amount = quantity * price.value * instrument.multiplier * fxRate(instrument.currency, state.baseCurrency, date);
      total += amount;
      byInstrument.set(id, amount);
      byClass.set(instrument.assetClass, (byClass.get(instrument.assetClass) ?? 0) + amount);
    }
    for (const [currency, balance] of state.cash) {
      const amount = balance * fxRate(currency, state.baseCurrency, date);
      total += amount;
      byClass.set('cash', (byClass.get('cash') ?? 0) + amount);
    }
    return { total, byClass, byInstrument };
  };

  return {
    violations,
    instruments,
    prices,
    stateAt: (account, asOf) => replayAccount(account, asOf, false),
    value,
    fxRate,
  };
}

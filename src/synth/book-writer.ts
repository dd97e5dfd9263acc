/**
 * Writes a generated book folder: the two YAML files, the instrument master,
 * prices and FX from the simulated market, then accounts, transactions and
 * holdings account by account (so a large book is streamed, not held in
 * memory). Column names and order are those of the book format.
 */
import { mkdir } from 'node:fs/promises';
import path from 'node:path';
import { stringify } from 'yaml';
import { isoDate } from '../dates.ts';
import type { AccountPlan, AccountSimulation, TransactionRow } from './account.ts';
import { CsvFileWriter, formatDecimal, writeTextFile } from './csv-writer.ts';
import type { InstrumentSpec } from './house.ts';
import type { Market } from './market.ts';

export const ACCOUNT_COLUMNS = ['account', 'client', 'mandate', 'base_currency', 'adviser', 'email', 'inception', 'locale'] as const;
export const INSTRUMENT_COLUMNS = ['instrument', 'name', 'asset_class', 'currency', 'kind', 'multiplier', 'proxy'] as const;
export const PRICE_COLUMNS = ['date', 'instrument', 'price'] as const;
export const FX_COLUMNS = ['date', 'from', 'to', 'rate'] as const;
export const TRANSACTION_COLUMNS = ['account', 'date', 'type', 'instrument', 'quantity', 'price', 'fees', 'amount', 'currency', 'note'] as const;
export const HOLDING_COLUMNS = ['account', 'date', 'instrument', 'quantity'] as const;

/** Decimal places written for quantities, prices and rates (every generated value has fewer, so nothing is rounded on the way out). */
const MAX_DECIMALS = 6;

function number(value: number | null): string {
  return value === null ? '' : formatDecimal(value, MAX_DECIMALS);
}

/** YAML text of a plain object, with a comment header. */
export function yamlText(header: string, content: Record<string, unknown>): string {
  const comment = header
    .split('\n')
    .map((line) => (line === '' ? '#' : `# ${line}`))
    .join('\n');
  return `${comment}\n${stringify(content, { lineWidth: 100 })}`;
}

export interface HoldingsBreak {
  readonly account: string;
  readonly instrument: string;
  /** Quantity the custodian reports instead of the derived one. */
  readonly reportedQuantity: number;
}

export class BookWriter {
  private constructor(
    private readonly accounts: CsvFileWriter,
    private readonly transactions: CsvFileWriter,
    private readonly holdings: CsvFileWriter | null,
    private readonly others: Map<string, number>,
  ) {}

  /**
   * Creates `dir` if needed and writes book.yaml, mandates.yaml,
   * instruments.csv, prices.csv and fx.csv; accounts follow through `addAccount`.
   */
  static async create(
    dir: string,
    options: {
      readonly bookYaml: string;
      readonly mandatesYaml: string;
      readonly instruments: readonly InstrumentSpec[];
      readonly market: Market;
      readonly withHoldings: boolean;
    },
  ): Promise<BookWriter> {
    await mkdir(dir, { recursive: true });
    await writeTextFile(path.join(dir, 'book.yaml'), options.bookYaml);
    await writeTextFile(path.join(dir, 'mandates.yaml'), options.mandatesYaml);
    const others = new Map<string, number>();
    others.set('instruments.csv', await writeInstruments(path.join(dir, 'instruments.csv'), options.instruments));
    others.set('prices.csv', await writePrices(path.join(dir, 'prices.csv'), options.instruments, options.market));
    others.set('fx.csv', await writeFx(path.join(dir, 'fx.csv'), options.market));
    const accounts = await CsvFileWriter.create(path.join(dir, 'accounts.csv'), ACCOUNT_COLUMNS);
    const transactions = await CsvFileWriter.create(path.join(dir, 'transactions.csv'), TRANSACTION_COLUMNS);
    const holdings = options.withHoldings ? await CsvFileWriter.create(path.join(dir, 'holdings.csv'), HOLDING_COLUMNS) : null;
    return new BookWriter(accounts, transactions, holdings, others);
  }

  /**
   * Writes one account's row, its transactions and (when holdings are
   * written) its positions at `holdingsDate`, with the custodian's
   * quantity replaced where `breaks` says so.
   */
  async addAccount(simulation: AccountSimulation, inception: string | null, holdingsDate: string, breaks: readonly HoldingsBreak[] = []): Promise<void> {
    const plan: AccountPlan = simulation.plan;
    this.accounts.add([plan.id, plan.client, plan.mandate, plan.baseCurrency, plan.adviser, plan.email ?? '', inception ?? '', plan.locale ?? '']);
    for (const row of simulation.rows) this.transactions.add(transactionFields(row));
    if (this.holdings) {
      const positions = [...simulation.heldPositions()].sort(([left], [right]) => (left < right ? -1 : left > right ? 1 : 0));
      for (const [instrument, quantity] of positions) {
        const broken = breaks.find((entry) => entry.account === plan.id && entry.instrument === instrument);
        const reported = broken ? broken.reportedQuantity : quantity;
        if (reported > 0) this.holdings.add([plan.id, holdingsDate, instrument, number(reported)]);
      }
    }
    await this.transactions.flushIfFull();
    await this.holdings?.flushIfFull();
  }

  /** Closes every file; returns the data rows of each CSV file written. */
  async close(): Promise<Record<string, number>> {
    const files: Record<string, number> = Object.fromEntries(this.others);
    files['accounts.csv'] = await this.accounts.close();
    files['transactions.csv'] = await this.transactions.close();
    if (this.holdings) files['holdings.csv'] = await this.holdings.close();
    return files;
  }

  /** Removes the unfinished temporary files after a failure. */
  async abandon(): Promise<void> {
    await this.accounts.abandon();
    await this.transactions.abandon();
    await this.holdings?.abandon();
  }
}

const isoDates = new Map<number, string>();

/** `isoDate` with a cache: a book repeats the same few thousand dates. */
function cachedIsoDate(day: number): string {
  let text = isoDates.get(day);
  if (text === undefined) {
    text = isoDate(day);
    isoDates.set(day, text);
  }
  return text;
}

function transactionFields(row: TransactionRow): string[] {
  return [
    row.account,
    cachedIsoDate(row.day),
    row.type,
    row.instrument ?? '',
    number(row.quantity),
    number(row.price),
    number(row.fees),
    number(row.amount),
    row.currency ?? '',
    row.note,
  ];
}

async function writeInstruments(file: string, instruments: readonly InstrumentSpec[]): Promise<number> {
  const writer = await CsvFileWriter.create(file, INSTRUMENT_COLUMNS);
  for (const instrument of instruments) {
    writer.add([
      instrument.id,
      instrument.name,
      instrument.assetClass,
      instrument.currency,
      instrument.kind,
      instrument.multiplier === 1 ? '' : number(instrument.multiplier),
      instrument.proxy ?? '',
    ]);
  }
  return writer.close();
}

async function writePrices(file: string, instruments: readonly InstrumentSpec[], market: Market): Promise<number> {
  const writer = await CsvFileWriter.create(file, PRICE_COLUMNS);
  const dates = Array.from(market.days, (day) => isoDate(day));
  for (const instrument of instruments) {
    const series = market.prices.get(instrument.id);
    if (!series) throw new Error(`Internal error: no simulated prices for ${instrument.id}; please report this`);
    for (let dayIndex = 0; dayIndex < series.length; dayIndex++) {
      const price = series[dayIndex]!;
      if (!Number.isNaN(price)) writer.add([dates[dayIndex]!, instrument.id, number(price)]);
    }
    await writer.flushIfFull();
  }
  return writer.close();
}

async function writeFx(file: string, market: Market): Promise<number> {
  const writer = await CsvFileWriter.create(file, FX_COLUMNS);
  const dates = Array.from(market.days, (day) => isoDate(day));
  for (const [pair, rates] of market.fx) {
    const [from, to] = pair.split('/') as [string, string];
    for (let dayIndex = 0; dayIndex < rates.length; dayIndex++) writer.add([dates[dayIndex]!, from, to, number(rates[dayIndex]!)]);
    await writer.flushIfFull();
  }
  return writer.close();
}

/**
 * loadBook: one book folder → the typed, frozen Book plus its diagnostics.
 *
 * Order of work, each stage needing the one before:
 * 1. read every file (a missing folder or required file stops here);
 * 2. parse book.yaml and mandates.yaml, split every CSV file and check its
 *    header (invalid YAML, malformed CSV, a missing column stop here);
 * 3. book.yaml settings → instruments.csv master → references from book.yaml
 *    and mandates.yaml into the master (any error stops here);
 * 4. accounts, prices, fx, transactions, holdings: row problems are scoped to
 *    an account, instrument or currency and collected, never thrown.
 * Problems are collected within a stage and thrown together as one
 * BookError, so the user sees all of them at once.
 */
import { readFile, stat } from 'node:fs/promises';
import { isUtf8 } from 'node:buffer';
import path from 'node:path';
import { BookError, type Diagnostic } from '../errors.ts';
import { readAccounts } from './accounts.ts';
import { readCsvTable, type CsvColumns, type CsvTable } from './csv.ts';
import { readMandates } from './mandates.ts';
import { readInstruments } from './master.ts';
import {
  ACCOUNT_COLUMNS, FX_COLUMNS, HOLDING_COLUMNS, INSTRUMENT_COLUMNS, PRICE_COLUMNS, TRANSACTION_COLUMNS,
} from './schemas.ts';
import { readFx, readPrices } from './series.ts';
import { checkSettingsReferences, readSettings } from './settings.ts';
import { readHoldings, readTransactions } from './transactions.ts';
import type { Book } from './types.ts';
import { parseYamlFile, type YamlFile } from './yaml.ts';

const CSV_FILES = {
  'accounts.csv': ACCOUNT_COLUMNS,
  'instruments.csv': INSTRUMENT_COLUMNS,
  'prices.csv': PRICE_COLUMNS,
  'fx.csv': FX_COLUMNS,
  'transactions.csv': TRANSACTION_COLUMNS,
  'holdings.csv': HOLDING_COLUMNS,
} as const satisfies Record<string, CsvColumns>;

type CsvFileName = keyof typeof CSV_FILES;
const YAML_FILES = ['book.yaml', 'mandates.yaml'] as const;
type YamlFileName = (typeof YAML_FILES)[number];
type BookFileName = YamlFileName | CsvFileName;

const OPTIONAL_FILES: ReadonlySet<BookFileName> = new Set(['holdings.csv']);

/** Reads and validates the book in `dir`. Throws BookError when the book cannot be used at all. */
export async function loadBook(dir: string): Promise<Book> {
  const contents = await readBookFiles(dir);
  const stop = new BookErrors();

  // Stage 2: syntax and headers.
  const yaml = new Map<YamlFileName, YamlFile>();
  for (const file of YAML_FILES) {
    const parsed = stop.attempt(() => parseYamlFile(file, decodeText(file, contents.get(file)!)));
    if (parsed !== null) yaml.set(file, parsed);
  }
  const tables = new Map<CsvFileName, CsvTable>();
  for (const file of Object.keys(CSV_FILES) as CsvFileName[]) {
    const bytes = contents.get(file);
    if (bytes === undefined) continue;
    const table = stop.attempt(() => readCsvTable(file, bytes, CSV_FILES[file]));
    if (table !== null) tables.set(file, table);
  }
  const bookYaml = yaml.get('book.yaml');
  const mandatesYaml = yaml.get('mandates.yaml');
  const instrumentsTable = tables.get('instruments.csv');

  // Stage 3: settings, master, mandates.
  const settingsResult = bookYaml ? readSettings(bookYaml) : null;
  stop.add(settingsResult?.errors ?? []);
  const settings = settingsResult?.settings ?? null;
  const master = settings && instrumentsTable ? readInstruments(instrumentsTable, new Set(settings.assetClasses.keys())) : null;
  stop.add(master?.errors ?? []);
  if (bookYaml && settings && master) stop.add(checkSettingsReferences(bookYaml, master.instruments));
  const mandatesResult = mandatesYaml && settings && master
    ? readMandates(mandatesYaml, { assetClassIds: new Set(settings.assetClasses.keys()), instruments: master.instruments })
    : null;
  stop.add(mandatesResult?.errors ?? []);
  stop.throwIfAny();
  if (!settings || !master || !mandatesResult?.mandates) {
    throw new Error('Internal error: book stage 3 passed without settings, master or mandates; please report this');
  }
  const instruments = master.instruments;
  const mandates = mandatesResult.mandates;

  // Stage 4: scoped rows.
  const accountsResult = readAccounts(tables.get('accounts.csv')!, new Set(mandates.keys()));
  const prices = readPrices(tables.get('prices.csv')!, instruments);
  const fx = readFx(tables.get('fx.csv')!);
  const accountsById = new Map(accountsResult.accounts.map((account) => [account.id, account] as const));
  const rowsContext = { accounts: accountsById, rejectedAccounts: new Set(accountsResult.rejected), instruments };
  const transactions = readTransactions(tables.get('transactions.csv')!, rowsContext);
  const holdingsTable = tables.get('holdings.csv');
  const holdings = holdingsTable ? readHoldings(holdingsTable, rowsContext) : null;
  for (const result of [accountsResult, prices, fx, transactions, holdings]) stop.add(result?.bookErrors ?? []);
  stop.throwIfAny();

  const rejectedAccounts = [...new Set([
    ...accountsResult.rejected, ...transactions.unknownAccounts, ...(holdings?.unknownAccounts ?? []),
  ])];
  const diagnostics: Diagnostic[] = [
    ...[...tables.values()].flatMap((table) => table.warnings),
    ...accountsResult.diagnostics,
    ...prices.diagnostics,
    ...fx.diagnostics,
    ...transactions.diagnostics,
    ...(holdings?.diagnostics ?? []),
  ];
  return Object.freeze({
    dir,
    settings,
    mandates,
    accounts: Object.freeze([...accountsResult.accounts]),
    instruments,
    prices: prices.series,
    fx: fx.series,
    transactions: transactions.byAccount,
    holdings: holdings?.byAccount ?? new Map(),
    hasHoldingsFile: holdings !== null,
    diagnostics: Object.freeze(diagnostics),
    rejectedAccounts: Object.freeze(rejectedAccounts),
  });
}

/** Book errors collected within a stage, thrown together. */
class BookErrors {
  private readonly collected: Diagnostic[] = [];

  add(diagnostics: readonly Diagnostic[]): void {
    this.collected.push(...diagnostics);
  }

  /** Runs `read`; a BookError it throws is collected and null returned. */
  attempt<T>(read: () => T): T | null {
    try {
      return read();
    } catch (error) {
      if (!(error instanceof BookError)) throw error;
      this.add(error.diagnostics);
      return null;
    }
  }

  throwIfAny(): void {
    if (this.collected.length > 0) throw new BookError(this.collected);
  }
}

function bookFileError(file: string, message: string): Diagnostic {
  return { severity: 'error', scope: { kind: 'book' }, file, line: null, message };
}

/** Reads every book file; a missing optional file is simply absent from the result. */
async function readBookFiles(dir: string): Promise<Map<BookFileName, Uint8Array>> {
  await checkFolder(dir);
  const names: readonly BookFileName[] = [...YAML_FILES, ...(Object.keys(CSV_FILES) as CsvFileName[])];
  const results = await Promise.all(names.map(async (file) => {
    try {
      return { file, bytes: await readFile(path.join(dir, file)) as Uint8Array, problem: null };
    } catch (error) {
      const code = (error as NodeJS.ErrnoException).code;
      if (code === 'ENOENT' && OPTIONAL_FILES.has(file)) return { file, bytes: null, problem: null };
      return { file, bytes: null, problem: bookFileError(file, fileProblem(file, dir, code)) };
    }
  }));
  const problems = results.flatMap((result) => (result.problem ? [result.problem] : []));
  if (problems.length > 0) throw new BookError(problems);
  return new Map(results.flatMap((result) => (result.bytes ? [[result.file, result.bytes] as const] : [])));
}

async function checkFolder(dir: string): Promise<void> {
  let isFolder: boolean;
  try {
    isFolder = (await stat(dir)).isDirectory();
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code;
    const found = code === 'ENOENT' ? 'no such folder' : `a folder that cannot be read (${code ?? 'unknown error'})`;
    throw new BookError([bookFileError(dir, `found ${found}, expected a book folder holding book.yaml, mandates.yaml and the CSV files; check the path and its permissions`)]);
  }
  if (!isFolder) {
    throw new BookError([bookFileError(dir, 'found a file, expected a book folder holding book.yaml, mandates.yaml and the CSV files; give the folder, not a file in it')]);
  }
}

function fileProblem(file: string, dir: string, code: string | undefined): string {
  switch (code) {
    case 'ENOENT':
      return `found no ${file} in the book folder ${dir}, expected it there (every book needs it); add the file`;
    case 'EISDIR':
      return `found a folder named ${file}, expected a file; replace it with the file`;
    case 'EACCES':
    case 'EPERM':
      return `found ${file} but may not read it (permission denied), expected a readable file; change its permissions`;
    default:
      return `found ${file} but could not read it (${code ?? 'unknown error'}), expected a readable file; check the disk and the file`;
  }
}

const BOM = '\uFEFF';

/** UTF-8 text of a YAML file without its BOM; invalid UTF-8 is a book error. */
function decodeText(file: string, bytes: Uint8Array): string {
  if (!isUtf8(bytes)) {
    throw new BookError([bookFileError(file, 'found bytes that are not UTF-8, expected a UTF-8 text file; save the file again as UTF-8')]);
  }
  const text = new TextDecoder('utf-8', { ignoreBOM: true }).decode(bytes);
  return text.startsWith(BOM) ? text.slice(1) : text;
}

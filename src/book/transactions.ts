/**
 * transactions.csv and holdings.csv → per-account rows.
 *
 * Every problem in a row is an error scoped to the row's account: the row is
 * left out and the diagnostic fails the account, never the run. Rows of an
 * account that is not in accounts.csv reject that account id (one diagnostic
 * per unknown id, naming its first line and its number of rows). Rows of an
 * account already rejected in accounts.csv are not checked further: the
 * account has failed already.
 */
import type { Diagnostic, DiagnosticScope } from '../errors.ts';
import type { CsvRow, CsvTable } from './csv.ts';
import { BOOK_DEFAULTS } from './defaults.ts';
import { describeCell, diagnostic } from './issues.ts';
import { rowKey, validateRow } from './rows.ts';
import { holdingRowSchema, TRANSACTION_FIELDS, transactionRowSchema, type TransactionField } from './schemas.ts';
import type { Account, HoldingRow, Instrument, Transaction, TransactionType } from './types.ts';

export interface AccountRowsContext {
  readonly accounts: ReadonlyMap<string, Account>;
  /** Ids rejected in accounts.csv. */
  readonly rejectedAccounts: ReadonlySet<string>;
  readonly instruments: ReadonlyMap<string, Instrument>;
}

export interface AccountRowsResult<Row> {
  /** Every valid account, each with its rows (possibly none). */
  readonly byAccount: ReadonlyMap<string, readonly Row[]>;
  /** Account ids used in the file but absent from accounts.csv, in order of first use. */
  readonly unknownAccounts: readonly string[];
  /** Scope account. */
  readonly diagnostics: readonly Diagnostic[];
  /** Scope book: rows with an empty account. */
  readonly bookErrors: readonly Diagnostic[];
}

/** Cash rows take the account's base currency by default; trades and transfers the instrument's. */
const TRADES_AND_TRANSFERS: ReadonlySet<TransactionType> = new Set(['buy', 'sell', 'transfer_in', 'transfer_out']);

const TRANSACTION_FIELD_NAMES: readonly TransactionField[] = ['instrument', 'quantity', 'price', 'fees', 'amount'];

export function readTransactions(table: CsvTable, context: AccountRowsContext): AccountRowsResult<Transaction> {
  const schema = transactionRowSchema(context.instruments);
  return readAccountRows(table, context, (row, account, scope, diagnostics) => {
    const fields = { ...row.fields, type: (row.fields.type ?? '').trim() };
    const parsed = validateRow(table, { ...row, fields }, schema, scope, diagnostics);
    if (parsed === null) return null;
    const type = parsed.type;
    const used = new Set<TransactionField>([...TRANSACTION_FIELDS[type].required, ...TRANSACTION_FIELDS[type].optional]);
    for (const field of TRANSACTION_FIELD_NAMES) {
      const text = row.fields[field] ?? '';
      if (used.has(field) || text.trim() === '') continue;
      diagnostics.push(diagnostic('warning', scope, table.file, row.line, field,
        `found ${describeCell(text)}, expected nothing: a ${type} does not use ${field}, so the value is ignored; remove it or check the type`));
    }
    const values = parsed as unknown as {
      readonly instrument: string | null; readonly quantity: number | null; readonly price: number | null;
      readonly fees: number | null; readonly amount: number | null;
    };
    const instrumentId = used.has('instrument') ? values.instrument : null;
    const instrument = instrumentId === null ? undefined : context.instruments.get(instrumentId);
    const defaultCurrency = TRADES_AND_TRANSFERS.has(type) && instrument !== undefined ? instrument.currency : account.baseCurrency;
    return Object.freeze({
      account: account.id,
      day: parsed.date,
      type,
      instrument: instrumentId,
      quantity: used.has('quantity') ? values.quantity ?? 0 : 0,
      price: used.has('price') ? values.price ?? 0 : 0,
      fees: used.has('fees') ? values.fees ?? BOOK_DEFAULTS.tradeFees : 0,
      amount: used.has('amount') ? values.amount : null,
      currency: parsed.currency ?? defaultCurrency,
      note: parsed.note,
      line: row.line,
    });
  });
}

export function readHoldings(table: CsvTable, context: AccountRowsContext): AccountRowsResult<HoldingRow> {
  const schema = holdingRowSchema(context.instruments);
  const firstLineOfPosition = new Map<string, number>();
  return readAccountRows(table, context, (row, account, scope, diagnostics) => {
    const parsed = validateRow(table, row, schema, scope, diagnostics);
    if (parsed === null) return null;
    const position = `${account.id}\u0000${parsed.date}\u0000${parsed.instrument}`;
    const firstLine = firstLineOfPosition.get(position);
    if (firstLine !== undefined) {
      diagnostics.push(diagnostic('error', scope, table.file, row.line, 'instrument',
        `found a second row for "${parsed.instrument}" on the same date (first on line ${firstLine}), expected one quantity per account, date and instrument; add the quantities into one row`));
      return null;
    }
    firstLineOfPosition.set(position, row.line);
    return Object.freeze({ account: account.id, day: parsed.date, instrument: parsed.instrument, quantity: parsed.quantity, line: row.line });
  });
}

type RowReader<Row> = (row: CsvRow, account: Account, scope: DiagnosticScope, diagnostics: Diagnostic[]) => Row | null;

function readAccountRows<Row extends { readonly day: number }>(
  table: CsvTable,
  context: AccountRowsContext,
  readRow: RowReader<Row>,
): AccountRowsResult<Row> {
  const diagnostics: Diagnostic[] = [];
  const bookErrors: Diagnostic[] = [];
  const byAccount = new Map<string, Row[]>();
  for (const id of context.accounts.keys()) byAccount.set(id, []);
  const unknown = new Map<string, { readonly firstLine: number; rows: number }>();
  for (const row of table.rows) {
    const id = rowKey(table, row, 'account', 'an account id', bookErrors);
    if (id === null || context.rejectedAccounts.has(id)) continue;
    const account = context.accounts.get(id);
    if (account === undefined) {
      const seen = unknown.get(id);
      if (seen === undefined) unknown.set(id, { firstLine: row.line, rows: 1 });
      else seen.rows++;
      continue;
    }
    const parsed = readRow(row, account, { kind: 'account', account: id }, diagnostics);
    if (parsed !== null) byAccount.get(id)!.push(parsed);
  }
  for (const [id, { firstLine, rows }] of unknown) {
    diagnostics.push(diagnostic('error', { kind: 'account', account: id }, table.file, firstLine, 'account',
      `found the account "${id}" (${rows === 1 ? 'this row' : `${rows} rows, the first here`}), expected an account of accounts.csv; add the account to accounts.csv or correct the id`));
  }
  for (const rows of byAccount.values()) rows.sort((left, right) => left.day - right.day);
  diagnostics.sort((left, right) => (left.line ?? 0) - (right.line ?? 0));
  return {
    byAccount: new Map([...byAccount].map(([id, rows]) => [id, Object.freeze(rows)] as const)),
    unknownAccounts: [...unknown.keys()],
    diagnostics,
    bookErrors,
  };
}

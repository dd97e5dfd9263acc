/**
 * accounts.csv → the valid accounts, and the ids of the rejected ones.
 *
 * A bad row rejects its account only: the diagnostic is scoped to the account
 * (under the id as written) and the account is left out of `accounts`. A
 * duplicated id rejects every row with that id, since nothing says which of
 * them is right.
 */
import type { Diagnostic } from '../errors.ts';
import type { CsvTable } from './csv.ts';
import { diagnostic } from './issues.ts';
import { rowKey, validateRow } from './rows.ts';
import { accountRowSchema } from './schemas.ts';
import type { Account } from './types.ts';

export interface AccountsResult {
  readonly accounts: readonly Account[];
  /** Ids as written (trimmed), in file order, each once. */
  readonly rejected: readonly string[];
  /** Scope account. */
  readonly diagnostics: readonly Diagnostic[];
  /** Scope book: rows with an empty account id. */
  readonly bookErrors: readonly Diagnostic[];
}

export function readAccounts(table: CsvTable, mandateIds: ReadonlySet<string>): AccountsResult {
  const schema = accountRowSchema(mandateIds);
  const diagnostics: Diagnostic[] = [];
  const bookErrors: Diagnostic[] = [];
  const firstLineOfId = new Map<string, number>();
  const duplicated = new Set<string>();
  const candidates: Account[] = [];
  const rejected = new Set<string>();
  for (const row of table.rows) {
    const id = rowKey(table, row, 'account', 'an account id', bookErrors);
    if (id === null) continue;
    const scope = { kind: 'account', account: id } as const;
    const firstLine = firstLineOfId.get(id);
    if (firstLine === undefined) {
      firstLineOfId.set(id, row.line);
    } else {
      duplicated.add(id);
      diagnostics.push(diagnostic('error', scope, table.file, row.line, 'account',
        `found the account id "${id}" again (first on line ${firstLine}), expected each account once; merge the rows or give one of them another id`));
    }
    const parsed = validateRow(table, row, schema, scope, diagnostics);
    if (parsed === null) {
      rejected.add(id);
      continue;
    }
    candidates.push(Object.freeze({
      id: parsed.account,
      client: parsed.client,
      mandate: parsed.mandate,
      baseCurrency: parsed.base_currency,
      adviser: parsed.adviser,
      email: parsed.email,
      inception: parsed.inception,
      locale: parsed.locale,
      line: row.line,
    }));
  }
  for (const id of duplicated) rejected.add(id);
  const accounts = candidates.filter((account) => !rejected.has(account.id));
  const rejectedInFileOrder = [...firstLineOfId.keys()].filter((id) => rejected.has(id));
  return { accounts, rejected: rejectedInFileOrder, diagnostics, bookErrors };
}

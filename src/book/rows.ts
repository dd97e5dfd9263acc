/**
 * Validating one CSV row against its zod schema, with every problem turned
 * into a diagnostic in the row's scope.
 */
import type { z } from 'zod';
import type { Diagnostic, DiagnosticScope } from '../errors.ts';
import type { CsvRow, CsvTable } from './csv.ts';
import { diagnostic, fallbackMessage, rowIssueDiagnostics } from './issues.ts';

/**
 * Parses one row; on failure appends its diagnostics to `out` and returns
 * null. A row with more or fewer fields than the header is refused before
 * its cells are read: its values may sit under the wrong columns.
 */
export function validateRow<Output>(
  table: CsvTable,
  row: CsvRow,
  schema: z.ZodType<Output>,
  scope: DiagnosticScope,
  out: Diagnostic[],
  subject?: string,
): Output | null {
  if (row.fieldCount !== table.headerWidth) {
    out.push(fieldCountDiagnostic(table, row, scope));
    return null;
  }
  // Parse without options first: passing any parse options makes zod several
  // times slower, which a 500,000-row prices.csv feels. Only a row that fails
  // is parsed again with the fallback wording for zod's built-in messages.
  const quick = schema.safeParse(row.fields);
  if (quick.success) return quick.data;
  const worded = schema.safeParse(row.fields, { error: fallbackMessage });
  const issues = worded.success ? quick.error.issues : worded.error.issues;
  out.push(...rowIssueDiagnostics(table.file, row, issues, scope, subject));
  return null;
}

export function fieldCountDiagnostic(table: CsvTable, row: CsvRow, scope: DiagnosticScope): Diagnostic {
  return diagnostic('error', scope, table.file, row.line, undefined,
    `found ${row.fieldCount} fields, expected ${table.headerWidth} as in the header; put any value containing a comma in double quotes, and remove stray commas`);
}

/**
 * The key cell that decides a row's scope (account, instrument, currency).
 * A row whose key is empty cannot be attributed to anything, so it is a book
 * error: returns null and appends that diagnostic to `bookErrors`.
 */
export function rowKey(table: CsvTable, row: CsvRow, column: string, what: string, bookErrors: Diagnostic[]): string | null {
  const key = (row.fields[column] ?? '').trim();
  if (key !== '') return key;
  bookErrors.push(diagnostic('error', { kind: 'book' }, table.file, row.line, column,
    `found an empty cell, expected ${what}; a row that belongs to nothing could belong to anything, so fill it in or delete the row`));
  return null;
}

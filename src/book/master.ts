/**
 * instruments.csv → the instrument master.
 *
 * Every account depends on the master (valuation, asset classes, proxies,
 * benchmarks), so any bad row here (a bad cell, a duplicate id, a proxy that
 * is not an index) is a book error: the run stops before anything is
 * written, rather than valuing accounts against a master with a hole in it.
 */
import { z } from 'zod';
import type { Diagnostic } from '../errors.ts';
import type { CsvTable } from './csv.ts';
import { BOOK_DEFAULTS } from './defaults.ts';
import { diagnostic, fallbackMessage, rowIssueDiagnostics } from './issues.ts';
import { validateRow } from './rows.ts';
import { indexReference, instrumentRowSchema } from './schemas.ts';
import type { Instrument } from './types.ts';

export interface MasterResult {
  readonly instruments: ReadonlyMap<string, Instrument>;
  /** Scope book: any of them stops the run. */
  readonly errors: readonly Diagnostic[];
}

export function readInstruments(table: CsvTable, assetClassIds: ReadonlySet<string>): MasterResult {
  const schema = instrumentRowSchema(assetClassIds);
  const errors: Diagnostic[] = [];
  const instruments = new Map<string, Instrument>();
  for (const row of table.rows) {
    const parsed = validateRow(table, row, schema, { kind: 'book' }, errors);
    if (parsed === null) continue;
    const first = instruments.get(parsed.instrument);
    if (first !== undefined) {
      errors.push(diagnostic('error', { kind: 'book' }, table.file, row.line, 'instrument',
        `found the instrument id "${parsed.instrument}" again (first on line ${first.line}), expected each instrument once; delete one row or give it another id`));
      continue;
    }
    instruments.set(parsed.instrument, Object.freeze({
      id: parsed.instrument,
      name: parsed.name,
      assetClass: parsed.asset_class,
      currency: parsed.currency,
      kind: parsed.kind,
      multiplier: parsed.multiplier ?? BOOK_DEFAULTS.instrumentMultiplier,
      proxy: parsed.proxy,
      line: row.line,
    }));
  }
  const proxySchema = z.object({ proxy: indexReference(instruments, 'the proxy of an instrument') });
  for (const row of table.rows) {
    const proxy = row.fields.proxy?.trim() ?? '';
    if (proxy === '') continue;
    const result = proxySchema.safeParse({ proxy }, { error: fallbackMessage });
    if (!result.success) errors.push(...rowIssueDiagnostics(table.file, row, result.error.issues, { kind: 'book' }));
  }
  return { instruments, errors };
}

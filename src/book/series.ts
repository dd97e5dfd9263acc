/**
 * prices.csv and fx.csv → dated series as typed arrays, sorted by day.
 *
 * Rows are gathered per key (instrument, or `FROM/TO` pair as quoted), then
 * each series is sorted by day and checked for a second row on the same
 * day: the first row in the file is kept and the later one reported. A bad
 * row is an error scoped to its instrument (prices) or its `from` currency
 * (fx), which fails the accounts that need it, not the run.
 */
import { isoDate } from '../dates.ts';
import type { Diagnostic, DiagnosticScope } from '../errors.ts';
import type { CsvTable } from './csv.ts';
import { diagnostic } from './issues.ts';
import { rowKey, validateRow } from './rows.ts';
import { fxRowSchema, priceRowSchema } from './schemas.ts';
import type { Instrument, Series } from './types.ts';

export interface SeriesResult {
  readonly series: ReadonlyMap<string, Series>;
  /** Scope instrument (prices) or currency (fx). */
  readonly diagnostics: readonly Diagnostic[];
  /** Scope book: rows with an empty key. */
  readonly bookErrors: readonly Diagnostic[];
}

interface SeriesDraft {
  readonly days: number[];
  readonly values: number[];
  readonly lines: number[];
}

/** Collects points per key in file order. */
class SeriesCollector {
  readonly drafts = new Map<string, SeriesDraft>();

  add(key: string, day: number, value: number, line: number): void {
    let draft = this.drafts.get(key);
    if (draft === undefined) {
      draft = { days: [], values: [], lines: [] };
      this.drafts.set(key, draft);
    }
    draft.days.push(day);
    draft.values.push(value);
    draft.lines.push(line);
  }

  /**
   * Sorted, de-duplicated series. `onDuplicate(key, day, keptLine, droppedLine)`
   * is called for each later row on a day already taken.
   */
  finish(onDuplicate: (key: string, day: number, keptLine: number, droppedLine: number) => void): Map<string, Series> {
    const series = new Map<string, Series>();
    for (const [key, draft] of this.drafts) series.set(key, Object.freeze(sortedSeries(key, draft, onDuplicate)));
    return series;
  }
}

function sortedSeries(
  key: string,
  draft: SeriesDraft,
  onDuplicate: (key: string, day: number, keptLine: number, droppedLine: number) => void,
): Series {
  const count = draft.days.length;
  let order: Int32Array | null = null;
  for (let index = 1; index < count; index++) {
    if (draft.days[index]! <= draft.days[index - 1]!) {
      // Not strictly increasing: sort an index by (day, line); lines are unique, so the order is total.
      order = new Int32Array(count);
      for (let position = 0; position < count; position++) order[position] = position;
      order.sort((left, right) => (draft.days[left]! - draft.days[right]!) || (draft.lines[left]! - draft.lines[right]!));
      break;
    }
  }
  const days = new Int32Array(count);
  const values = new Float64Array(count);
  const lines = new Int32Array(count);
  let kept = 0;
  for (let position = 0; position < count; position++) {
    const source = order === null ? position : order[position]!;
    const day = draft.days[source]!;
    if (kept > 0 && days[kept - 1] === day) {
      onDuplicate(key, day, lines[kept - 1]!, draft.lines[source]!);
      continue;
    }
    days[kept] = day;
    values[kept] = draft.values[source]!;
    lines[kept] = draft.lines[source]!;
    kept++;
  }
  return kept === count
    ? { days, values, lines }
    : { days: days.slice(0, kept), values: values.slice(0, kept), lines: lines.slice(0, kept) };
}

export function readPrices(table: CsvTable, instruments: ReadonlyMap<string, Instrument>): SeriesResult {
  const schema = priceRowSchema(instruments);
  const diagnostics: Diagnostic[] = [];
  const bookErrors: Diagnostic[] = [];
  const collector = new SeriesCollector();
  for (const row of table.rows) {
    const instrument = rowKey(table, row, 'instrument', 'an instrument id', bookErrors);
    if (instrument === null) continue;
    const parsed = validateRow(table, row, schema, { kind: 'instrument', instrument }, diagnostics);
    if (parsed !== null) collector.add(parsed.instrument, parsed.date, parsed.price, row.line);
  }
  const series = collector.finish((instrument, day, keptLine, droppedLine) => {
    diagnostics.push(diagnostic('error', { kind: 'instrument', instrument }, table.file, droppedLine, 'date',
      `found a second price of "${instrument}" for ${isoDate(day)} (first on line ${keptLine}), expected one price per instrument and date; delete the wrong row`));
  });
  return { series, diagnostics: sortedByLine(diagnostics), bookErrors };
}

export function readFx(table: CsvTable): SeriesResult {
  const diagnostics: Diagnostic[] = [];
  const bookErrors: Diagnostic[] = [];
  const collector = new SeriesCollector();
  for (const row of table.rows) {
    const from = rowKey(table, row, 'from', 'a currency code', bookErrors);
    if (from === null) continue;
    const to = (row.fields.to ?? '').trim();
    const scope: DiagnosticScope = { kind: 'currency', currency: from };
    const parsed = validateRow(table, row, fxRowSchema, scope, diagnostics, `${from}/${to}`);
    if (parsed !== null) collector.add(`${parsed.from}/${parsed.to}`, parsed.date, parsed.rate, row.line);
  }
  const series = collector.finish((pair, day, keptLine, droppedLine) => {
    diagnostics.push(diagnostic('error', { kind: 'currency', currency: pair.slice(0, 3) }, table.file, droppedLine, 'date',
      `found a second ${pair} rate for ${isoDate(day)} (first on line ${keptLine}), expected one rate per pair and date; delete the wrong row`));
  });
  return { series, diagnostics: sortedByLine(diagnostics), bookErrors };
}

function sortedByLine(diagnostics: readonly Diagnostic[]): Diagnostic[] {
  return [...diagnostics].sort((left, right) => (left.line ?? 0) - (right.line ?? 0));
}

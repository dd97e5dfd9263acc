/**
 * Reading one CSV file of the book into rows that know their editor line.
 *
 * Files are UTF-8 with an optional BOM, comma-separated, RFC 4180 quoting,
 * header on line 1. Line breaks may be CRLF, LF or CR, mixed. Each row
 * records the line on which it starts, so a quoted field spanning lines does
 * not shift the line numbers of the rows after it.
 *
 * Two readers give the same records:
 * - `csv-parse` (RFC 4180) for any file that contains a double quote;
 * - for a file with no double quote at all, RFC 4180 reduces to "a line break
 *   ends a record, a comma ends a field", so the file is split directly. This
 *   is what keeps a 500,000-row prices.csv fast; test/book/csv.test.ts checks
 *   that both readers agree on random quote-free input.
 *
 * Empty lines (and lines whose fields are all blank) carry no data and are
 * skipped. A malformed file (an unclosed quote, text after a closing quote)
 * cannot be split into rows reliably, so it is a book error.
 */
import { isUtf8 } from 'node:buffer';
import { parse } from 'csv-parse/sync';
import { BookError, type Diagnostic } from '../errors.ts';

/** The contract of one file: columns that must be present, and columns that may be. */
export interface CsvColumns {
  readonly required: readonly string[];
  /** Columns whose every cell has a default, so the column itself may be left out. */
  readonly optional: readonly string[];
}

/** One record as split from the file, before the header is applied. */
export interface CsvRecord {
  /** Editor line on which the record starts (header = 1). */
  readonly line: number;
  readonly values: readonly string[];
}

/** One data row with the header applied. */
export interface CsvRow {
  readonly line: number;
  /** Every column of the contract, required and optional; '' when the cell is empty or the column absent. */
  readonly fields: Readonly<Record<string, string>>;
  /** How many fields the record had (the header's count when the row is well formed). */
  readonly fieldCount: number;
}

export interface CsvTable {
  readonly file: string;
  /** Number of columns in the header. */
  readonly headerWidth: number;
  readonly rows: readonly CsvRow[];
  /** Unknown and unnamed columns (scope book, severity warning). */
  readonly warnings: readonly Diagnostic[];
}

const UTF8_BOM = [0xef, 0xbb, 0xbf] as const;
const QUOTE = 0x22;
const LF = 0x0a;
const CR = 0x0d;

/**
 * Reads one CSV file: decodes it, splits it into records, applies the header
 * and checks the columns against the contract.
 * Throws BookError for invalid UTF-8, malformed quoting, an empty file, a
 * duplicate column name or a missing required column.
 */
export function readCsvTable(file: string, bytes: Uint8Array, columns: CsvColumns): CsvTable {
  const records = csvRecords(file, bytes);
  const header = records[0];
  if (header === undefined || header.line !== 1) {
    throw new BookError([
      bookIssue(file, 1, undefined, `found no header row, expected the column names on line 1 (${columns.required.join(',')}); add the header as the first line`),
    ]);
  }
  const headerNames = header.values.map((name) => name.trim());
  const known = new Set([...columns.required, ...columns.optional]);
  const errors: Diagnostic[] = [];
  const warnings: Diagnostic[] = [];
  const indexOfColumn = new Map<string, number>();
  headerNames.forEach((name, index) => {
    const first = indexOfColumn.get(name);
    if (name === '') {
      warnings.push(bookWarning(file, `found a column with no name (column ${index + 1} of the header), expected a column name; its values are ignored, so name it or remove it`));
    } else if (first !== undefined) {
      errors.push(bookIssue(file, 1, name, `found the column "${name}" twice (columns ${first + 1} and ${index + 1}), expected each column once; remove or rename one of them`));
    } else {
      indexOfColumn.set(name, index);
      if (!known.has(name)) {
        warnings.push(bookWarning(file, `found the unknown column "${name}", expected only ${[...known].join(', ')}; it is ignored, so remove it or correct its name`, name));
      }
    }
  });
  for (const required of columns.required) {
    if (indexOfColumn.has(required)) continue;
    const sameButCase = headerNames.find((name) => name.toLowerCase() === required.toLowerCase());
    const hint = sameButCase !== undefined
      ? `rename "${sameButCase}" to "${required}" (column names are lower-case)`
      : `add the column "${required}" to the header on line 1`;
    errors.push(bookIssue(file, 1, required, `found no column "${required}" in the header, expected the required columns ${columns.required.join(', ')}; ${hint}`));
  }
  if (errors.length > 0) throw new BookError(errors);

  const contractColumns = [...known].map((name) => [name, indexOfColumn.get(name)] as const);
  const rows: CsvRow[] = [];
  for (let recordIndex = 1; recordIndex < records.length; recordIndex++) {
    const record = records[recordIndex]!;
    const fields: Record<string, string> = {};
    for (const [name, index] of contractColumns) fields[name] = index === undefined ? '' : (record.values[index] ?? '');
    rows.push({ line: record.line, fields, fieldCount: record.values.length });
  }
  return { file, headerWidth: headerNames.length, rows, warnings };
}

/**
 * Splits a CSV file into records with their starting editor lines, skipping
 * blank lines. `reader` chooses the splitter: `auto` (the default) uses the
 * direct split for a file with no double quote and csv-parse otherwise;
 * `csv-parse` forces csv-parse (used by the tests to compare the two).
 */
export function csvRecords(file: string, bytes: Uint8Array, reader: 'auto' | 'csv-parse' = 'auto'): CsvRecord[] {
  const content = stripBom(bytes);
  if (!isUtf8(content)) {
    throw new BookError([
      bookIssue(file, firstLineNotUtf8(content), undefined, 'found bytes that are not UTF-8, expected a UTF-8 text file; save the file again as UTF-8 (CSV UTF-8 in a spreadsheet)'),
    ]);
  }
  const records = reader === 'auto' && !content.includes(QUOTE)
    ? recordsWithoutQuotes(content)
    : recordsWithCsvParse(file, content);
  return records.filter((record) => record.values.some((value) => value.trim() !== ''));
}

function stripBom(bytes: Uint8Array): Uint8Array {
  const hasBom = bytes[0] === UTF8_BOM[0] && bytes[1] === UTF8_BOM[1] && bytes[2] === UTF8_BOM[2];
  return hasBom ? bytes.subarray(3) : bytes;
}

/** RFC 4180 without any quote character: every line break ends a record, every comma ends a field. */
function recordsWithoutQuotes(content: Uint8Array): CsvRecord[] {
  const text = new TextDecoder('utf-8').decode(content);
  const lines = text.split(/\r\n|\n|\r/);
  const records: CsvRecord[] = new Array(lines.length);
  for (let index = 0; index < lines.length; index++) {
    records[index] = { line: index + 1, values: lines[index]!.split(',') };
  }
  return records;
}

interface CsvParseRecord {
  readonly record: string[];
  readonly info: { readonly bytes: number };
}

/**
 * RFC 4180 via csv-parse. The start line of a record is found from byte
 * offsets (each record starts where the previous one ended), not from
 * csv-parse's own line counter, which counts a CRLF inside a quoted field as
 * two lines.
 */
function recordsWithCsvParse(file: string, content: Uint8Array): CsvRecord[] {
  const lineAt = lineCounterOver(content);
  let lastRecordEnd = 0;
  let parsed: CsvParseRecord[];
  try {
    parsed = parse(Buffer.from(content.buffer, content.byteOffset, content.byteLength), {
      info: true,
      relax_column_count: true,
      skip_empty_lines: false,
      record_delimiter: ['\r\n', '\n', '\r'],
      on_record: (record: CsvParseRecord) => {
        lastRecordEnd = record.info.bytes;
        return record;
      },
    }) as CsvParseRecord[];
  } catch (error) {
    const code = (error as { code?: unknown }).code;
    if (typeof code !== 'string' || !code.startsWith('CSV_') && !code.startsWith('INVALID_')) throw error;
    throw new BookError([bookIssue(file, lineAt(lastRecordEnd), undefined, malformedCsvMessage(code))]);
  }
  const records: CsvRecord[] = new Array(parsed.length);
  let recordStart = 0;
  for (let index = 0; index < parsed.length; index++) {
    const entry = parsed[index]!;
    records[index] = { line: lineAt(recordStart), values: entry.record };
    recordStart = entry.info.bytes;
  }
  return records;
}

function malformedCsvMessage(code: string): string {
  switch (code) {
    case 'CSV_QUOTE_NOT_CLOSED':
      return 'found a quoted field that is never closed (the row starting here), expected a closing double quote; close the quote, and write a quote inside a field as two ("")';
    case 'INVALID_OPENING_QUOTE':
      return 'found a double quote inside an unquoted field (the row starting here), expected quotes only around a whole field; put the whole field in quotes and double the inner quote ("")';
    case 'CSV_INVALID_CLOSING_QUOTE':
      return 'found text right after a closing double quote (the row starting here), expected a comma or the end of the line; write a quote inside a field as two ("")';
    default:
      return `found malformed CSV (${code}) in the row starting here, expected RFC 4180 quoting; save the file again as CSV from a spreadsheet`;
  }
}

/**
 * Editor line of a byte offset. Offsets must be asked for in increasing
 * order (records come in file order), so the whole file is scanned once.
 * CRLF, LF and a lone CR each end a line.
 */
function lineCounterOver(content: Uint8Array): (offset: number) => number {
  let scanned = 0;
  let line = 1;
  return (offset) => {
    for (; scanned < offset; scanned++) {
      const byte = content[scanned];
      if (byte === LF || (byte === CR && content[scanned + 1] !== LF)) line++;
    }
    return line;
  };
}

function firstLineNotUtf8(content: Uint8Array): number {
  let line = 1;
  let lineStart = 0;
  for (let offset = 0; offset <= content.length; offset++) {
    if (offset === content.length || content[offset] === LF) {
      if (!isUtf8(content.subarray(lineStart, offset))) return line;
      line++;
      lineStart = offset + 1;
    }
  }
  return 1;
}

function bookIssue(file: string, line: number | null, column: string | undefined, message: string): Diagnostic {
  return column === undefined
    ? { severity: 'error', scope: { kind: 'book' }, file, line, message }
    : { severity: 'error', scope: { kind: 'book' }, file, line, column, message };
}

function bookWarning(file: string, message: string, column?: string): Diagnostic {
  return column === undefined
    ? { severity: 'warning', scope: { kind: 'book' }, file, line: 1, message }
    : { severity: 'warning', scope: { kind: 'book' }, file, line: 1, column, message };
}

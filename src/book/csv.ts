/**
 * Reading one CSV file of the book into rows that know their editor line.
 *
 * Files are UTF-8 with an optional BOM, comma-separated, RFC 4180 quoting,
 * header on line 1. Line breaks may be CRLF, LF or CR, mixed. Each row
 * records the line on which it starts, so a quoted field spanning lines does
 * not shift the line numbers of the rows after it.
 *
 * How a file is split depends on its quotes, fastest first; all three give
 * the same records (test/book/csv.test.ts compares them):
 * - no double quote at all: RFC 4180 reduces to "a line break ends a record,
 *   a comma ends a field", so the file is split directly, row by row, without
 *   holding every row in memory (this keeps a 500,000-row prices.csv fast);
 * - quotes, but an even number on every line and no field containing a
 *   line break, so no record spans lines: csv-parse splits the file, and
 *   record n is on line n;
 * - a quoted field spanning lines: csv-parse with record offsets, from which
 *   the start line of each record is counted.
 *
 * Empty lines (and lines whose fields are all blank) carry no data and are
 * skipped. Quotes are read leniently where the meaning is plain: a quote
 * inside a field that does not start with one, or text after a closing
 * quote, is kept as written. A quote that is never closed swallows the rest
 * of the file, so the rows cannot be trusted: that is a book error naming
 * the line where the broken row starts.
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
  /** Data rows in file order; each iteration splits the file again, holding one row at a time. */
  readonly rows: Iterable<CsvRow>;
  /** Unknown and unnamed columns (scope book, severity warning). */
  readonly warnings: readonly Diagnostic[];
}

const UTF8_BOM = [0xef, 0xbb, 0xbf] as const;
const QUOTE = 0x22;
const LF = 0x0a;
const CR = 0x0d;

/**
 * Reads one CSV file: decodes it, reads the header and checks the columns
 * against the contract. Throws BookError for invalid UTF-8, malformed
 * quoting, an empty file, a duplicate column name or a missing required
 * column. Data rows are split when `rows` is iterated.
 */
export function readCsvTable(file: string, bytes: Uint8Array, columns: CsvColumns): CsvTable {
  const source = csvSource(file, bytes);
  const header = firstRecord(source);
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

  const columnNames = [...known];
  const columnIndices = columnNames.map((name) => indexOfColumn.get(name) ?? -1);
  const rows: Iterable<CsvRow> = {
    *[Symbol.iterator]() {
      let isHeader = true;
      for (const record of source()) {
        if (isHeader) {
          isHeader = false;
          continue;
        }
        // Plain indexed loops: this runs for every row of a large prices.csv.
        const fields: Record<string, string> = {};
        for (let column = 0; column < columnNames.length; column++) {
          const index = columnIndices[column]!;
          fields[columnNames[column]!] = index < 0 ? '' : (record.values[index] ?? '');
        }
        yield { line: record.line, fields, fieldCount: record.values.length };
      }
    },
  };
  return { file, headerWidth: headerNames.length, rows, warnings };
}

/** The records of a file (header included, blank lines skipped), as an iterator that can be started again. */
type CsvSource = () => Iterable<CsvRecord>;

function firstRecord(source: CsvSource): CsvRecord | undefined {
  for (const record of source()) return record;
  return undefined;
}

/**
 * Splits a CSV file into records with their starting editor lines, skipping
 * blank lines. `reader` chooses the splitter: `auto` (the default) picks the
 * fastest one that is exact for the file (see the top of this module);
 * `csv-parse` forces csv-parse with record offsets, the general case (used
 * by the tests to compare the readers).
 */
export function csvRecords(file: string, bytes: Uint8Array, reader: 'auto' | 'csv-parse' = 'auto'): CsvRecord[] {
  return [...csvSource(file, bytes, reader)()];
}

/** Checks the encoding and chooses the splitter; malformed quoting is found here, before any row is used. */
function csvSource(file: string, bytes: Uint8Array, reader: 'auto' | 'csv-parse' = 'auto'): CsvSource {
  const content = stripBom(bytes);
  if (!isUtf8(content)) {
    throw new BookError([
      bookIssue(file, firstLineNotUtf8(content), undefined, 'found bytes that are not UTF-8, expected a UTF-8 text file; save the file again as UTF-8 (CSV UTF-8 in a spreadsheet)'),
    ]);
  }
  if (reader === 'auto' && !content.includes(QUOTE)) {
    const text = new TextDecoder('utf-8').decode(content);
    return () => recordsWithoutQuotes(text);
  }
  const records = (reader === 'auto' && everyLineHasEvenQuotes(content)
    ? recordsOnePerLine(file, content)
    : recordsWithCsvParse(file, content)
  ).filter((record) => record.values.some((value) => value.trim() !== ''));
  return () => records;
}

function stripBom(bytes: Uint8Array): Uint8Array {
  const hasBom = bytes[0] === UTF8_BOM[0] && bytes[1] === UTF8_BOM[1] && bytes[2] === UTF8_BOM[2];
  return hasBom ? bytes.subarray(3) : bytes;
}

const LINE_BREAK = /\r\n|\n|\r/g;
const LINE_BREAK_CHARACTER = /[\r\n]/;

/** Anything but spaces and commas: a line without it is blank. */
const NOT_BLANK = /[^\s,]/;

/**
 * RFC 4180 without any quote character: every line break ends a record,
 * every comma ends a field. A file without CR is split with indexOf, which is
 * faster than the regular expression needed for CR and CRLF.
 */
function* recordsWithoutQuotes(text: string): Iterable<CsvRecord> {
  const lineBreak = new RegExp(LINE_BREAK.source, 'g');
  const onlyLineFeeds = !text.includes('\r');
  let line = 1;
  let lineStart = 0;
  while (lineStart < text.length) {
    let lineEnd: number;
    let nextStart: number;
    if (onlyLineFeeds) {
      const feed = text.indexOf('\n', lineStart);
      lineEnd = feed === -1 ? text.length : feed;
      nextStart = lineEnd + 1;
    } else {
      lineBreak.lastIndex = lineStart;
      const match = lineBreak.exec(text);
      lineEnd = match === null ? text.length : match.index;
      nextStart = match === null ? text.length : lineBreak.lastIndex;
    }
    const lineText = text.slice(lineStart, lineEnd);
    if (NOT_BLANK.test(lineText)) yield { line, values: lineText.split(',') };
    line++;
    lineStart = nextStart;
  }
}

/**
 * True when no line has an odd number of double quotes. A quoted field that
 * spans lines leaves an odd count on some line unless literal quotes (see
 * `relax_quotes`) balance it, which `recordsOnePerLine` checks afterwards.
 */
function everyLineHasEvenQuotes(content: Uint8Array): boolean {
  let quotesOnLine = 0;
  for (let offset = 0; offset < content.length; offset++) {
    const byte = content[offset];
    if (byte === QUOTE) quotesOnLine++;
    else if (byte === LF || byte === CR) {
      if (quotesOnLine % 2 !== 0) return false;
      quotesOnLine = 0;
    }
  }
  return quotesOnLine % 2 === 0;
}

const CSV_PARSE_OPTIONS = {
  relax_column_count: true,
  // A quote inside a field that does not start with one is taken literally
  // (5'11" or <a href="x">), as a person writing the file by hand means it;
  // so is a quoted field followed by more text ("4" inch is kept as written).
  relax_quotes: true,
  skip_empty_lines: false,
  record_delimiter: ['\r\n', '\n', '\r'],
} as const;

/**
 * csv-parse for a file in which no record spans lines: with empty lines kept
 * as records, record n starts on line n + 1 (0-based n). A record spans
 * lines exactly when one of its fields contains a line break; if any does
 * (literal quotes can fool the parity check), or csv-parse finds an error,
 * the general reader takes over and locates it.
 */
function recordsOnePerLine(file: string, content: Uint8Array): CsvRecord[] {
  let parsed: string[][];
  try {
    parsed = parse(asBuffer(content), { ...CSV_PARSE_OPTIONS, record_delimiter: [...CSV_PARSE_OPTIONS.record_delimiter] }) as string[][];
  } catch (error) {
    if (!isCsvParseError(error)) throw error;
    return recordsWithCsvParse(file, content);
  }
  if (parsed.some((values) => values.some((value) => LINE_BREAK_CHARACTER.test(value)))) return recordsWithCsvParse(file, content);
  const records: CsvRecord[] = new Array(parsed.length);
  for (let index = 0; index < parsed.length; index++) records[index] = { line: index + 1, values: parsed[index]! };
  return records;
}

interface CsvParseRecord {
  readonly record: string[];
  readonly info: { readonly bytes: number };
}

/**
 * RFC 4180 via csv-parse, the general case. The start line of a record is
 * found from byte offsets (each record starts where the previous one
 * ended), not from csv-parse's own line counter, which counts a CRLF inside
 * a quoted field as two lines.
 */
function recordsWithCsvParse(file: string, content: Uint8Array): CsvRecord[] {
  const lineAt = lineCounterOver(content);
  let lastRecordEnd = 0;
  let parsed: CsvParseRecord[];
  try {
    parsed = parse(asBuffer(content), {
      ...CSV_PARSE_OPTIONS,
      record_delimiter: [...CSV_PARSE_OPTIONS.record_delimiter],
      info: true,
      on_record: (record: string[], context: { readonly bytes: number }) => {
        lastRecordEnd = context.bytes;
        return record;
      },
    }) as unknown as CsvParseRecord[];
  } catch (error) {
    if (!isCsvParseError(error)) throw error;
    throw new BookError([bookIssue(file, lineAt(lastRecordEnd), undefined, malformedCsvMessage(error.code))]);
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

function asBuffer(content: Uint8Array): Buffer {
  return Buffer.from(content.buffer, content.byteOffset, content.byteLength);
}

function isCsvParseError(error: unknown): error is { readonly code: string } {
  const code = (error as { code?: unknown } | null)?.code;
  return typeof code === 'string' && (code.startsWith('CSV_') || code.startsWith('INVALID_'));
}

function malformedCsvMessage(code: string): string {
  switch (code) {
    case 'CSV_QUOTE_NOT_CLOSED':
      return 'found a quoted field that is never closed (the row starting here), expected a closing double quote; close the quote, and write a quote inside a field as two ("")';
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

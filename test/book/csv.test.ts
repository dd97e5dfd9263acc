/**
 * Reading CSV files: encodings, RFC 4180 quoting, editor line numbers, and
 * the header contract (missing, unknown, duplicate columns).
 */
import fc from 'fast-check';
import { parse } from 'csv-parse/sync';
import { afterAll, describe, expect, it } from 'vitest';
import { csvRecords, readCsvTable } from '../../src/book/csv.ts';
import { loadBook } from '../../src/book/load.ts';
import { BookError, type Diagnostic } from '../../src/errors.ts';
import { bookErrorOf, bookWith, HEADERS, removeScratchBooks } from './book-fixture.ts';

afterAll(removeScratchBooks);

const utf8 = (text: string): Uint8Array => new TextEncoder().encode(text);
const COLUMNS = { required: ['a', 'b'], optional: ['c'] } as const;

function thrownDiagnostics(read: () => unknown): readonly Diagnostic[] {
  try {
    read();
  } catch (error) {
    expect(error).toBeInstanceOf(BookError);
    return (error as BookError).diagnostics;
  }
  throw new Error('expected a BookError');
}

describe('csvRecords', () => {
  it('accepts a UTF-8 BOM and keeps it out of the first column name', () => {
    const records = csvRecords('x.csv', utf8('\uFEFFa,b\n1,2\n'));
    expect(records).toEqual([{ line: 1, values: ['a', 'b'] }, { line: 2, values: ['1', '2'] }]);
  });

  it('keeps later line numbers right after a quoted field that spans lines (LF)', () => {
    const records = csvRecords('x.csv', utf8('a,b\n1,"two\nlines"\n2,x\n3,"three\n\nlines"\n4,y\n'));
    expect(records.map((record) => record.line)).toEqual([1, 2, 4, 5, 8]);
    expect(records[1]!.values).toEqual(['1', 'two\nlines']);
  });

  it('keeps later line numbers right after a quoted field that spans lines (CRLF)', () => {
    const records = csvRecords('x.csv', utf8('a,b\r\n1,"two\r\nlines"\r\n2,x\r\n'));
    expect(records).toEqual([
      { line: 1, values: ['a', 'b'] },
      { line: 2, values: ['1', 'two\r\nlines'] },
      { line: 4, values: ['2', 'x'] },
    ]);
  });

  it('skips blank lines without renumbering the rest', () => {
    const records = csvRecords('x.csv', utf8('a,b\n\n1,2\n,\n  \n3,4'));
    expect(records).toEqual([{ line: 1, values: ['a', 'b'] }, { line: 3, values: ['1', '2'] }, { line: 6, values: ['3', '4'] }]);
  });

  it('accepts mixed line endings', () => {
    const records = csvRecords('x.csv', utf8('a,b\r\n1,2\n3,4\r5,6\r\n'));
    expect(records.map((record) => [record.line, ...record.values])).toEqual([[1, 'a', 'b'], [2, '1', '2'], [3, '3', '4'], [4, '5', '6']]);
    const quoted = csvRecords('x.csv', utf8('a,b\r\n"1",2\n3,4\r5,6\r\n'));
    expect(quoted).toEqual(records);
  });

  it('keeps quoted text exactly, commas and quotes included', () => {
    const records = csvRecords('x.csv', utf8('name\n"O\'Brien, ""Jr"" <script>alert(1)</script>"\n'));
    expect(records[1]!.values).toEqual(['O\'Brien, "Jr" <script>alert(1)</script>']);
  });

  it('names the line where a never-closed quote starts', () => {
    const diagnostics = thrownDiagnostics(() => csvRecords('x.csv', utf8('a,b\n1,2\n3,"open\n4,5\n6,7\n')));
    expect(diagnostics).toEqual([{
      severity: 'error', scope: { kind: 'book' }, file: 'x.csv', line: 3,
      message: 'found a quoted field that is never closed (the row starting here), expected a closing double quote; close the quote, and write a quote inside a field as two ("")',
    }]);
  });

  it('keeps a field with text after its closing quote as written, quotes included', () => {
    const records = csvRecords('x.csv', utf8('a,b\n"1",2\n3,"4" inch\n'));
    expect(records[2]).toEqual({ line: 3, values: ['3', '"4" inch'] });
  });

  it('takes a quote inside a field that does not start with one literally', () => {
    const records = csvRecords('x.csv', utf8('a,b\n5\'11",<a href="x">\n'));
    expect(records[1]!.values).toEqual(['5\'11"', '<a href="x">']);
  });

  it('finds a multi-line field even when literal quotes balance every line', () => {
    // Line 2 and line 3 each hold two quotes, yet the quoted field opened on line 2 ends on line 3.
    const records = csvRecords('x.csv', utf8('a,b,c\nx"y,"start\nend",z"w\nnext,1,2\n'));
    expect(records).toEqual([
      { line: 1, values: ['a', 'b', 'c'] },
      { line: 2, values: ['x"y', 'start\nend', 'z"w'] },
      { line: 4, values: ['next', '1', '2'] },
    ]);
  });

  it('names the first line that is not UTF-8', () => {
    const latin1 = Uint8Array.from([...utf8('a,b\n1,2\n3,'), 0xe9, ...utf8('\n')]);
    const diagnostics = thrownDiagnostics(() => csvRecords('x.csv', latin1));
    expect(diagnostics[0]).toMatchObject({ file: 'x.csv', line: 3, scope: { kind: 'book' } });
    expect(diagnostics[0]!.message).toMatch(/^found bytes that are not UTF-8, expected a UTF-8 text file/);
  });

  it('splits quote-free files exactly as csv-parse does (property, 200 random files)', () => {
    const cell = fc.stringMatching(/^[A-Za-z0-9 .\-é€]{0,6}$/);
    const lineBreak = fc.constantFrom('\n', '\r\n', '\r');
    const file = fc.array(fc.tuple(fc.array(cell, { minLength: 1, maxLength: 4 }), lineBreak), { minLength: 1, maxLength: 12 })
      .chain((lines) => fc.boolean().map((trailingBreak) =>
        lines.map(([cells, end], index) => cells.join(',') + (index < lines.length - 1 || trailingBreak ? end : '')).join('')));
    fc.assert(fc.property(file, (text) => {
      const bytes = utf8(text);
      expect(csvRecords('x.csv', bytes, 'auto')).toEqual(csvRecords('x.csv', bytes, 'csv-parse'));
    }), { seed: 20240131, numRuns: 200 });
  });

  it('splits files with quoted fields and literal quotes on single lines exactly as the general reader does (property, 200 random files)', () => {
    const plain = fc.stringMatching(/^[A-Za-z0-9 .\-é]{0,5}$/);
    const quoted = fc.stringMatching(/^[A-Za-z0-9 ,"é]{0,6}$/).map((text) => `"${text.replaceAll('"', '""')}"`);
    const literalQuotes = fc.stringMatching(/^[A-Za-z0-9][A-Za-z0-9 "]{0,4}$/);
    const cell = fc.oneof(plain, quoted, literalQuotes);
    const lineBreak = fc.constantFrom('\n', '\r\n', '\r');
    const file = fc.array(fc.tuple(fc.array(cell, { minLength: 1, maxLength: 4 }), lineBreak), { minLength: 1, maxLength: 12 })
      .map((lines) => lines.map(([cells, end]) => cells.join(',') + end).join(''));
    fc.assert(fc.property(file, (text) => {
      const bytes = utf8(text);
      expect(csvRecords('x.csv', bytes, 'auto')).toEqual(csvRecords('x.csv', bytes, 'csv-parse'));
    }), { seed: 20240229, numRuns: 200 });
  });

  it('gives every record the editor line it starts on, whatever its quoted line breaks (property, 200 random files)', () => {
    const lineBreak = fc.constantFrom('\n', '\r\n', '\r');
    const plain = fc.stringMatching(/^[A-Za-z0-9]{1,4}$/);
    const quoted = fc.tuple(fc.stringMatching(/^[A-Za-z ,"]{0,3}$/), lineBreak, fc.stringMatching(/^[A-Za-z ,"]{0,3}$/))
      .map(([before, inner, after]) => `"${before.replaceAll('"', '""')}${inner}${after.replaceAll('"', '""')}"`);
    // The first cell is never blank: a record of blank cells is skipped as an empty line.
    const row = fc.tuple(plain, fc.array(fc.oneof(plain, quoted), { maxLength: 2 })).map(([first, rest]) => [first, ...rest]);
    const file = fc.array(fc.tuple(row, lineBreak, fc.boolean()), { minLength: 1, maxLength: 10 });
    fc.assert(fc.property(file, (rows) => {
      // Expected start lines counted independently while the file is written:
      // 1 + the number of line breaks (CRLF, LF or CR) in the text before the row.
      let text = '';
      const expectedLines: number[] = [];
      for (const [cells, end, blankLineAfter] of rows) {
        expectedLines.push(1 + (text.match(/\r\n|\n|\r/g)?.length ?? 0));
        text += cells.join(',') + end + (blankLineAfter ? end : '');
      }
      const records = csvRecords('x.csv', utf8(text));
      expect(records.map((record) => record.line)).toEqual(expectedLines);
    }), { seed: 20240331, numRuns: 200 });
  });

  it('agrees with csv-parse record by record on a quoted file', () => {
    const text = 'a,b\n"x, y",1\n"multi\nline",2\n';
    const reference = parse(text) as string[][];
    expect(csvRecords('x.csv', utf8(text)).map((record) => record.values)).toEqual(reference);
  });
});

describe('readCsvTable header contract', () => {
  it('fills optional columns that are absent with empty cells', () => {
    const table = readCsvTable('x.csv', utf8('b,a\n2,1\n'), COLUMNS);
    expect([...table.rows]).toEqual([{ line: 2, fields: { a: '1', b: '2', c: '' }, fieldCount: 2 }]);
    expect(table.warnings).toEqual([]);
  });

  it('names the file and the missing required column', () => {
    const diagnostics = thrownDiagnostics(() => readCsvTable('x.csv', utf8('a,c\n1,2\n'), COLUMNS));
    expect(diagnostics).toEqual([{
      severity: 'error', scope: { kind: 'book' }, file: 'x.csv', line: 1, column: 'b',
      message: 'found no column "b" in the header, expected the required columns a, b; add the column "b" to the header on line 1',
    }]);
  });

  it('suggests the lower-case name when only the case differs', () => {
    const diagnostics = thrownDiagnostics(() => readCsvTable('x.csv', utf8('a,B\n1,2\n'), COLUMNS));
    expect(diagnostics[0]!.message).toBe('found no column "b" in the header, expected the required columns a, b; rename "B" to "b" (column names are lower-case)');
  });

  it('refuses a column named twice', () => {
    const diagnostics = thrownDiagnostics(() => readCsvTable('x.csv', utf8('a,b,a\n1,2,3\n'), COLUMNS));
    expect(diagnostics).toEqual([expect.objectContaining({ line: 1, column: 'a', message: expect.stringMatching(/^found the column "a" twice \(columns 1 and 3\)/) })]);
  });

  it('warns about an unknown column and ignores it', () => {
    const table = readCsvTable('x.csv', utf8('a,b,colour\n1,2,red\n'), COLUMNS);
    expect(table.warnings).toEqual([{
      severity: 'warning', scope: { kind: 'book' }, file: 'x.csv', line: 1, column: 'colour',
      message: 'found the unknown column "colour", expected only a, b, c; it is ignored, so remove it or correct its name',
    }]);
    expect([...table.rows][0]!.fields).toEqual({ a: '1', b: '2', c: '' });
  });

  it('refuses an empty file', () => {
    const diagnostics = thrownDiagnostics(() => readCsvTable('x.csv', utf8(''), COLUMNS));
    expect(diagnostics[0]!.message).toBe('found no header row, expected the column names on line 1 (a,b); add the header as the first line');
  });
});

describe('CSV contract through loadBook', () => {
  it('throws a BookError naming the file and the missing column', async () => {
    const diagnostics = await bookErrorOf(bookWith({ 'prices.csv': 'date,instrument,close\n2024-01-02,EQIDX,1000\n' }));
    expect(diagnostics).toEqual([{
      severity: 'error', scope: { kind: 'book' }, file: 'prices.csv', line: 1, column: 'price',
      message: 'found no column "price" in the header, expected the required columns date, instrument, price; add the column "price" to the header on line 1',
    }]);
  });

  it('reports an unknown column as a book warning and loads the rest', async () => {
    const book = await loadBook(bookWith({ 'fx.csv': 'date,from,to,rate,source\n2024-01-02,USD,GBP,0.79,custodian\n' }));
    expect(book.diagnostics).toEqual([{
      severity: 'warning', scope: { kind: 'book' }, file: 'fx.csv', line: 1, column: 'source',
      message: 'found the unknown column "source", expected only date, from, to, rate; it is ignored, so remove it or correct its name',
    }]);
    expect(book.fx.get('USD/GBP')!.values).toEqual(Float64Array.from([0.79]));
  });

  it('accepts a BOM on every kind of file', async () => {
    const bom = '\uFEFF';
    const book = await loadBook(bookWith({
      'accounts.csv': `${bom}${HEADERS.accounts}A-001,Ada Lovelace,balanced,GBP,,,,\n`,
      'book.yaml': `${bom}firm: { name: Tiny }\nasset_classes:\n  equity: { proxy: EQIDX }\n  bonds: { proxy: BDIDX }\n  cash: { proxy: CASHIDX }\n`,
    }));
    expect(book.accounts.map((account) => account.id)).toEqual(['A-001']);
    expect(book.settings.firm.name).toBe('Tiny');
  });

  it('reports a row error after a multi-line quoted note on the line where that row starts', async () => {
    const transactions = `${HEADERS.transactions}A-001,2024-01-02,deposit,,,,,1000,,"a note\nover\nthree lines"\nA-001,2024-01-05,deposit,,,,,-5,,\n`;
    const book = await loadBook(bookWith({ 'transactions.csv': transactions }));
    expect(book.transactions.get('A-001')![0]!.note).toBe('a note\nover\nthree lines');
    expect(book.diagnostics).toEqual([expect.objectContaining({ file: 'transactions.csv', line: 5, column: 'amount' })]);
  });

  it('refuses a row with more fields than the header, in the row\'s scope', async () => {
    const transactions = `${HEADERS.transactions}A-001,2024-01-02,deposit,,,,,1,000,,\n`;
    const book = await loadBook(bookWith({ 'transactions.csv': transactions }));
    expect(book.diagnostics).toEqual([{
      severity: 'error', scope: { kind: 'account', account: 'A-001' }, file: 'transactions.csv', line: 2,
      message: 'found 11 fields, expected 10 as in the header; put any value containing a comma in double quotes, and remove stray commas',
    }]);
  });
});

import { mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { parse } from 'csv-parse/sync';
import { afterAll, describe, expect, it } from 'vitest';
import { CsvFileWriter, csvField, csvLine, formatDecimal } from '../../src/synth/csv-writer.ts';

const scratch = mkdtempSync(path.join(tmpdir(), 'quarterline-csv-'));
afterAll(() => rmSync(scratch, { recursive: true, force: true }));

describe('csvField and csvLine', () => {
  it('quote as RFC 4180 and Python’s csv module (QUOTE_MINIMAL) do', () => {
    // python3 -c "import csv,io; b=io.StringIO(); csv.writer(b, lineterminator='\n').writerow(['a,b','say \"hi\"','x\ny','plain',
    //   \"Declan O'Rourke\",'Öberg-Lind']); print(repr(b.getvalue()))"
    //   -> '"a,b","say ""hi""","x\ny",plain,Declan O\'Rourke,Öberg-Lind\n'
    expect(csvLine(['a,b', 'say "hi"', 'x\ny', 'plain', "Declan O'Rourke", 'Öberg-Lind'])).toBe(
      '"a,b","say ""hi""","x\ny",plain,Declan O\'Rourke,Öberg-Lind\n',
    );
    expect(csvField('carriage\rreturn')).toBe('"carriage\rreturn"');
    expect(csvField('')).toBe('');
  });

  it('round-trips awkward fields through csv-parse', () => {
    const fields = ['Management fee, Q3 2026', '"quoted"', 'two\nlines', 'Anneliese & Joost', ''];
    expect(parse(csvLine(fields))).toEqual([fields]);
  });
});

describe('formatDecimal', () => {
  it('writes plain decimals without trailing zeros, exponents or negative zero', () => {
    expect(formatDecimal(100.5, 6)).toBe('100.5');
    expect(formatDecimal(0.1 + 0.2, 6)).toBe('0.3');
    expect(formatDecimal(123, 6)).toBe('123');
    expect(formatDecimal(1e-7, 6)).toBe('0');
    expect(formatDecimal(-0, 2)).toBe('0');
    expect(formatDecimal(-1e-9, 6)).toBe('0');
    expect(formatDecimal(1e21 - 1e5, 2)).not.toContain('e');
    expect(() => formatDecimal(Number.NaN, 2)).toThrow('cannot write a non-finite number (NaN) to a book file');
  });
});

describe('CsvFileWriter', () => {
  it('writes header and rows in chunks, counts rows, and shows the file only when closed', async () => {
    const file = path.join(scratch, 'rows.csv');
    const writer = await CsvFileWriter.create(file, ['n', 'text']);
    for (let index = 0; index < 50_000; index++) {
      writer.add([String(index), `row ${index}, with a comma`]);
      if (index % 1000 === 0) await writer.flushIfFull();
    }
    expect(readdirSync(scratch)).not.toContain('rows.csv');
    expect(await writer.close()).toBe(50_000);
    const records = parse(readFileSync(file, 'utf8')) as string[][];
    expect(records.length).toBe(50_001);
    expect(records[0]).toEqual(['n', 'text']);
    expect(records[50_000]).toEqual(['49999', 'row 49999, with a comma']);
    expect(readdirSync(scratch).filter((name) => name.includes('.tmp-'))).toEqual([]);
  });
});

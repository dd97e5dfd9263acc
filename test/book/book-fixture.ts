/**
 * Test books: the minimal valid book of test/fixtures/books/minimal, copied
 * into a temporary folder with some files replaced or removed.
 */
import { cpSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { expect } from 'vitest';
import { loadBook } from '../../src/book/load.ts';
import { BookError, type Diagnostic } from '../../src/errors.ts';

export const MINIMAL_BOOK = fileURLToPath(new URL('../fixtures/books/minimal', import.meta.url));

export type BookFile =
  | 'book.yaml' | 'mandates.yaml' | 'accounts.csv' | 'instruments.csv'
  | 'prices.csv' | 'fx.csv' | 'transactions.csv' | 'holdings.csv';

export const HEADERS = {
  accounts: 'account,client,mandate,base_currency,adviser,email,inception,locale\n',
  instruments: 'instrument,name,asset_class,currency,kind,multiplier,proxy\n',
  prices: 'date,instrument,price\n',
  fx: 'date,from,to,rate\n',
  transactions: 'account,date,type,instrument,quantity,price,fees,amount,currency,note\n',
  holdings: 'account,date,instrument,quantity\n',
} as const;

/** The instruments.csv of the minimal book, for tests that add rows to it. */
export const MINIMAL_INSTRUMENTS = `${HEADERS.instruments}EQIDX,World Equity TR Index,equity,GBP,index,,
BDIDX,Gilts TR Index,bonds,GBP,index,,
CASHIDX,Sterling Cash TR Index,cash,GBP,index,,
WEQF,World Equity Fund,equity,GBP,fund,,
UST30,US Treasury 2030,bonds,USD,security,0.01,BDIDX
`;

/** A scratch area removed by `removeScratchBooks`. */
const scratchRoot = mkdtempSync(path.join(tmpdir(), 'quarterline-book-test-'));
let bookCount = 0;

/** Copies the minimal book and applies `changes` (text or bytes replace a file, null removes it). */
export function bookWith(changes: Partial<Record<BookFile, string | Uint8Array | null>> = {}): string {
  const dir = path.join(scratchRoot, `book-${++bookCount}`);
  cpSync(MINIMAL_BOOK, dir, { recursive: true });
  for (const [file, content] of Object.entries(changes)) {
    const target = path.join(dir, file);
    if (content === null) rmSync(target);
    else writeFileSync(target, content);
  }
  return dir;
}

export function removeScratchBooks(): void {
  rmSync(scratchRoot, { recursive: true, force: true });
}

/** The diagnostics of the BookError that loading `dir` must throw. */
export async function bookErrorOf(dir: string): Promise<readonly Diagnostic[]> {
  try {
    await loadBook(dir);
  } catch (error) {
    expect(error).toBeInstanceOf(BookError);
    return (error as BookError).diagnostics;
  }
  throw new Error('expected loadBook to throw a BookError');
}

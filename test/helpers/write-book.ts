/** Writes a small book folder for tests: every file given as text, the rest minimal. */
import { mkdtemp, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';

export interface BookFiles {
  readonly 'book.yaml'?: string;
  readonly 'mandates.yaml'?: string;
  readonly 'accounts.csv'?: string;
  readonly 'instruments.csv'?: string;
  readonly 'prices.csv'?: string;
  readonly 'fx.csv'?: string;
  readonly 'transactions.csv'?: string;
  readonly 'holdings.csv'?: string;
}

export const MINIMAL_BOOK_YAML = `firm:
  name: Test Firm
risk_free: 0.02
asset_classes:
  cash:
    proxy: CIX
    expected_return: 0.02
  equity:
    proxy: IDX
    expected_return: 0.06
`;

export const MINIMAL_MANDATES_YAML = `growth:
  label: Growth
  benchmark:
    IDX: 1
  risk_aversion: 4
  allocation:
    cash: [0, 0.5]
    equity: [0.5, 1]
`;

/** A share, the equity index (benchmark and proxy) and the cash index, all in EUR. */
export const TEST_INSTRUMENTS = `instrument,name,asset_class,currency,kind,multiplier,proxy
S,Test Share,equity,EUR,security,,
IDX,Test Equity Index,equity,EUR,index,,
CIX,Test Cash Index,cash,EUR,index,,
`;

export async function writeBook(files: BookFiles): Promise<string> {
  const dir = await mkdtemp(path.join(tmpdir(), 'quarterline-book-'));
  const all: Record<string, string> = {
    'book.yaml': MINIMAL_BOOK_YAML,
    'mandates.yaml': MINIMAL_MANDATES_YAML,
    'fx.csv': 'date,from,to,rate\n',
    ...files,
  };
  for (const [name, content] of Object.entries(all)) await writeFile(path.join(dir, name), content);
  return dir;
}

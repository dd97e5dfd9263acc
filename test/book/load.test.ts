/**
 * loadBook on a valid book: the typed content, defaults, ordering, and the
 * folder-level errors (missing folder, missing file).
 *
 * Day numbers are days since 1970-01-01, computed independently with Python:
 *   python3 -c "from datetime import date; print([(date(2024,1,d)-date(1970,1,1)).days for d in (2,3,31)])"
 *   → [19724, 19725, 19753]
 */
import { afterAll, describe, expect, it } from 'vitest';
import { loadBook } from '../../src/book/load.ts';
import { bookErrorOf, bookWith, MINIMAL_BOOK, removeScratchBooks } from './book-fixture.ts';

const JAN_02_2024 = 19724;
const JAN_03_2024 = 19725;
const JAN_31_2024 = 19753;

afterAll(removeScratchBooks);

describe('loadBook on the minimal book', () => {
  it('reads the settings with their defaults', async () => {
    const { settings } = await loadBook(MINIMAL_BOOK);
    expect(settings.firm).toEqual({
      name: 'Example Wealth Partners',
      address: '1 High Street, Exampletown',
      email: 'office@example.org',
      phone: '+44 20 7946 0000',
      regulatoryNote: null,
    });
    expect(settings.locale).toBe('en-GB');
    expect(settings.riskFree).toEqual({ kind: 'index', instrument: 'CASHIDX' });
    expect(settings.staleAfterDays).toBe(7);
    expect(settings.estimation).toEqual({ windowMonths: 60, minMonths: 24, shrinkage: 'ledoit-wolf' });
    expect(settings.returnMethod).toBe('daily');
    expect(settings.cautions).toBeNull();
    expect([...settings.assetClasses.keys()]).toEqual(['equity', 'bonds', 'cash']);
    expect(settings.assetClasses.get('bonds')).toEqual({ id: 'bonds', label: 'bonds', proxy: 'BDIDX', expectedReturn: 0.03 });
    expect(settings.assetClasses.get('cash')?.expectedReturn).toBeNull();
  });

  it('reads the mandates in file order with their ranges and rules', async () => {
    const { mandates } = await loadBook(MINIMAL_BOOK);
    expect([...mandates.keys()]).toEqual(['balanced', 'cautious']);
    const balanced = mandates.get('balanced')!;
    expect(balanced.benchmark).toEqual([{ index: 'EQIDX', weight: 0.6 }, { index: 'BDIDX', weight: 0.4 }]);
    expect([...balanced.allocation]).toEqual([['equity', [0.4, 0.7]], ['bonds', [0.2, 0.5]], ['cash', [0, 0.1]]]);
    expect(balanced.maxPosition).toBe(0.6);
    expect(balanced.maxVolatility).toBeNull();
    expect(balanced.shortfall).toEqual([
      { threshold: -0.1, horizonYears: 1, confidence: 0.95, basis: 'average' },
      { threshold: 0, horizonYears: 5, confidence: 0.9, basis: 'cumulative' },
    ]);
    expect(mandates.get('cautious')?.label).toBe('cautious');
  });

  it('reads accounts and instruments exactly', async () => {
    const book = await loadBook(MINIMAL_BOOK);
    expect(book.accounts).toEqual([
      { id: 'A-001', client: 'Ada Lovelace', mandate: 'balanced', baseCurrency: 'GBP', adviser: 'J. Smith', email: 'ada@example.org', inception: null, locale: null, line: 2 },
      { id: 'A-002', client: 'Müller, Jürgen', mandate: 'cautious', baseCurrency: 'GBP', adviser: null, email: null, inception: JAN_02_2024, locale: 'de-CH', line: 3 },
    ]);
    expect(book.instruments.get('UST30')).toEqual({
      id: 'UST30', name: 'US Treasury 2030', assetClass: 'bonds', currency: 'USD', kind: 'security', multiplier: 0.01, proxy: 'BDIDX', line: 6,
    });
    expect(book.instruments.get('WEQF')?.multiplier).toBe(1);
    expect(book.diagnostics).toEqual([]);
    expect(book.rejectedAccounts).toEqual([]);
  });

  it('builds price and fx series as typed arrays sorted by day, keeping file lines', async () => {
    const book = await loadBook(MINIMAL_BOOK);
    const equityIndex = book.prices.get('EQIDX')!;
    // prices.csv lists 2024-01-31 (line 2) before 2024-01-02 (line 3).
    expect(equityIndex.days).toEqual(Int32Array.from([JAN_02_2024, JAN_31_2024]));
    expect(equityIndex.values).toEqual(Float64Array.from([1000, 1010.5]));
    expect(equityIndex.lines).toEqual(Int32Array.from([3, 2]));
    expect([...book.fx.keys()]).toEqual(['USD/GBP']);
    expect(book.fx.get('USD/GBP')!.values).toEqual(Float64Array.from([0.79, 0.785]));
  });

  it('resolves transaction currencies and sorts each account by day, then line', async () => {
    const book = await loadBook(MINIMAL_BOOK);
    const first = book.transactions.get('A-001')!;
    expect(first.map((row) => [row.line, row.type, row.currency])).toEqual([
      [2, 'deposit', 'GBP'], // cash row: the account's base currency
      [3, 'buy', 'GBP'],
      [4, 'buy', 'USD'], // trade: the instrument's currency
      [5, 'dividend', 'GBP'],
    ]);
    expect(first[2]).toEqual({
      account: 'A-001', day: JAN_03_2024, type: 'buy', instrument: 'UST30', quantity: 20000, price: 98.5, fees: 0,
      amount: 19700, currency: 'USD', note: 'bond at 98.5 % of nominal', line: 4,
    });
    expect(first[0]).toMatchObject({ instrument: null, quantity: 0, price: 0, fees: 0, amount: 100000 });
    const second = book.transactions.get('A-002')!;
    expect(second.map((row) => [row.line, row.type, row.currency, row.amount])).toEqual([
      [6, 'transfer_in', 'USD', null],
      [7, 'deposit', 'GBP', 5000],
    ]);
  });

  it('reads holdings and says the file was there', async () => {
    const book = await loadBook(MINIMAL_BOOK);
    expect(book.hasHoldingsFile).toBe(true);
    expect(book.holdings.get('A-002')).toEqual([{ account: 'A-002', day: JAN_31_2024, instrument: 'UST30', quantity: 10000, line: 4 }]);
  });

  it('returns frozen data', async () => {
    const book = await loadBook(MINIMAL_BOOK);
    expect(Object.isFrozen(book)).toBe(true);
    expect(Object.isFrozen(book.accounts)).toBe(true);
    expect(Object.isFrozen(book.accounts[0])).toBe(true);
    expect(Object.isFrozen(book.transactions.get('A-001')![0])).toBe(true);
  });
});

describe('loadBook defaults and options', () => {
  it('applies every book.yaml default when only the required keys are given', async () => {
    const dir = bookWith({
      'book.yaml': 'firm:\n  name: Tiny\nasset_classes:\n  equity: { proxy: EQIDX }\n  bonds: { proxy: BDIDX }\n  cash: { proxy: CASHIDX }\n',
    });
    const { settings } = await loadBook(dir);
    expect(settings).toMatchObject({
      locale: 'en-GB',
      riskFree: { kind: 'rate', annualRate: 0 },
      staleAfterDays: 7,
      estimation: { windowMonths: 60, minMonths: 24, shrinkage: 'ledoit-wolf' },
      returnMethod: 'daily',
      cautions: null,
    });
    expect(settings.firm).toEqual({ name: 'Tiny', address: null, email: null, phone: null, regulatoryNote: null });
  });

  it('reads returns.method, a numeric risk_free and the cautions', async () => {
    const dir = bookWith({
      'book.yaml': [
        'firm: { name: Tiny }',
        'risk_free: 0.025',
        'returns: { method: modified-dietz }',
        'estimation: { window_months: 36, min_months: 12, shrinkage: none }',
        'stale_after_days: 3',
        'cautions:',
        '  - Past performance is not a guide.',
        '  - Values can fall.',
        'asset_classes:',
        '  equity: { proxy: EQIDX }',
        '  bonds: { proxy: BDIDX }',
        '  cash: { proxy: CASHIDX }',
        '',
      ].join('\n'),
    });
    const { settings } = await loadBook(dir);
    expect(settings.returnMethod).toBe('modified-dietz');
    expect(settings.riskFree).toEqual({ kind: 'rate', annualRate: 0.025 });
    expect(settings.estimation).toEqual({ windowMonths: 36, minMonths: 12, shrinkage: 'none' });
    expect(settings.staleAfterDays).toBe(3);
    expect(settings.cautions).toEqual(['Past performance is not a guide.', 'Values can fall.']);
  });

  it('reads a mandate with a numeric id and keeps its benchmark (regression: numeric keys lost their entries)', async () => {
    const dir = bookWith({
      'mandates.yaml': '2024:\n  benchmark: { EQIDX: 0.6, BDIDX: 0.4 }\n  risk_aversion: 3\n  allocation: { equity: [0.4, 0.7], bonds: [0.2, 0.6], cash: [0, 0.1] }\n',
      'accounts.csv': 'account,client,mandate,base_currency\nA-001,Ada,2024,GBP\nA-002,Bo,2024,GBP\n',
    });
    const book = await loadBook(dir);
    expect(book.mandates.get('2024')!.benchmark).toEqual([{ index: 'EQIDX', weight: 0.6 }, { index: 'BDIDX', weight: 0.4 }]);
    expect(book.accounts.map((account) => account.mandate)).toEqual(['2024', '2024']);
  });

  it('loads without holdings.csv', async () => {
    const book = await loadBook(bookWith({ 'holdings.csv': null }));
    expect(book.hasHoldingsFile).toBe(false);
    expect(book.holdings.size).toBe(0);
  });
});

describe('loadBook folder errors', () => {
  it('names a missing folder', async () => {
    const diagnostics = await bookErrorOf(`${MINIMAL_BOOK}-does-not-exist`);
    expect(diagnostics).toHaveLength(1);
    expect(diagnostics[0]!.message).toMatch(/^found no such folder, expected a book folder/);
  });

  it('names every missing required file, and only those', async () => {
    const dir = bookWith({ 'fx.csv': null, 'mandates.yaml': null, 'holdings.csv': null });
    const diagnostics = await bookErrorOf(dir);
    expect(diagnostics.map((diagnostic) => [diagnostic.file, diagnostic.line, diagnostic.scope.kind])).toEqual([
      ['mandates.yaml', null, 'book'],
      ['fx.csv', null, 'book'],
    ]);
    expect(diagnostics[1]!.message).toBe(`found no fx.csv in the book folder ${dir}, expected it there (every book needs it); add the file`);
  });
});

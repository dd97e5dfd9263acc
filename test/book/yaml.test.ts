/**
 * book.yaml and mandates.yaml: invalid YAML, schema violations and
 * references into instruments.csv, each a BookError whose diagnostics name
 * the file, the line and the key path.
 */
import { afterAll, describe, expect, it } from 'vitest';
import { loadBook } from '../../src/book/load.ts';
import { parseYamlFile } from '../../src/book/yaml.ts';
import { BookError, type Diagnostic } from '../../src/errors.ts';
import { bookErrorOf, bookWith, removeScratchBooks } from './book-fixture.ts';

afterAll(removeScratchBooks);

const ASSET_CLASSES = 'asset_classes:\n  equity: { proxy: EQIDX }\n  bonds: { proxy: BDIDX }\n  cash: { proxy: CASHIDX }\n';

/** A book error's diagnostics as `line [column]: message`, for compact exact checks. */
function lines(diagnostics: readonly Diagnostic[]): string[] {
  return diagnostics.map((diagnostic) => {
    expect(diagnostic.scope).toEqual({ kind: 'book' });
    expect(diagnostic.severity).toBe('error');
    return `${diagnostic.file}:${diagnostic.line}${diagnostic.column ? ` [${diagnostic.column}]` : ''}: ${diagnostic.message}`;
  });
}

describe('invalid YAML', () => {
  it('names the line of a syntax error', async () => {
    const text = 'firm:\n  name: Example\nlocale: en-GB\nasset_classes:\n  equity:\n   proxy: EQIDX\n  bonds:\n    proxy: "BDIDX\n';
    const diagnostics = await bookErrorOf(bookWith({ 'book.yaml': text }));
    expect(diagnostics.length).toBeGreaterThanOrEqual(1);
    expect(diagnostics[0]).toMatchObject({ file: 'book.yaml', line: 8, scope: { kind: 'book' } });
    expect(diagnostics[0]!.message).toMatch(/^found invalid YAML \(.+\), expected valid YAML; correct the line or the one above it/);
  });

  it('names the line of a key written twice', async () => {
    const diagnostics = await bookErrorOf(bookWith({ 'mandates.yaml': 'balanced:\n  risk_aversion: 4\n  risk_aversion: 5\n' }));
    expect(lines(diagnostics)).toEqual([
      'mandates.yaml:3: found invalid YAML (a key written twice in the same map), expected each key once; correct the line or the one above it (indent with spaces, quote text containing ": " or "#")',
    ]);
  });

  it('refuses aliases that expand too far', () => {
    const bomb = ['a: &a [x, x, x, x, x, x, x, x, x, x]', 'b: &b [*a, *a, *a, *a, *a, *a, *a, *a, *a, *a]', 'c: [*b, *b, *b, *b, *b, *b, *b, *b, *b, *b]', ''].join('\n');
    expect(() => parseYamlFile('book.yaml', bomb)).toThrow(BookError);
  });
});

describe('book.yaml schema', () => {
  it('reports each problem at its own line and key, in line order', async () => {
    const text = [
      'firm:', //                                        1
      '  nam: Example', //                               2
      '  email: office', //                              3
      'locale: en_GB', //                                4
      'risk_free: 4', //                                 5
      'estimation:', //                                  6
      '  window_months: 12', //                          7
      '  min_months: 24', //                             8
      'returns:', //                                     9
      '  method: weekly', //                            10
      'asset_classes:', //                              11
      '  equity: { proxy: EQIDX, expected_return: 6 }', // 12
      'cautions: []', //                                13
      '',
    ].join('\n');
    const diagnostics = await bookErrorOf(bookWith({ 'book.yaml': text }));
    expect(lines(diagnostics)).toEqual([
      'book.yaml:1 [firm.name]: found nothing, expected the firm name printed on every statement; add the key',
      'book.yaml:2 [firm.nam]: found the unknown key "nam", expected only the keys name, address, email, phone, regulatory_note in the firm block; check the spelling or remove the key',
      'book.yaml:3 [firm.email]: found "office", expected one e-mail address such as office@example.org; correct it',
      'book.yaml:4 [locale]: found "en_GB", expected a BCP 47 language tag such as en-GB or de-CH (a hyphen, not an underscore); correct the tag',
      'book.yaml:5 [risk_free]: found 4, expected the annual risk-free rate as a decimal (0.05 = 5 %) between -1 and 1; write 5 % as 0.05',
      'book.yaml:8 [estimation.min_months]: found 24, expected min_months no larger than window_months (12); lower min_months or raise window_months',
      'book.yaml:10 [returns.method]: found "weekly", expected daily or modified-dietz; write one of them',
      'book.yaml:11 [asset_classes]: found a map, expected an asset class named cash (cash balances belong to it); add "cash:" with its proxy under asset_classes',
      'book.yaml:12 [asset_classes.equity.expected_return]: found 6, expected the expected annual return as a decimal (0.05 = 5 %) between -1 and 1; write 5 % as 0.05',
      'book.yaml:13 [cautions]: found [], expected at least one paragraph; remove the key to use the built-in cautions',
    ]);
  });

  it('refuses an empty book.yaml', async () => {
    const diagnostics = await bookErrorOf(bookWith({ 'book.yaml': '# nothing yet\n' }));
    expect(lines(diagnostics)).toEqual([
      'book.yaml:1: found an empty value, expected book.yaml as a map of keys and values; write it as "key: value" lines indented under its name',
    ]);
  });

  it('requires proxies and an index risk_free to be indices of instruments.csv', async () => {
    const text = `firm: { name: X }\nrisk_free: WEQF\nasset_classes:\n  equity: { proxy: NOPE }\n  bonds: { proxy: UST30 }\n  cash: { proxy: CASHIDX }\n`;
    const diagnostics = await bookErrorOf(bookWith({ 'book.yaml': text }));
    expect(lines(diagnostics)).toEqual([
      'book.yaml:2 [risk_free]: found "WEQF", expected an index (the risk-free series), but instruments.csv:5 has kind fund; use an index or change its kind',
      'book.yaml:4 [asset_classes.equity.proxy]: found "NOPE", expected the id of an index in instruments.csv (the proxy of an asset class); add the index to instruments.csv or correct the id',
      'book.yaml:5 [asset_classes.bonds.proxy]: found "UST30", expected an index (the proxy of an asset class), but instruments.csv:6 has kind security; use an index or change its kind',
    ]);
  });
});

describe('mandates.yaml schema', () => {
  const mandate = (body: string): string => `m1:\n${body}`;
  const valid = {
    benchmark: '  benchmark: { EQIDX: 0.6, BDIDX: 0.4 }\n',
    risk: '  risk_aversion: 3\n',
    allocation: '  allocation: { equity: [0.4, 0.7], bonds: [0.2, 0.6], cash: [0, 0.1] }\n',
  };

  it('refuses benchmark weights that do not sum to 1', async () => {
    const text = mandate(`  benchmark:\n    EQIDX: 0.6\n    BDIDX: 0.3\n${valid.risk}${valid.allocation}`);
    const diagnostics = await bookErrorOf(bookWith({ 'mandates.yaml': text }));
    expect(lines(diagnostics)).toEqual([
      'mandates.yaml:2 [m1.benchmark]: found a map, expected benchmark weights summing to 1 (within 1e-9), but they sum to 0.9; correct the weights',
    ]);
  });

  it('accepts weights that sum to 1 within 1e-9 in binary floating point', async () => {
    // Summed in file order, as the loader does: python3 -c "print(0.6 + 0.3 + 0.1)"  →  0.9999999999999999
    const text = mandate(`  benchmark: { EQIDX: 0.6, BDIDX: 0.3, CASHIDX: 0.1 }\n${valid.risk}${valid.allocation}`);
    const book = await loadBook(bookWith({ 'mandates.yaml': text, 'accounts.csv': 'account,client,mandate,base_currency\nA-001,Ada,m1,GBP\nA-002,Bo,m1,GBP\n' }));
    expect(book.mandates.get('m1')!.benchmark.map((component) => component.weight)).toEqual([0.6, 0.3, 0.1]);
  });

  it('refuses benchmark components that are not indices of instruments.csv', async () => {
    const text = mandate(`  benchmark:\n    WEQF: 0.5\n    NOPE: 0.5\n${valid.risk}${valid.allocation}`);
    const diagnostics = await bookErrorOf(bookWith({ 'mandates.yaml': text }));
    expect(lines(diagnostics)).toEqual([
      'mandates.yaml:3 [m1.benchmark.WEQF]: found the key "WEQF", expected an index as a benchmark component, but instruments.csv:5 has kind fund; use its index instead',
      'mandates.yaml:4 [m1.benchmark.NOPE]: found the key "NOPE", expected the id of an index in instruments.csv as a benchmark component; add the index to instruments.csv or correct the id',
    ]);
  });

  it('refuses unknown asset classes, inverted and out-of-range allocation ranges', async () => {
    const text = mandate(`${valid.benchmark}${valid.risk}  allocation:\n    equity: [0.7, 0.4]\n    gold: [0, 1]\n    bonds: [-0.1, 1.5]\n`);
    const diagnostics = await bookErrorOf(bookWith({ 'mandates.yaml': text }));
    expect(lines(diagnostics)).toEqual([
      'mandates.yaml:5 [m1.allocation.equity]: found [0.7,0.4], expected min no larger than max; swap the two numbers',
      'mandates.yaml:6 [m1.allocation.gold]: found the key "gold", expected an asset class of book.yaml (equity, bonds, cash); correct the name or add the class to book.yaml',
      'mandates.yaml:7 [m1.allocation.bonds.0]: found -0.1, expected a minimum weight between 0 and 1; write 0 or more',
      'mandates.yaml:7 [m1.allocation.bonds.1]: found 1.5, expected a maximum weight between 0 and 1; write 60 % as 0.6',
    ]);
  });

  it('refuses ranges that cannot hold a fully invested mix', async () => {
    const text = mandate(`${valid.benchmark}${valid.risk}  allocation: { equity: [0, 0.3], cash: [0, 0.2] }\n`);
    const diagnostics = await bookErrorOf(bookWith({ 'mandates.yaml': text }));
    expect(lines(diagnostics)).toEqual([
      'mandates.yaml:4 [m1.allocation]: found a map, expected ranges that admit a fully invested mix (sum of minimums 0 ≤ 1 ≤ sum of maximums 0.5); widen the ranges',
    ]);
  });

  it('refuses risk aversion ≤ 0, horizon ≤ 0 and confidence outside (0, 1)', async () => {
    const text = mandate([
      valid.benchmark.trimEnd(), //                        2
      '  risk_aversion: 0', //                             3
      valid.allocation.trimEnd(), //                       4
      '  shortfall:', //                                   5
      '    - threshold: -0.10', //                         6
      '      horizon_years: 0', //                         7
      '      confidence: 1', //                            8
      '    - { threshold: -0.2, horizon_years: 2.5, confidence: 0, basis: every_year }', // 9
      '',
    ].join('\n'));
    const diagnostics = await bookErrorOf(bookWith({ 'mandates.yaml': text }));
    expect(lines(diagnostics)).toEqual([
      'mandates.yaml:3 [m1.risk_aversion]: found 0, expected a risk aversion a greater than 0; write a positive number (typically 1 to 10)',
      'mandates.yaml:7 [m1.shortfall.0.horizon_years]: found 0, expected a horizon in years greater than 0; write e.g. 5',
      'mandates.yaml:8 [m1.shortfall.0.confidence]: found 1, expected a confidence strictly between 0 and 1, e.g. 0.95; write 95 % as 0.95',
      'mandates.yaml:9 [m1.shortfall.1.confidence]: found 0, expected a confidence strictly between 0 and 1; write e.g. 0.95',
    ]);
  });

  it('refuses a whole-year basis with a fractional horizon, and a misspelt key', async () => {
    const text = mandate(`${valid.benchmark}${valid.risk}${valid.allocation}  max_volatilty: 0.1\n  shortfall:\n    - { threshold: -0.2, horizon_years: 2.5, confidence: 0.9, basis: every_year }\n`);
    const diagnostics = await bookErrorOf(bookWith({ 'mandates.yaml': text }));
    expect(lines(diagnostics)).toEqual([
      'mandates.yaml:5 [m1.max_volatilty]: found the unknown key "max_volatilty", expected only the keys label, benchmark, risk_aversion, allocation, max_position, max_volatility, max_tracking_error, shortfall in a mandate; check the spelling or remove the key',
      'mandates.yaml:7 [m1.shortfall.0.horizon_years]: found 2.5, expected a whole number of years for the every_year basis (it counts single years); round the horizon',
    ]);
  });

  it('refuses a missing cash class in book.yaml together with mandate problems found in the same stage', async () => {
    const diagnostics = await bookErrorOf(bookWith({ 'book.yaml': 'firm: { name: X }\nasset_classes:\n  equity: { proxy: EQIDX }\n' }));
    expect(lines(diagnostics)).toEqual([
      'book.yaml:2 [asset_classes]: found a map, expected an asset class named cash (cash balances belong to it); add "cash:" with its proxy under asset_classes',
    ]);
  });
});

describe('YAML line lookup', () => {
  it('points at the key of a block map and at a list item', () => {
    const yaml = parseYamlFile('mandates.yaml', `${ASSET_CLASSES}list:\n  - a: 1\n  - b: 2\n`);
    expect(yaml.lineOf(['asset_classes'])).toBe(1);
    expect(yaml.lineOf(['asset_classes', 'bonds', 'proxy'])).toBe(3);
    expect(yaml.lineOf(['list', 1])).toBe(7);
    expect(yaml.lineOf(['list', 1, 'missing'])).toBe(7);
    expect(yaml.keysInOrder(['asset_classes'], { cash: 1, equity: 1, bonds: 1 })).toEqual(['equity', 'bonds', 'cash']);
  });

  it('keeps numeric, boolean and null keys in the order written', () => {
    const yaml = parseYamlFile('mandates.yaml', 'b: 1\n2: 2\ntrue: 3\n1: 4\n~: 5\nnested:\n  3: x\n  a: y\n');
    const value = yaml.value as Record<string, Record<string, string>>;
    expect(yaml.keysInOrder([], value)).toEqual(['b', '2', 'true', '1', '', 'nested']);
    expect(yaml.keysInOrder(['nested'], value.nested!)).toEqual(['3', 'a']);
  });

  it('refuses a __proto__ key, which a plain object cannot hold as an entry', () => {
    let diagnostics: readonly Diagnostic[] = [];
    try {
      parseYamlFile('mandates.yaml', 'm1:\n  benchmark:\n    __proto__: 1\n');
    } catch (caught) {
      diagnostics = (caught as BookError).diagnostics;
    }
    expect(lines(diagnostics)).toEqual([
      'mandates.yaml:3 [m1.benchmark.__proto__]: found the key "__proto__", expected an ordinary name (this one cannot be stored as a map key); rename it',
    ]);
  });
});

/**
 * The formatting of figures and the Nunjucks filters, in en-GB and de-DE.
 *
 * Reference values come from Babel 2.10.3 (Python, Unicode CLDR 41), an
 * implementation of the locale data independent of Node's ICU, run as:
 *
 *   /usr/bin/python3 -c "
 *   from babel.numbers import format_currency, format_percent, format_decimal
 *   from babel.dates import format_date; from datetime import date
 *   for loc in ['en_GB', 'de_DE']:
 *       pat = '#,##0.00%' if loc == 'en_GB' else '#,##0.00\xa0%'
 *       print(format_currency(1847824.699525794, 'EUR', locale=loc), format_currency(1234.5, 'USD', locale=loc),
 *             format_percent(0.030337603778885343, pat, locale=loc), format_percent(-0.007056897582021292, pat, locale=loc),
 *             format_decimal(742.255, '#,##0.####', locale=loc), format_decimal(106321.11939550002, '#,##0.00', locale=loc),
 *             format_decimal(62.1, '#,##0.00##', locale=loc), format_date(date(2026, 9, 30), format='long', locale=loc),
 *             format_date(date(2026, 9, 30), format='medium', locale=loc), format_date(date(2023, 10, 1), format='MMMM y', locale=loc))"
 *
 * en_GB: €1,847,824.70  US$1,234.50  3.03%  -0.71%  742.255  106,321.12  62.10  30 September 2026  30 Sept 2026  October 2023
 * de_DE: 1.847.824,70 €  1.234,50 $  3,03 %  -0,71 %  742,255  106.321,12  62,10  30. September 2026  30.09.2026  Oktober 2023
 * (de_DE separates the number from € and % with U+00A0, a no-break space.)
 */
import { describe, expect, it } from 'vitest';
import { FormatError, NOT_AVAILABLE, formatterFor, nextIsoDate } from '../../src/report/format.ts';
import { FILTERS } from '../../src/render/filters.ts';
import { compactPercent, shortfallEventWords, shortfallRuleSentence } from '../../src/report/wording.ts';

const NBSP = '\u00a0';

describe('formatterFor en-GB (Babel 2.10.3, CLDR 41)', () => {
  const format = formatterFor('en-GB');
  it('formats money with the symbol before the amount', () => {
    expect(format.money(1847824.699525794, 'EUR')).toBe('€1,847,824.70');
    expect(format.money(1234.5, 'USD')).toBe('US$1,234.50');
  });
  it('formats percentages with two decimals and no space', () => {
    expect(format.percent(0.030337603778885343)).toBe('3.03%');
    expect(format.percent(-0.007056897582021292)).toBe('-0.71%');
  });
  it('formats quantities, amounts and prices', () => {
    expect(format.quantity(742.255)).toBe('742.255');
    expect(format.amount(106321.11939550002)).toBe('106,321.12');
    expect(format.price(62.1)).toBe('62.10');
  });
  it('formats dates in words, short, and months', () => {
    expect(format.date('2026-09-30')).toBe('30 September 2026');
    expect(format.dateShort('2026-09-30')).toBe('30 Sept 2026');
    expect(format.month('2023-10')).toBe('October 2023');
  });
});

describe('formatterFor de-DE (Babel 2.10.3, CLDR 41)', () => {
  const format = formatterFor('de-DE');
  it('formats money with the symbol after a no-break space', () => {
    expect(format.money(1847824.699525794, 'EUR')).toBe(`1.847.824,70${NBSP}€`);
    expect(format.money(1234.5, 'USD')).toBe(`1.234,50${NBSP}$`);
  });
  it('formats percentages with a decimal comma and a no-break space before %', () => {
    expect(format.percent(0.030337603778885343)).toBe(`3,03${NBSP}%`);
    expect(format.percent(-0.007056897582021292)).toBe(`-0,71${NBSP}%`);
  });
  it('formats quantities, amounts and prices', () => {
    expect(format.quantity(742.255)).toBe('742,255');
    expect(format.amount(106321.11939550002)).toBe('106.321,12');
    expect(format.price(62.1)).toBe('62,10');
  });
  it('formats dates in words, short, and months', () => {
    expect(format.date('2026-09-30')).toBe('30. September 2026');
    expect(format.dateShort('2026-09-30')).toBe('30.09.2026');
    expect(format.month('2023-10')).toBe('Oktober 2023');
  });
  it('reports its separators for chart axes', () => {
    expect(format.separators).toMatchObject({ decimal: ',', group: '.', percentSuffix: `${NBSP}%` });
  });
});

describe('signs, percentage points and rounding', () => {
  it('adds a plus sign only when asked, never to zero', () => {
    const format = formatterFor('en-GB');
    expect(format.percent(0.0303, { signed: true })).toBe('+3.03%');
    expect(format.percent(0, { signed: true })).toBe('0.00%');
    expect(format.money(-3703.06, 'EUR', { signed: true })).toBe('-€3,703.06');
    expect(format.money(0, 'EUR', { signed: true })).toBe('€0.00');
  });
  it('writes differences in percentage points: (0.030337 − 0.037394) × 100 = −0.71', () => {
    expect(formatterFor('en-GB').percentagePoints(-0.007056897582021292, 2)).toBe(`-0.71${NBSP}pp`);
    expect(formatterFor('de-DE').percentagePoints(0.26836766915715297, 1)).toBe(`+26,8${NBSP}pp`);
  });
  it('shows as few decimals as a limit needs', () => {
    const format = formatterFor('en-GB');
    expect(compactPercent(format, 0.1)).toBe('10%');
    expect(compactPercent(format, 0.025)).toBe('2.5%');
    expect(compactPercent(format, 1 - 0.95)).toBe('5%');
    expect(compactPercent(format, 0.0125)).toBe('1.25%');
  });
});

describe('figures that are not available', () => {
  const format = formatterFor('en-GB');
  it.each([null, Number.NaN, Number.POSITIVE_INFINITY, Number.NEGATIVE_INFINITY])('shows %s as "not available", never blank or NaN', (value) => {
    expect(format.money(value, 'EUR')).toBe(NOT_AVAILABLE);
    expect(format.percent(value)).toBe(NOT_AVAILABLE);
    expect(format.percentagePoints(value)).toBe(NOT_AVAILABLE);
    expect(format.amount(value)).toBe(NOT_AVAILABLE);
    expect(format.quantity(value)).toBe(NOT_AVAILABLE);
    expect(format.decimal(value, 2)).toBe(NOT_AVAILABLE);
  });
});

describe('bad input is refused with a clear message', () => {
  it('refuses a locale that is not a language tag', () => {
    expect(() => formatterFor('not a locale!')).toThrow(FormatError);
    expect(() => formatterFor('not a locale!')).toThrow('locale "not a locale!" is not a BCP 47 language tag such as en-GB or de-DE');
  });
  it('refuses dates that are not ISO dates or do not exist', () => {
    const format = formatterFor('en-GB');
    expect(() => format.date('30/09/2026')).toThrow('date requires an ISO date YYYY-MM-DD, got "30/09/2026"');
    expect(() => format.date('2026-02-30')).toThrow('date requires an ISO date YYYY-MM-DD, got "2026-02-30"');
  });
  it('steps over month and leap-year ends', () => {
    expect(nextIsoDate('2026-06-30')).toBe('2026-07-01');
    expect(nextIsoDate('2024-02-28')).toBe('2024-02-29');
    expect(nextIsoDate('2025-12-31')).toBe('2026-01-01');
  });
});

describe('Nunjucks filters', () => {
  it('format with the locale given as an argument', () => {
    expect(FILTERS.money(1847824.699525794, 'EUR', 'de-DE')).toBe(`1.847.824,70${NBSP}€`);
    expect(FILTERS.percent(0.030337603778885343, 'en-GB')).toBe('3.03%');
    expect(FILTERS.percent(1, 'de-DE', 1)).toBe(`100,0${NBSP}%`);
    expect(FILTERS.percent(0.0303, 'en-GB', 2, true)).toBe('+3.03%');
    expect(FILTERS.amount(106321.11939550002, 'de-DE')).toBe('106.321,12');
    expect(FILTERS.date('2026-09-30', 'de-DE')).toBe('30. September 2026');
    expect(FILTERS.dateShort('2026-09-30', 'en-GB')).toBe('30 Sept 2026');
    expect(FILTERS.decimal(0.7323786048734061, 'de-DE', 2)).toBe('0,73');
  });
  it('show a missing value as "not available"', () => {
    expect(FILTERS.percent(null, 'en-GB')).toBe(NOT_AVAILABLE);
    expect(FILTERS.money(undefined, 'EUR', 'en-GB')).toBe(NOT_AVAILABLE);
  });
});

describe('shortfall rules in words', () => {
  const rule = { threshold: -0.1, horizon_years: 1, confidence: 0.95, basis: 'average' as const, probability: 0.031, probability_lognormal: 0.029, quantile: -0.08, holds: true };
  it('words a one-year rule as in the statement brief', () => {
    expect(shortfallRuleSentence(formatterFor('en-GB'), rule)).toBe('a loss worse than 10% over one year: 3.1% probability, limit 5%');
    expect(shortfallRuleSentence(formatterFor('de-DE'), rule)).toBe(`a loss worse than 10${NBSP}% over one year: 3,1${NBSP}% probability, limit 5${NBSP}%`);
  });
  it('words each basis over several years', () => {
    const format = formatterFor('en-GB');
    expect(shortfallEventWords(format, { ...rule, horizon_years: 5, basis: 'average' })).toBe('a loss worse than 10% a year on average over 5 years');
    expect(shortfallEventWords(format, { ...rule, threshold: -0.05, horizon_years: 5, basis: 'cumulative' })).toBe('a loss worse than 5% in total over 5 years');
    expect(shortfallEventWords(format, { ...rule, horizon_years: 3, basis: 'every_year' })).toBe('a loss worse than 10% in any single year of the next 3 years');
    expect(shortfallEventWords(format, { ...rule, threshold: 0.02, horizon_years: 10, basis: 'average' })).toBe('a return below 2% a year on average over 10 years');
  });
});

/**
 * Nunjucks filters for templates: the formatters of src/report/format.ts
 * with the locale as an explicit argument, e.g.
 * `{{ 0.0303 | percent(s.locale) }}`, `{{ 1234.5 | money('EUR', s.locale) }}`.
 * A null, NaN or infinite value shows as "not available", never blank.
 */
import { formatterFor } from '../report/format.ts';

type Value = number | null | undefined;

const orNull = (value: Value): number | null => (value === undefined ? null : value);

export const FILTERS = {
  /** Money with its currency: `{{ v | money('EUR', locale) }}`. */
  money: (value: Value, currency: string, locale: string): string => formatterFor(locale).money(orNull(value), currency),
  /** An amount with two decimals, no currency: `{{ v | amount(locale) }}`. */
  amount: (value: Value, locale: string): string => formatterFor(locale).amount(orNull(value)),
  /** A decimal as a percentage: `{{ 0.0303 | percent(locale) }}`, digits default 2; signed adds "+". */
  percent: (value: Value, locale: string, digits = 2, signed = false): string =>
    formatterFor(locale).percent(orNull(value), { digits, signed }),
  /** A plain number with fixed decimals: `{{ v | decimal(locale, 2) }}`. */
  decimal: (value: Value, locale: string, digits = 2): string => formatterFor(locale).decimal(orNull(value), digits),
  /** An ISO date in words: `{{ '2026-09-30' | date(locale) }}` → "30 September 2026". */
  date: (iso: string, locale: string): string => formatterFor(locale).date(iso),
  /** An ISO date, short: `{{ '2026-09-30' | dateShort(locale) }}` → "30 Sept 2026". */
  dateShort: (iso: string, locale: string): string => formatterFor(locale).dateShort(iso),
} as const;

export type FilterName = keyof typeof FILTERS;

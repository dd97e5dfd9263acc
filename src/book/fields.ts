/**
 * Zod schemas for single CSV cells: text in, typed value out.
 *
 * Every message is the second half of a diagnostic sentence: the caller
 * writes `found "<cell>", ` before it, so each one reads
 * "expected <what>; <how to fix>".
 *
 * Identifiers, codes, dates and numbers are trimmed of surrounding spaces
 * (spreadsheet exports often pad them); free text (client and instrument
 * names, adviser, note) is kept exactly as written.
 */
import { z } from 'zod';
import { parseIsoDate, type Day } from '../dates.ts';

/** `account` ids end up in file names: letters, digits, dot, underscore, hyphen; 1 to 64 of them. */
export const ACCOUNT_ID = /^[A-Za-z0-9._-]{1,64}$/;
/** ISO 4217 shape: three upper-case letters. */
export const CURRENCY_CODE = /^[A-Z]{3}$/;
/** A decimal number: `.` as the decimal mark, no thousands separators, an optional exponent. */
export const DECIMAL_NUMBER = /^[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?$/;
/** An e-mail address of the shape `local@domain.tld` (no spaces). */
export const EMAIL_ADDRESS = /^[^\s@]+@[^\s@]+\.[^\s@]+$/;

const DATE_CACHE_LIMIT = 100_000;
const dateCache = new Map<string, Day | null>();

/**
 * `parseIsoDate` remembered per text: a long prices.csv repeats the same few
 * thousand dates hundreds of times.
 */
export function parseIsoDateCached(text: string): Day | null {
  const cached = dateCache.get(text);
  if (cached !== undefined) return cached;
  if (dateCache.size >= DATE_CACHE_LIMIT) dateCache.clear();
  const day = parseIsoDate(text);
  dateCache.set(text, day);
  return day;
}

/** Treats an empty (or blank) cell as null and passes anything else to `schema`. */
export function optionalCell<Output>(schema: z.ZodType<Output, string>) {
  return z.string().transform((text) => (text.trim() === '' ? null : text)).pipe(schema.nullable());
}

/** Required free text, kept exactly as written (only checked not to be blank). */
export function textCell(expected: string) {
  return z.string().refine((text) => text.trim() !== '', { error: `expected ${expected}; fill it in` });
}

/** Optional free text, kept exactly as written; null when blank. */
export const optionalTextCell = z.string().transform((text) => (text.trim() === '' ? null : text));

/** A required identifier (instrument, mandate): trimmed, not blank. */
export function idCell(expected: string) {
  return z.string().trim().min(1, { error: `expected ${expected}; fill it in` });
}

export const accountIdCell = z.string().trim().regex(ACCOUNT_ID, {
  error: 'expected an account id of 1 to 64 letters, digits, ".", "_" or "-" (it is used in file names); change the id',
});

export const currencyCell = z.string().trim().regex(CURRENCY_CODE, {
  error: (issue) => {
    const text = String(issue.input);
    return /^[A-Za-z]{3}$/.test(text)
      ? `expected an ISO 4217 currency code in capitals; write ${text.toUpperCase()}`
      : 'expected an ISO 4217 currency code of three capital letters, e.g. GBP; correct the code';
  },
});

export const dayCell = z.string().trim().transform((text, context) => {
  const day = parseIsoDateCached(text);
  if (day === null) {
    context.addIssue({
      code: 'custom',
      message: /^\d{4}-\d{2}-\d{2}$/.test(text)
        ? 'expected a real calendar date; check the month and the day'
        : 'expected a date as YYYY-MM-DD; write it e.g. as 2024-03-31',
    });
    return z.NEVER;
  }
  return day;
});

export const emailCell = z.string().trim().regex(EMAIL_ADDRESS, {
  error: 'expected one e-mail address such as name@example.org; correct it or leave the cell empty',
});

/** A BCP 47 language tag, e.g. en-GB or de-CH, as accepted by Intl. */
export function isLanguageTag(text: string): boolean {
  try {
    return Intl.getCanonicalLocales(text).length === 1;
  } catch {
    return false;
  }
}

export const localeCell = z.string().trim().refine(isLanguageTag, {
  error: 'expected a BCP 47 language tag such as en-GB or de-CH (a hyphen, not an underscore); correct it or leave the cell empty',
});

function numberSyntaxHint(text: string): string {
  if (/^[+-]?\d{1,3}(?:,\d{3})+(?:\.\d*)?$/.test(text)) return `remove the thousands separators: write ${text.replaceAll(',', '')}`;
  if (/^[+-]?\d*,\d+$/.test(text)) return `use "." as the decimal mark: write ${text.replace(',', '.')}`;
  if (text.includes('%')) return 'write a plain decimal without "%"';
  return 'write a plain decimal number such as 1234.5';
}

/**
 * A decimal number as text, converted to a number and checked by `range`
 * (by default any finite number). One pipe stage only: this runs on every
 * row of prices.csv.
 */
export function numberCell(expected: string, range: z.ZodNumber = z.number()) {
  return z.string().trim()
    .regex(DECIMAL_NUMBER, { error: (issue) => `expected ${expected}; ${numberSyntaxHint(String(issue.input))}` })
    .transform(Number)
    .pipe(range);
}

/** `z.number()` that words a value too large for a double (1e400 → Infinity). */
function finiteNumber(expected: string) {
  return z.number({ error: `expected ${expected} of ordinary size; check the number` });
}

/**
 * A non-negative number (quantity, price, fees, amount of a transaction).
 * `direction` names the row type for the hint, e.g. "sell".
 */
export function nonNegativeCell(what: string, direction: string) {
  const expected = `a non-negative ${what}`;
  return numberCell(expected, finiteNumber(expected).min(0, {
    error: (issue) => `expected ${expected}; the type gives the direction, so write ${-Number(issue.input)} for a ${direction}`,
  }));
}

/** A strictly positive number (a price, an exchange rate, a multiplier). */
export function positiveCell(what: string, hint: string) {
  const expected = `a positive ${what}`;
  return numberCell(expected, finiteNumber(expected).positive({ error: `expected ${expected}; ${hint}` }));
}

/** Any finite number (a custodian's quantity). */
export function anyNumberCell(what: string) {
  return numberCell(what, finiteNumber(what));
}

/**
 * Formatting of the figures shown on statements and the overview: numbers,
 * money, percentages and dates through `Intl` in the client's locale, the
 * same functions everywhere (view model, Nunjucks filters, chart axes).
 *
 * A figure that is null, NaN or infinite is shown as NOT_AVAILABLE, never as
 * a blank or "NaN": figures.json stores all three as null, so the statement
 * and the machine-readable figures agree. Nothing is rounded before display.
 */

/** What a statement shows in place of a figure that could not be computed. */
export const NOT_AVAILABLE = 'not available';

/** What a statement shows where a figure does not apply (a dividend has no price). */
export const NOT_APPLICABLE = '–';

export interface PercentOptions {
  /** Digits after the decimal separator; default 2. */
  readonly digits?: number;
  /** Show "+" on positive values (returns, differences); default false. */
  readonly signed?: boolean;
}

export interface Formatter {
  readonly locale: string;
  /** Money with its currency symbol or code, in the currency's usual decimals: "€1,847,824.70". */
  money(value: number | null, currency: string, options?: { readonly signed?: boolean }): string;
  /** An amount without a currency sign, two decimals and grouping: "1,847,824.70". */
  amount(value: number | null, options?: { readonly signed?: boolean }): string;
  /** A decimal as a percentage: 0.0303 → "3.03%" (en-GB), "3,03 %" (de-DE). */
  percent(value: number | null, options?: PercentOptions): string;
  /** A difference of two decimals in percentage points: 0.268 → "+26.8 pp". */
  percentagePoints(value: number | null, digits?: number): string;
  /** A quantity of units or nominal: up to four decimals, no trailing zeros. */
  quantity(value: number | null): string;
  /** A price: at least two, at most four decimals. */
  price(value: number | null): string;
  /** A plain number with a fixed number of decimals (ratios, index levels). */
  decimal(value: number | null, digits: number): string;
  /** A whole number with grouping: 1234 → "1,234". */
  integer(value: number | null): string;
  /** An ISO date `YYYY-MM-DD` in words: "30 September 2026". */
  date(iso: string): string;
  /** An ISO date, short: "30 Sept 2026" (en-GB), "30.09.2026" (de-DE). */
  dateShort(iso: string): string;
  /** An ISO month `YYYY-MM` (or a date's month): "September 2026". */
  month(iso: string): string;
  /** The separators of the locale, for chart axes. */
  readonly separators: { readonly decimal: string; readonly group: string; readonly percentSuffix: string; readonly percentPrefix: string };
}

/** Error raised for a locale or value the formatter cannot handle. */
export class FormatError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'FormatError';
  }
}

const ISO_DATE = /^(\d{4})-(\d{2})(?:-(\d{2}))?$/;

function isShowable(value: number | null | undefined): value is number {
  return typeof value === 'number' && Number.isFinite(value);
}

/** Parses `YYYY-MM-DD` (or `YYYY-MM` when a month is wanted) to a UTC Date; refuses anything else. */
function utcDate(iso: string, caller: string, monthOnly = false): Date {
  const match = ISO_DATE.exec(iso);
  if (!match || (match[3] === undefined) !== monthOnly) throw new FormatError(`${caller} requires an ISO date YYYY-MM-DD, got "${iso}"`);
  const date = new Date(Date.UTC(Number(match[1]), Number(match[2]) - 1, match[3] ? Number(match[3]) : 1));
  if (Number.isNaN(date.getTime()) || date.getUTCMonth() !== Number(match[2]) - 1) {
    throw new FormatError(`${caller} requires an ISO date YYYY-MM-DD, got "${iso}"`);
  }
  return date;
}

/** Returns the canonical form of a BCP 47 locale tag, or throws a FormatError naming it. */
export function canonicalLocale(locale: string): string {
  try {
    const [canonical] = Intl.getCanonicalLocales(locale);
    if (!canonical) throw new RangeError('empty');
    return canonical;
  } catch {
    throw new FormatError(`locale "${locale}" is not a BCP 47 language tag such as en-GB or de-DE`);
  }
}

const cache = new Map<string, Formatter>();

/** The formatter of a locale (cached; Intl objects are costly to build). */
export function formatterFor(locale: string): Formatter {
  const canonical = canonicalLocale(locale);
  let formatter = cache.get(canonical);
  if (!formatter) {
    formatter = createFormatter(canonical);
    cache.set(canonical, formatter);
  }
  return formatter;
}

function createFormatter(locale: string): Formatter {
  const numberFormats = new Map<string, Intl.NumberFormat>();
  const numberFormat = (key: string, options: Intl.NumberFormatOptions): Intl.NumberFormat => {
    let format = numberFormats.get(key);
    if (!format) {
      format = new Intl.NumberFormat(locale, options);
      numberFormats.set(key, format);
    }
    return format;
  };
  const sign = (signed: boolean | undefined): Intl.NumberFormatOptions => (signed ? { signDisplay: 'exceptZero' } : {});
  const longDate = new Intl.DateTimeFormat(locale, { day: 'numeric', month: 'long', year: 'numeric', timeZone: 'UTC' });
  const shortDate = new Intl.DateTimeFormat(locale, { dateStyle: 'medium', timeZone: 'UTC' });
  const monthYear = new Intl.DateTimeFormat(locale, { month: 'long', year: 'numeric', timeZone: 'UTC' });

  const parts = new Intl.NumberFormat(locale, { useGrouping: true, minimumFractionDigits: 1 }).formatToParts(12345.5);
  const percentParts = new Intl.NumberFormat(locale, { style: 'percent' }).formatToParts(0.5);
  const numberIndex = percentParts.findIndex((part) => part.type === 'integer');
  const percentSeparators = {
    percentPrefix: percentParts.slice(0, numberIndex).map((part) => part.value).join(''),
    percentSuffix: percentParts.slice(numberIndex + 1).map((part) => part.value).join(''),
  };

  const formatter: Formatter = {
    locale,
    money(value, currency, options) {
      if (!isShowable(value)) return NOT_AVAILABLE;
      return numberFormat(`money:${currency}:${options?.signed ?? false}`, { style: 'currency', currency, ...sign(options?.signed) }).format(value);
    },
    amount(value, options) {
      if (!isShowable(value)) return NOT_AVAILABLE;
      return numberFormat(`amount:${options?.signed ?? false}`, { minimumFractionDigits: 2, maximumFractionDigits: 2, ...sign(options?.signed) }).format(value);
    },
    percent(value, options) {
      if (!isShowable(value)) return NOT_AVAILABLE;
      const digits = options?.digits ?? 2;
      return numberFormat(`percent:${digits}:${options?.signed ?? false}`, {
        style: 'percent', minimumFractionDigits: digits, maximumFractionDigits: digits, ...sign(options?.signed),
      }).format(value);
    },
    percentagePoints(value, digits = 1) {
      if (!isShowable(value)) return NOT_AVAILABLE;
      const number = numberFormat(`pp:${digits}`, { minimumFractionDigits: digits, maximumFractionDigits: digits, signDisplay: 'exceptZero' }).format(value * 100);
      return `${number}\u00a0pp`;
    },
    quantity(value) {
      if (!isShowable(value)) return NOT_AVAILABLE;
      return numberFormat('quantity', { minimumFractionDigits: 0, maximumFractionDigits: 4 }).format(value);
    },
    price(value) {
      if (!isShowable(value)) return NOT_AVAILABLE;
      return numberFormat('price', { minimumFractionDigits: 2, maximumFractionDigits: 4 }).format(value);
    },
    decimal(value, digits) {
      if (!isShowable(value)) return NOT_AVAILABLE;
      return numberFormat(`decimal:${digits}`, { minimumFractionDigits: digits, maximumFractionDigits: digits }).format(value);
    },
    integer(value) {
      if (!isShowable(value)) return NOT_AVAILABLE;
      return numberFormat('integer', { maximumFractionDigits: 0 }).format(value);
    },
    date(iso) {
      return longDate.format(utcDate(iso, 'date'));
    },
    dateShort(iso) {
      return shortDate.format(utcDate(iso, 'dateShort'));
    },
    month(iso) {
      return monthYear.format(utcDate(iso.slice(0, 7), 'month', true));
    },
    separators: {
      decimal: parts.find((part) => part.type === 'decimal')?.value ?? '.',
      group: parts.find((part) => part.type === 'group')?.value ?? ',',
      ...percentSeparators,
    },
  };
  return formatter;
}

/** The day after an ISO date (a period that starts at the close of 30 June covers 1 July on). */
export function nextIsoDate(iso: string): string {
  const date = utcDate(iso, 'nextIsoDate');
  date.setUTCDate(date.getUTCDate() + 1);
  return date.toISOString().slice(0, 10);
}

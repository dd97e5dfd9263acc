/**
 * Reporting periods and the performance windows that end with them
 * (methods: "Periods and windows").
 */
import { type Day, dayOf, daysInMonth, isoDate, monthEndOffset, ymd } from '../dates.ts';

export interface Period {
  /** `YYYY-Qn`, `YYYY-MM` or `YYYY`. */
  readonly label: string;
  /** The close the period starts from: the previous period's last calendar day. */
  readonly startDay: Day;
  /** The period's own last calendar day. */
  readonly endDay: Day;
}

const PERIOD = /^(\d{4})(?:-Q([1-4])|-(0[1-9]|1[0-2]))?$/;

/** Parses a period label; null when it is not one of the three forms. */
export function parsePeriod(label: string): Period | null {
  const match = PERIOD.exec(label);
  if (!match) return null;
  const year = Number(match[1]);
  let firstMonth = 1;
  let lastMonth = 12;
  if (match[2]) {
    lastMonth = Number(match[2]) * 3;
    firstMonth = lastMonth - 2;
  } else if (match[3]) {
    firstMonth = lastMonth = Number(match[3]);
  }
  return {
    label,
    startDay: dayOf(year, firstMonth, 1) - 1,
    endDay: dayOf(year, lastMonth, daysInMonth(year, lastMonth)),
  };
}

export type WindowId = 'period' | 'ytd' | '1y' | '3y' | '5y' | 'since_inception';
export const WINDOW_IDS: readonly WindowId[] = ['period', 'ytd', '1y', '3y', '5y', 'since_inception'];

export interface Window {
  readonly id: WindowId;
  readonly startDay: Day;
  readonly endDay: Day;
  /** end − start; for since inception this counts the inception day. */
  readonly days: number;
  /** Annualised (GIPS): whole-year windows and since-inception windows of 365 days or more. */
  readonly annualised: boolean;
  /** The n of (1 + R)^(1/n) − 1: whole years, or days / 365.25 since inception. */
  readonly years: number;
}

/**
 * The windows of an account for a period, or null where a window would start
 * before the since-inception start (never padded).
 *
 * Whole-year windows (1, 3, 5 years; and the period or year to date when they
 * span exactly a year, as a calendar-year period does) use n = whole years;
 * since inception uses n = days / 365.25 once it is at least 365 days long.
 * Shorter windows are never annualised (GIPS 2020 Standards for Firms:
 * returns for periods of less than one year must not be annualised).
 */
export function windowsFor(period: Period, sinceInceptionStart: Day): Record<WindowId, Window | null> {
  const end = period.endDay;
  const wholeYearsBack = (years: number): Day => monthEndOffset(end, -12 * years);
  const { year } = ymd(end);
  const calendarStart = (id: WindowId, start: Day): Window | null => {
    if (start < sinceInceptionStart) return null;
    const isWholeYear = start === wholeYearsBack(1);
    return { id, startDay: start, endDay: end, days: end - start, annualised: isWholeYear, years: 1 };
  };
  const yearsWindow = (id: WindowId, years: number): Window | null => {
    const start = wholeYearsBack(years);
    if (start < sinceInceptionStart) return null;
    return { id, startDay: start, endDay: end, days: end - start, annualised: true, years };
  };
  const sinceInceptionDays = end - sinceInceptionStart;
  return {
    period: calendarStart('period', period.startDay),
    ytd: calendarStart('ytd', dayOf(year - 1, 12, 31)),
    '1y': yearsWindow('1y', 1),
    '3y': yearsWindow('3y', 3),
    '5y': yearsWindow('5y', 5),
    since_inception: {
      id: 'since_inception',
      startDay: sinceInceptionStart,
      endDay: end,
      days: sinceInceptionDays,
      annualised: sinceInceptionDays >= 365,
      years: sinceInceptionDays / 365.25,
    },
  };
}

/** `YYYY-MM-DD` of a window's start close. */
export function windowStartIso(window: Window): string {
  return isoDate(window.startDay);
}

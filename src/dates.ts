/**
 * Calendar dates as whole day numbers (days since 1970-01-01, UTC).
 *
 * Every date in a book is an ISO 8601 calendar date with no time zone; the
 * ledger works on day numbers so that "the day before" and "days between" are
 * integer arithmetic. No function here reads the clock.
 */

const MS_PER_DAY = 86_400_000;
const ISO_DATE = /^(\d{4})-(\d{2})-(\d{2})$/;

/** A day number: whole days since 1970-01-01. */
export type Day = number;

/** Parses `YYYY-MM-DD` to a day number, or returns null when it is not a real calendar date. */
export function parseIsoDate(text: string): Day | null {
  const match = ISO_DATE.exec(text);
  if (!match) return null;
  const year = Number(match[1]);
  const month = Number(match[2]);
  const dayOfMonth = Number(match[3]);
  if (month < 1 || month > 12 || dayOfMonth < 1 || dayOfMonth > daysInMonth(year, month)) return null;
  return Date.UTC(year, month - 1, dayOfMonth) / MS_PER_DAY;
}

/** Day number of a calendar date given as year, month (1-12), day of month. */
export function dayOf(year: number, month: number, dayOfMonth: number): Day {
  return Date.UTC(year, month - 1, dayOfMonth) / MS_PER_DAY;
}

/** Formats a day number as `YYYY-MM-DD`. */
export function isoDate(day: Day): string {
  return new Date(day * MS_PER_DAY).toISOString().slice(0, 10);
}

/** Year, month (1-12) and day of month of a day number. */
export function ymd(day: Day): { year: number; month: number; day: number } {
  const date = new Date(day * MS_PER_DAY);
  return { year: date.getUTCFullYear(), month: date.getUTCMonth() + 1, day: date.getUTCDate() };
}

/** Days in a month of the Gregorian calendar. */
export function daysInMonth(year: number, month: number): number {
  return new Date(Date.UTC(year, month, 0)).getUTCDate();
}

/** The last day of the month `months` months after the month of `day` (negative goes back). */
export function monthEndOffset(day: Day, months: number): Day {
  const { year, month } = ymd(day);
  const index = year * 12 + (month - 1) + months;
  const targetYear = Math.floor(index / 12);
  const targetMonth = (index % 12) + 1;
  return dayOf(targetYear, targetMonth, daysInMonth(targetYear, targetMonth));
}

/** The last day of the month containing `day`. */
export function monthEnd(day: Day): Day {
  return monthEndOffset(day, 0);
}

/** True when `day` is the last day of its month. */
export function isMonthEnd(day: Day): boolean {
  return monthEnd(day) === day;
}

/** Month ends strictly after `from` and on or before `to`, in order. */
export function monthEndsBetween(from: Day, to: Day): Day[] {
  const ends: Day[] = [];
  for (let end = monthEnd(from + 1); end <= to; end = monthEndOffset(end, 1)) ends.push(end);
  return ends;
}

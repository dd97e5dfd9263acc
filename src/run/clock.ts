/**
 * The one place that turns "now" into a date; callers pass the clock in.
 */
import { dayOf, isoDate, monthEndOffset, ymd } from '../dates.ts';

/** The last calendar quarter end strictly before `now` (UTC), as `YYYY-MM-DD`. */
export function lastQuarterEndBefore(now: Date): string {
  const today = dayOf(now.getUTCFullYear(), now.getUTCMonth() + 1, now.getUTCDate());
  const { month } = ymd(today);
  const quarterEndMonth = Math.floor((month - 1) / 3) * 3; // 0 = December of last year
  const candidate = monthEndOffset(today, quarterEndMonth - month);
  return isoDate(candidate < today ? candidate : monthEndOffset(candidate, -3));
}

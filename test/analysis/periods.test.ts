import { describe, expect, it } from 'vitest';
import { parseIsoDate, isoDate } from '../../src/dates.ts';
import { parsePeriod, windowsFor } from '../../src/analysis/periods.ts';

const day = (iso: string): number => parseIsoDate(iso)!;

describe('parsePeriod', () => {
  it('reads quarters, months and years as starting at the previous period end close', () => {
    const quarter = parsePeriod('2026-Q3')!;
    expect(isoDate(quarter.startDay)).toBe('2026-06-30');
    expect(isoDate(quarter.endDay)).toBe('2026-09-30');
    const month = parsePeriod('2024-02')!;
    expect(isoDate(month.startDay)).toBe('2024-01-31');
    expect(isoDate(month.endDay)).toBe('2024-02-29');
    const year = parsePeriod('2025')!;
    expect(isoDate(year.startDay)).toBe('2024-12-31');
    expect(isoDate(year.endDay)).toBe('2025-12-31');
  });

  it('rejects anything else', () => {
    for (const label of ['2026-Q5', '2026-13', '26-Q1', '2026Q1', '2026-1', '']) expect(parsePeriod(label)).toBeNull();
  });
});

describe('windowsFor', () => {
  it('starts the 1-year window at the same month end a year earlier (methods: 2025-02-28 → 2024-02-29)', () => {
    const windows = windowsFor(parsePeriod('2025-02')!, day('2010-01-01'));
    expect(isoDate(windows['1y']!.startDay)).toBe('2024-02-29');
    expect(isoDate(windows['3y']!.startDay)).toBe('2022-02-28');
    expect(isoDate(windows['5y']!.startDay)).toBe('2020-02-29');
    expect(isoDate(windows.ytd!.startDay)).toBe('2024-12-31');
  });

  it('omits windows that start before the since-inception start and counts the inception day', () => {
    // Inception 2026-08-10: the since-inception start is the close of 2026-08-09.
    const windows = windowsFor(parsePeriod('2026-Q3')!, day('2026-08-09'));
    expect(windows.period).toBeNull();
    expect(windows.ytd).toBeNull();
    expect(windows['1y']).toBeNull();
    const sinceInception = windows.since_inception!;
    expect(isoDate(sinceInception.startDay)).toBe('2026-08-09');
    expect(sinceInception.days).toBe(52); // 10 Aug … 30 Sep inclusive = 22 + 30
    expect(sinceInception.annualised).toBe(false);
  });

  it('annualises whole-year windows with n = years and since inception with days / 365.25 from 365 days', () => {
    const windows = windowsFor(parsePeriod('2026-Q3')!, day('2025-09-30'));
    expect(windows['1y']).toMatchObject({ annualised: true, years: 1, days: 365 });
    expect(windows.since_inception).toMatchObject({ annualised: true, days: 365 });
    expect(windows.since_inception!.years).toBeCloseTo(365 / 365.25, 15);
    expect(windows.period).toMatchObject({ annualised: false, days: 92 });
    const shorter = windowsFor(parsePeriod('2026-Q3')!, day('2025-10-01'));
    expect(shorter.since_inception).toMatchObject({ annualised: false, days: 364 });
    expect(shorter['1y']).toBeNull();
  });

  it('treats a calendar-year period as a whole-year window', () => {
    const windows = windowsFor(parsePeriod('2025')!, day('2020-01-01'));
    expect(windows.period).toMatchObject({ annualised: true, years: 1, days: 365 });
    expect(windows.ytd).toMatchObject({ annualised: true, years: 1 });
  });
});

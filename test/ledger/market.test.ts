import { describe, expect, it } from 'vitest';
import type { Series } from '../../src/book/types.ts';
import { parseIsoDate } from '../../src/dates.ts';
import { MarketData } from '../../src/ledger/market.ts';

const day = (iso: string): number => parseIsoDate(iso)!;

function series(points: ReadonlyArray<[string, number]>): Series {
  return {
    days: Int32Array.from(points.map(([iso]) => day(iso))),
    values: Float64Array.from(points.map(([, value]) => value)),
    lines: Int32Array.from(points.map((_, i) => i + 2)),
  };
}

describe('MarketData prices', () => {
  const market = new MarketData({
    prices: new Map([['X', series([['2026-01-02', 10], ['2026-01-05', 11]])]]),
    fx: new Map(),
  }, day('2026-01-01'), day('2026-01-10'));

  it('carries the latest price on or before a day forward, with its quote day', () => {
    expect(market.priceOn('X', day('2026-01-01'))).toBeNull();
    expect(market.priceOn('X', day('2026-01-04'))).toEqual({ price: 10, quotedDay: day('2026-01-02') });
    expect(market.priceOn('X', day('2026-01-10'))).toEqual({ price: 11, quotedDay: day('2026-01-05') });
    expect(market.priceOn('Y', day('2026-01-10'))).toBeNull();
  });
});

describe('MarketData FX routes (book format: direct, inverse, one-step cross, each leg carried forward)', () => {
  const market = new MarketData({
    prices: new Map(),
    fx: new Map([
      ['EUR/USD', series([['2026-01-01', 1.10], ['2026-01-06', 1.20]])],
      ['EUR/GBP', series([['2026-01-03', 0.85]])],
      ['USD/GBP', series([['2026-01-08', 0.70]])],
    ]),
  }, day('2026-01-01'), day('2026-01-10'));

  it('uses the direct quote, and its inverse the other way', () => {
    expect(market.fx('EUR', 'USD').rate(day('2026-01-02'))).toBe(1.10);
    expect(market.fx('USD', 'EUR').rate(day('2026-01-07'))).toBe(1 / 1.20);
    expect(market.fx('EUR', 'EUR').rate(day('2026-01-07'))).toBe(1);
  });

  it('crosses via one intermediate while no direct or inverse quote exists yet', () => {
    // GBP→USD on 5 Jan: GBP→EUR = 1/0.85 (inverse), EUR→USD = 1.10 (direct, carried from 1 Jan).
    const gbpUsd = market.fx('GBP', 'USD');
    expect(gbpUsd.rate(day('2026-01-05'))).toBeCloseTo(1.10 / 0.85, 14);
    expect(gbpUsd.route(day('2026-01-05'))).toEqual({ kind: 'cross', via: 'EUR' });
    // From 8 Jan the inverse of USD/GBP exists and takes precedence.
    expect(gbpUsd.rate(day('2026-01-09'))).toBe(1 / 0.70);
    expect(gbpUsd.route(day('2026-01-09'))).toEqual({ kind: 'inverse', pair: 'USD/GBP' });
  });

  it('has no rate before either leg is quoted', () => {
    expect(Number.isNaN(market.fx('GBP', 'USD').rate(day('2026-01-02')))).toBe(true);
    expect(market.fx('GBP', 'USD').route(day('2026-01-02'))).toBeNull();
    expect(Number.isNaN(market.fx('CHF', 'EUR').rate(day('2026-01-05')))).toBe(true);
  });
});

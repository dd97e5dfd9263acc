/**
 * Market data as dense daily tables: for every calendar day of the run's
 * range, the latest price (or FX rate) on or before that day and the day it
 * was quoted. Built once per run and shared by every account, so valuing an
 * account on a day is an array read, not a search.
 */
import type { Book, Series } from '../book/types.ts';
import { type Day, isoDate } from '../dates.ts';

/** A series carried forward over [firstDay, lastDay]: NaN before its first point. */
export interface DenseSeries {
  readonly firstDay: Day;
  /** values[d - firstDay] = latest value on or before day d. */
  readonly values: Float64Array;
  /** quotedDay[d - firstDay] = the day that value was quoted (−1 when none). */
  readonly quotedDay: Int32Array;
}

/** How a rate between two currencies was obtained, for messages. */
export type FxRoute =
  | { readonly kind: 'identity' }
  | { readonly kind: 'direct' | 'inverse'; readonly pair: string }
  | { readonly kind: 'cross'; readonly via: string };

export interface FxLookup {
  /** Rate for one unit of `from` in `to` on day d, or NaN when no route has quotes on or before d. */
  rate(day: Day): number;
  /** The route used on day d (null when none), for error messages. */
  route(day: Day): FxRoute | null;
}

function densify(series: Series, firstDay: Day, lastDay: Day): DenseSeries {
  const length = lastDay - firstDay + 1;
  const values = new Float64Array(length).fill(Number.NaN);
  const quotedDay = new Int32Array(length).fill(-1);
  let next = 0;
  let currentValue = Number.NaN;
  let currentDay = -1;
  // Points before the range still set the carried-forward value at its start.
  while (next < series.days.length && series.days[next]! < firstDay) {
    currentValue = series.values[next]!;
    currentDay = series.days[next]!;
    next++;
  }
  for (let offset = 0; offset < length; offset++) {
    const day = firstDay + offset;
    while (next < series.days.length && series.days[next]! <= day) {
      currentValue = series.values[next]!;
      currentDay = series.days[next]!;
      next++;
    }
    values[offset] = currentValue;
    quotedDay[offset] = currentDay;
  }
  return { firstDay, values, quotedDay };
}

/**
 * Prices and FX for one run, over the calendar days [firstDay, lastDay].
 *
 * FX rule (book format, fx.csv): one unit of FROM is worth `rate` TO. For a
 * pair on a day the first of these with a quote on or before that day is
 * used: the direct quote FROM/TO; the inverse TO/FROM as 1/rate; a cross via
 * one intermediate currency X (candidates in alphabetical order), each leg
 * direct or inverse and carried forward on its own.
 */
export class MarketData {
  private readonly denseCache = new Map<string, DenseSeries>();
  private readonly fxCache = new Map<string, FxLookup>();
  private readonly currenciesByPartner: ReadonlyMap<string, readonly string[]>;

  constructor(
    private readonly book: Pick<Book, 'prices' | 'fx'>,
    readonly firstDay: Day,
    readonly lastDay: Day,
  ) {
    const partners = new Map<string, Set<string>>();
    for (const pair of book.fx.keys()) {
      const [from, to] = pair.split('/') as [string, string];
      if (!partners.has(from)) partners.set(from, new Set());
      if (!partners.has(to)) partners.set(to, new Set());
      partners.get(from)!.add(to);
      partners.get(to)!.add(from);
    }
    this.currenciesByPartner = new Map([...partners].map(([code, set]) => [code, [...set].sort()]));
  }

  /** True when day d lies inside the tables. */
  covers(day: Day): boolean {
    return day >= this.firstDay && day <= this.lastDay;
  }

  /** A series densified once and cached under `key`; null when there is no such series. */
  private dense(key: string, series: Series | undefined): DenseSeries | null {
    const cached = this.denseCache.get(key);
    if (cached) return cached;
    if (!series) return null;
    const dense = densify(series, this.firstDay, this.lastDay);
    this.denseCache.set(key, dense);
    return dense;
  }

  /** The dense price table of an instrument (index levels included), or null when it has no prices. */
  prices(instrument: string): DenseSeries | null {
    return this.dense(`P:${instrument}`, this.book.prices.get(instrument));
  }

  /** Latest price of an instrument on or before day d, with its quote day; null when none. */
  priceOn(instrument: string, day: Day): { price: number; quotedDay: Day } | null {
    const dense = this.prices(instrument);
    if (!dense || !this.covers(day)) return null;
    const offset = day - dense.firstDay;
    const price = dense.values[offset]!;
    return Number.isNaN(price) ? null : { price, quotedDay: dense.quotedDay[offset]! };
  }

  private quotedPair(pair: string): DenseSeries | null {
    return this.dense(`F:${pair}`, this.book.fx.get(pair));
  }

  /** One leg: direct or inverse quote only. */
  private leg(from: string, to: string, offset: number): { rate: number; route: FxRoute } | null {
    const direct = this.quotedPair(`${from}/${to}`);
    if (direct && !Number.isNaN(direct.values[offset]!)) {
      return { rate: direct.values[offset]!, route: { kind: 'direct', pair: `${from}/${to}` } };
    }
    const inverse = this.quotedPair(`${to}/${from}`);
    if (inverse && !Number.isNaN(inverse.values[offset]!)) {
      return { rate: 1 / inverse.values[offset]!, route: { kind: 'inverse', pair: `${to}/${from}` } };
    }
    return null;
  }

  /** Conversion from one currency to another, resolved day by day (cached per pair). */
  fx(from: string, to: string): FxLookup {
    const key = `${from}>${to}`;
    const cached = this.fxCache.get(key);
    if (cached) return cached;
    let lookup: FxLookup;
    if (from === to) {
      lookup = { rate: () => 1, route: () => ({ kind: 'identity' }) };
    } else {
      const length = this.lastDay - this.firstDay + 1;
      const rates = new Float64Array(length).fill(Number.NaN);
      const routes: (FxRoute | null)[] = new Array<FxRoute | null>(length).fill(null);
      const intermediates = (this.currenciesByPartner.get(from) ?? []).filter(
        (code) => code !== to && (this.currenciesByPartner.get(to) ?? []).includes(code),
      );
      for (let offset = 0; offset < length; offset++) {
        const single = this.leg(from, to, offset);
        if (single) {
          rates[offset] = single.rate;
          routes[offset] = single.route;
          continue;
        }
        for (const via of intermediates) {
          const first = this.leg(from, via, offset);
          const second = first && this.leg(via, to, offset);
          if (first && second) {
            rates[offset] = first.rate * second.rate;
            routes[offset] = { kind: 'cross', via };
            break;
          }
        }
      }
      const firstDay = this.firstDay;
      lookup = {
        rate: (day) => (day >= firstDay && day - firstDay < length ? rates[day - firstDay]! : Number.NaN),
        route: (day) => (day >= firstDay && day - firstDay < length ? routes[day - firstDay]! : null),
      };
    }
    this.fxCache.set(key, lookup);
    return lookup;
  }

  /** Describes a missing conversion for an error message. */
  describeMissingFx(from: string, to: string, day: Day): string {
    return `no ${from}/${to} rate on or before ${isoDate(day)} (fx.csv has no direct, inverse or one-step cross quote for it); add a ${from}/${to} or ${to}/${from} row dated on or before ${isoDate(day)}`;
  }
}
